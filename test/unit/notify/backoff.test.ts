import { describe, expect, it } from 'vitest';
import { backoffDelayMs, retryAfterMs } from '../../../src/notify/index.js';

describe('backoffDelayMs', () => {
  const policy = { baseMs: 100, maxMs: 1_000 };

  it('waits between half and all of a step that doubles per retry up to the cap', () => {
    const steps = [1, 2, 3, 4, 5, 6].map((retry) => [backoffDelayMs(retry, policy, 0), backoffDelayMs(retry, policy, 1)]);
    expect(steps).toEqual([
      [50, 100],
      [100, 200],
      [200, 400],
      [400, 800],
      [500, 1000],
      [500, 1000],
    ]);
    expect(backoffDelayMs(3, policy, 0.5)).toBe(300);
  });

  it('keeps a draw outside [0, 1] inside the step', () => {
    expect(backoffDelayMs(1, policy, -3)).toBe(50);
    expect(backoffDelayMs(1, policy, 7)).toBe(100);
  });
});

describe('retryAfterMs', () => {
  const now = Date.UTC(2026, 11, 2, 9, 0, 0);

  it('reads delay-seconds and an HTTP-date (RFC 9110 §10.2.3), capped', () => {
    expect(retryAfterMs('3', now, 60_000)).toBe(3_000);
    expect(retryAfterMs(' 0 ', now, 60_000)).toBe(0);
    expect(retryAfterMs('3600', now, 60_000)).toBe(60_000);
    expect(retryAfterMs('Wed, 02 Dec 2026 09:00:20 GMT', now, 60_000)).toBe(20_000);
    expect(retryAfterMs('Wed, 02 Dec 2026 08:00:00 GMT', now, 60_000)).toBe(0);
  });

  it('is undefined when absent or unreadable, so the usual backoff applies', () => {
    expect(retryAfterMs(null, now, 60_000)).toBeUndefined();
    expect(retryAfterMs(undefined, now, 60_000)).toBeUndefined();
    expect(retryAfterMs('soon', now, 60_000)).toBeUndefined();
    expect(retryAfterMs('-5', now, 60_000)).toBeUndefined();
  });
});
