/**
 * What every Notifier must do (src/notify/notifier.ts), as one suite registered per implementation:
 * notifiers.test.ts runs it for the log notifier, the webhook notifier against a real local receiver,
 * and the two combined. An implementation supplies a fresh notifier and a way to read what reached its
 * far side (the log lines, the receiver's accepted requests).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { AlertNotice, Notifier } from '../../../src/notify/index.js';
import { notice, SERIES } from './fixtures.js';

export interface Delivered {
  readonly id: string;
  readonly to: string;
  readonly value: number | null;
}

export interface NotifierHarness {
  readonly notifier: Notifier;
  /** What reached the far side so far, in order of arrival. */
  delivered(): Delivered[];
  cleanup(): Promise<void>;
}

export function notifierContract(name: string, makeHarness: () => Promise<NotifierHarness>): void {
  describe(`Notifier contract: ${name}`, () => {
    let h: NotifierHarness;
    beforeEach(async () => {
      h = await makeHarness();
    });
    afterEach(async () => {
      await h.notifier.close();
      await h.cleanup();
    });

    it('delivers every notice, in order, by the time flush resolves true; counts say so', async () => {
      const notices = [1, 2, 3, 4, 5].map((seq) => notice(seq));
      for (const n of notices) h.notifier.notify(n);
      expect(await h.notifier.flush(5_000)).toBe(true);
      expect(h.delivered().map((d) => d.id)).toEqual(notices.map((n) => n.transition.id));
      expect(h.delivered().map((d) => d.to)).toEqual(['brewing', 'firing', 'easing', 'resting', 'calm']);
      expect(h.notifier.counts()).toEqual({ sent: 5, failed: 0, dropped: 0, pending: 0 });
    });

    it('flush with nothing queued resolves true', async () => {
      expect(await h.notifier.flush(1_000)).toBe(true);
      expect(h.delivered()).toEqual([]);
    });

    it('notify never throws: a malformed notice is counted as failed and the next one still goes out', async () => {
      const broken = { transition: null } as unknown as AlertNotice;
      const good = notice(2);
      const unserialisable = { ...good, transition: { ...good.transition, series: null } } as unknown as AlertNotice;
      expect(() => h.notifier.notify(broken)).not.toThrow();
      expect(() => h.notifier.notify(unserialisable)).not.toThrow();
      h.notifier.notify(notice(3));
      expect(await h.notifier.flush(5_000)).toBe(true);
      expect(h.delivered().map((d) => d.id)).toEqual([notice(3).transition.id]);
      expect(h.notifier.counts()).toMatchObject({ sent: 1, failed: 2, pending: 0 });
    });

    it('a figure that is not finite goes out as null, never as a number', async () => {
      h.notifier.notify(notice(1, 'low-margin-rise', SERIES, Number.NaN));
      h.notifier.notify(notice(2, 'low-margin-rise', SERIES, 0.0815));
      expect(await h.notifier.flush(5_000)).toBe(true);
      expect(h.delivered().map((d) => d.value)).toEqual([null, 0.0815]);
    });

    it('close is idempotent; after it, notify neither throws nor delivers, and counts the notice as dropped', async () => {
      h.notifier.notify(notice(1));
      expect(await h.notifier.flush(5_000)).toBe(true);
      const first = h.notifier.close();
      const second = h.notifier.close();
      await Promise.all([first, second]);
      await h.notifier.close();
      expect(() => h.notifier.notify(notice(2))).not.toThrow();
      expect(await h.notifier.flush(1_000)).toBe(true);
      expect(h.delivered().map((d) => d.id)).toEqual([notice(1).transition.id]);
      expect(h.notifier.counts()).toEqual({ sent: 1, failed: 0, dropped: 1, pending: 0 });
    });

    it('has a name for the metrics label', () => {
      expect(h.notifier.name).toMatch(/^[a-z][a-z0-9_-]*$/);
    });
  });
}
