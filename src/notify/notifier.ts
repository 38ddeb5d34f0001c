/**
 * The notifier edge: a few methods, one shared contract (test/unit/notify/notifier-contract.ts) run
 * against every implementation. The caller saves the alert book first and notifies second (book.ts), so
 * a notifier only has to be at-least-once; the transition id, stable across a re-evaluation, lets the
 * receiver drop the repeats.
 */
import type { AlertNotice } from './notice.js';

export interface NotificationCounts {
  /** Delivered: a log line written, or a 2xx answer. */
  readonly sent: number;
  /** Given up on: retries exhausted, a 4xx other than 429, or a notice that could not be made into a message. */
  readonly failed: number;
  /** Never delivered nor given up on: pushed out of a full queue, or still queued (or sent after) close. */
  readonly dropped: number;
  /** Waiting or in flight now. */
  readonly pending: number;
}

export const NOTIFICATION_OUTCOMES = ['sent', 'failed', 'dropped'] as const;
export type NotificationOutcome = (typeof NOTIFICATION_OUTCOMES)[number];

export interface Notifier {
  /** `log`, `webhook`: the notifier label of the metrics. */
  readonly name: string;
  /** Queues the notice and returns at once. Never throws: a notice that cannot be sent is logged and counted. */
  notify(notice: AlertNotice): void;
  /**
   * Resolves true once everything queued before the call has been settled (sent, failed or dropped),
   * false when timeoutMs ran out first. Never rejects. For shutdown: flush, then close.
   */
  flush(timeoutMs: number): Promise<boolean>;
  /** Stops at once: an attempt in flight is aborted, what is still queued is dropped. Idempotent. */
  close(): Promise<void>;
  counts(): NotificationCounts;
}

/** Several notifiers as one: each gets every notice; counts are summed. */
export function combineNotifiers(notifiers: readonly Notifier[], name = 'all'): Notifier {
  let closing: Promise<void> | undefined;
  return {
    name,
    notify(notice) {
      for (const n of notifiers) n.notify(notice);
    },
    async flush(timeoutMs) {
      const done = await Promise.all(notifiers.map((n) => n.flush(timeoutMs)));
      return done.every(Boolean);
    },
    close() {
      closing ??= Promise.allSettled(notifiers.map((n) => n.close())).then(() => undefined);
      return closing;
    },
    counts() {
      const sum = { sent: 0, failed: 0, dropped: 0, pending: 0 };
      for (const n of notifiers) {
        const c = n.counts();
        sum.sent += c.sent;
        sum.failed += c.failed;
        sum.dropped += c.dropped;
        sum.pending += c.pending;
      }
      return sum;
    },
  };
}
