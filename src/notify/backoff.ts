/** When to try a webhook again. Pure: the random draw and the time are passed in. */

export interface BackoffPolicy {
  /** Delay before the first retry, before jitter. */
  readonly baseMs: number;
  readonly maxMs: number;
}

/**
 * Delay before retry number `retry` (1-based): the exponential step min(max, base · 2^(retry−1)), of
 * which a random half is kept ("equal jitter"). At least half the step is always waited, so a receiver
 * that is down sees the load fall off; the random half keeps many senders restarted together from
 * retrying in step.
 */
export function backoffDelayMs(retry: number, policy: BackoffPolicy, random: number): number {
  const step = Math.min(policy.maxMs, policy.baseMs * 2 ** Math.max(0, retry - 1));
  const r = Math.min(Math.max(random, 0), 1);
  return Math.round(step / 2 + (step / 2) * r);
}

/**
 * A Retry-After header (RFC 9110 §10.2.3: delay-seconds or an HTTP-date) as ms from nowMs, capped at
 * maxMs; undefined when absent or unreadable (then the usual backoff applies). A date in the past is 0.
 */
export function retryAfterMs(header: string | null | undefined, nowMs: number, maxMs: number): number | undefined {
  if (header === null || header === undefined) return undefined;
  const text = header.trim();
  if (/^\d+$/.test(text)) return Math.min(Number(text) * 1000, maxMs);
  // Every HTTP-date form starts with a day name; Date.parse alone would take "-5" as a year.
  if (!/^[A-Za-z]{3}/.test(text)) return undefined;
  const at = Date.parse(text);
  if (Number.isNaN(at)) return undefined;
  return Math.min(Math.max(0, at - nowMs), maxMs);
}
