/**
 * A generic JSON webhook: each notice is POSTed as a `headroom-alert/1` body (notice.ts) with its
 * transition id as `Idempotency-Key`, the same on every retry, so delivery is at-least-once and a
 * receiver that keeps the keys it has seen gets each transition once.
 *
 * One queue, one request at a time, oldest first. That keeps every alert's transitions in order (firing
 * never overtakes the brewing before it) at the price of head-of-line blocking: a receiver that is down
 * holds everything back, which costs nothing extra, since it is down for every alert alike. A notice
 * given up on does not stop the ones after it; the body's `seq` lets a receiver see the gap.
 *
 * Secrets. The bearer token (from HEADROOM_ALERT_WEBHOOK_TOKEN) and the extra header values go into the
 * request and nowhere else: log lines name the receiver by origin only (a webhook URL often carries a
 * key in its path or query), never print headers or response bodies, and any error text is scrubbed
 * of the token before it is logged.
 */
import type { Logger } from 'pino';
import { parseDuration } from '../config/durations.js';
import { HeadroomError } from '../errors.js';
import { backoffDelayMs, retryAfterMs, type BackoffPolicy } from './backoff.js';
import { WEBHOOK_DEFAULTS, WEBHOOK_TOKEN_ENV, type WebhookSection } from './config.js';
import { webhookBody, type AlertNotice } from './notice.js';
import type { NotificationCounts, NotificationOutcome, Notifier } from './notifier.js';

export interface WebhookNotifierOptions {
  readonly url: string;
  readonly logger: Logger;
  /** Per attempt, from the request to the answer's status line; default 5 s. */
  readonly timeoutMs?: number;
  /** Retries after the first attempt; default 5. */
  readonly retries?: number;
  /** First retry's step (jittered, doubling); default 1 s. */
  readonly backoffMs?: number;
  readonly maxBackoffMs?: number;
  /** Cap on a receiver's Retry-After; default 5 min. */
  readonly maxRetryAfterMs?: number;
  /** Notices waiting (besides the one in flight); when full the oldest is dropped. Default 1000. */
  readonly queueSize?: number;
  readonly headers?: Readonly<Record<string, string>>;
  /** Sent as `Authorization: Bearer <token>`; a Secret (src/config/secret.ts) or its text. */
  readonly token?: string | { reveal(): string } | null;
  /** Default globalThis.fetch. */
  readonly fetch?: typeof fetch;
  /** Default Math.random; the jitter draw. */
  readonly random?: () => number;
  /** Default Date.now; only for a Retry-After given as a date. */
  readonly nowMs?: () => number;
}

const RESERVED = new Set(['content-type', 'content-length', 'host', 'idempotency-key', 'authorization']);
const TIMEOUT = Symbol('timeout');
const CLOSED = Symbol('closed');

type Attempt =
  | { readonly kind: 'ok'; readonly status: number }
  | { readonly kind: 'retry'; readonly reason: string; readonly waitMs?: number }
  | { readonly kind: 'reject'; readonly reason: string; readonly status: number }
  | { readonly kind: 'closed' };

interface Entry {
  readonly notice: AlertNotice;
  /** Order of arrival, for flush: everything up to a number is settled once the oldest unsettled is past it. */
  readonly n: number;
}

function notifyArgument(detail: string): HeadroomError {
  return new HeadroomError('HR_ERR_NOTIFY_ARGUMENT', detail);
}

function whole(name: string, value: number | undefined, fallback: number, min: number): number {
  const v = value ?? fallback;
  if (!Number.isSafeInteger(v) || v < min) throw notifyArgument(`${name} must be a whole number >= ${min}, got ${v}`);
  return v;
}

/** A default written in config.ts; it parses, or the config tests fail. */
function msOf(text: string): number {
  const d = parseDuration(text);
  if (!d.ok) throw new Error(`bad default duration ${text}`);
  return d.ms;
}

export function createWebhookNotifier(options: WebhookNotifierOptions): Notifier {
  let target: URL;
  try {
    target = new URL(options.url);
  } catch {
    throw notifyArgument('url is not an absolute URL');
  }
  if (target.protocol !== 'http:' && target.protocol !== 'https:') throw notifyArgument(`url must use http or https, not ${target.protocol}`);
  if (target.username !== '' || target.password !== '') throw notifyArgument(`url must not hold credentials; set the bearer token instead`);
  const timeoutMs = whole('timeoutMs', options.timeoutMs, msOf(WEBHOOK_DEFAULTS.timeout), 1);
  const retries = whole('retries', options.retries, WEBHOOK_DEFAULTS.retries, 0);
  const queueSize = whole('queueSize', options.queueSize, WEBHOOK_DEFAULTS.queueSize, 1);
  const policy: BackoffPolicy = { baseMs: whole('backoffMs', options.backoffMs, msOf(WEBHOOK_DEFAULTS.backoff), 0), maxMs: whole('maxBackoffMs', options.maxBackoffMs, msOf(WEBHOOK_DEFAULTS.maxBackoff), 0) };
  const maxRetryAfterMs = whole('maxRetryAfterMs', options.maxRetryAfterMs, msOf(WEBHOOK_DEFAULTS.maxRetryAfter), 0);
  const token = typeof options.token === 'string' ? options.token : (options.token?.reveal() ?? '');
  // A CR or LF would end the header early; the message never quotes the token.
  if (/[^\t\x20-\x7e]/.test(token)) throw notifyArgument('the bearer token holds a character not allowed in a header (control or non-ASCII)');
  const headers: Record<string, string> = {};
  for (const [name, value] of Object.entries(options.headers ?? {})) {
    if (RESERVED.has(name.toLowerCase())) throw notifyArgument(`header ${name} is set by headroom and may not be given`);
    if (/[^\t\x20-\x7e]/.test(value)) throw notifyArgument(`header ${name} holds a character not allowed in a header`);
    headers[name] = value;
  }
  headers['User-Agent'] = 'headroom-alerts';
  headers['Content-Type'] = 'application/json';
  if (token !== '') headers.Authorization = `Bearer ${token}`;

  const url = target.href;
  const doFetch = options.fetch ?? globalThis.fetch;
  const random = options.random ?? Math.random;
  const now = options.nowMs ?? Date.now;
  const log = options.logger.child({ component: 'alert-webhook', target: target.origin });
  const scrub = (text: string): string => (token === '' ? text : text.split(token).join('[redacted]'));

  const queue: Entry[] = [];
  const counts = { sent: 0, failed: 0, dropped: 0 };
  let arrived = 0;
  let inFlight: Entry | null = null;
  let loop: Promise<void> = Promise.resolve();
  let running = false;
  let closed = false;
  let closing: Promise<void> | undefined;
  let attemptController: AbortController | null = null;
  let wake: (() => void) | null = null;
  const waiters: Array<{ upTo: number; resolve: (done: boolean) => void }> = [];

  const settle = (outcome: NotificationOutcome, k = 1): void => {
    counts[outcome] += k;
    const oldest = inFlight?.n ?? queue[0]?.n ?? Infinity;
    for (let i = waiters.length - 1; i >= 0; i--) {
      const w = waiters[i] as (typeof waiters)[number];
      if (w.upTo < oldest) {
        waiters.splice(i, 1);
        w.resolve(true);
      }
    }
  };

  const who = (n: AlertNotice): Record<string, unknown> => ({ alertId: n.transition?.id, rule: n.transition?.rule, seq: n.transition?.seq, to: n.transition?.to });

  async function attempt(body: string, key: string): Promise<Attempt> {
    const controller = new AbortController();
    attemptController = controller;
    const timer = setTimeout(() => controller.abort(TIMEOUT), timeoutMs);
    try {
      const res = await doFetch(url, { method: 'POST', headers: { ...headers, 'Idempotency-Key': key }, body, signal: controller.signal, redirect: 'manual' });
      // The body is never read (it could echo a header back); cancelling frees the connection.
      await res.body?.cancel().catch(() => undefined);
      if (res.status >= 200 && res.status < 300) return { kind: 'ok', status: res.status };
      const wait = retryAfterMs(res.headers.get('retry-after'), now(), maxRetryAfterMs);
      if (res.status === 429 || res.status >= 500) return { kind: 'retry', reason: `answered ${res.status}`, ...(wait === undefined ? {} : { waitMs: wait }) };
      if (res.status >= 300 && res.status < 400) return { kind: 'reject', status: res.status, reason: `answered ${res.status}; redirects are not followed, configure the final URL` };
      return { kind: 'reject', status: res.status, reason: `answered ${res.status}` };
    } catch (error) {
      if (controller.signal.reason === CLOSED) return { kind: 'closed' };
      if (controller.signal.reason === TIMEOUT) return { kind: 'retry', reason: `no answer within ${timeoutMs} ms` };
      return { kind: 'retry', reason: scrub(describeError(error)) };
    } finally {
      clearTimeout(timer);
      attemptController = null;
    }
  }

  function pause(ms: number): Promise<void> {
    return new Promise((resolve) => {
      const timer = setTimeout(() => {
        wake = null;
        resolve();
      }, ms);
      wake = () => {
        clearTimeout(timer);
        wake = null;
        resolve();
      };
    });
  }

  async function deliver(notice: AlertNotice): Promise<NotificationOutcome> {
    let body: string;
    let key: string;
    try {
      key = notice.transition.id;
      if (typeof key !== 'string' || key === '' || /[^\x21-\x7e]/.test(key)) throw new Error('the transition id is missing or not printable ASCII');
      body = JSON.stringify(webhookBody(notice));
    } catch (error) {
      log.error({ event: 'alert_webhook_invalid', ...safeWho(notice), err: scrub(describeError(error)) }, 'alert notice could not be made into a webhook body; dropped and counted as failed');
      return 'failed';
    }
    for (let n = 1; ; n++) {
      const result = await attempt(body, key);
      if (result.kind === 'ok') {
        log.debug({ event: 'alert_webhook_sent', ...who(notice), attempt: n, status: result.status }, 'alert notice delivered');
        return 'sent';
      }
      if (result.kind === 'closed' || closed) return 'dropped';
      if (result.kind === 'reject') {
        log.error({ event: 'alert_webhook_rejected', ...who(notice), attempt: n, status: result.status }, `alert webhook ${result.reason}; not retried, dropped and counted as failed`);
        return 'failed';
      }
      if (n > retries) {
        log.error({ event: 'alert_webhook_gave_up', ...who(notice), attempts: n }, `alert webhook gave up after ${n} attempts, the last one ${result.reason}; counted as failed`);
        return 'failed';
      }
      const waitMs = result.waitMs ?? backoffDelayMs(n, policy, random());
      log.warn({ event: 'alert_webhook_retry', ...who(notice), attempt: n, retryInMs: waitMs }, `alert webhook ${result.reason}; retrying`);
      await pause(waitMs);
      if (closed) return 'dropped';
    }
  }

  async function drain(): Promise<void> {
    while (!closed) {
      const entry = queue.shift();
      if (entry === undefined) break;
      inFlight = entry;
      let outcome: NotificationOutcome;
      try {
        outcome = await deliver(entry.notice);
      } catch (error) {
        // deliver() catches what it expects; this is the net under it, so the loop never dies.
        log.error({ event: 'alert_webhook_internal', err: scrub(describeError(error)) }, 'alert webhook failed unexpectedly; notice counted as failed');
        outcome = 'failed';
      }
      inFlight = null;
      settle(outcome);
    }
    running = false;
  }

  return {
    name: 'webhook',
    notify(notice: AlertNotice): void {
      try {
        if (closed) {
          log.warn({ event: 'alert_webhook_closed', ...safeWho(notice) }, 'alert notice after close; dropped');
          counts.dropped += 1;
          return;
        }
        arrived += 1;
        queue.push({ notice, n: arrived });
        if (queue.length > queueSize) {
          const oldest = queue.shift() as Entry;
          log.warn({ event: 'alert_webhook_queue_full', ...safeWho(oldest.notice), queueSize }, 'alert webhook queue is full; the oldest notice is dropped');
          settle('dropped');
        }
        if (!running) {
          running = true;
          loop = drain();
        }
      } catch {
        // notify() never throws; a logger that throws is all that can land here.
      }
    },
    flush(flushTimeoutMs: number): Promise<boolean> {
      const upTo = arrived;
      const oldest = inFlight?.n ?? queue[0]?.n ?? Infinity;
      if (upTo < oldest) return Promise.resolve(true);
      return new Promise((resolve) => {
        const waiter = {
          upTo,
          resolve: (done: boolean) => {
            clearTimeout(timer);
            resolve(done);
          },
        };
        const timer = setTimeout(() => {
          const i = waiters.indexOf(waiter);
          if (i >= 0) waiters.splice(i, 1);
          resolve(false);
        }, Math.max(0, flushTimeoutMs));
        waiters.push(waiter);
      });
    },
    close(): Promise<void> {
      closing ??= (async () => {
        closed = true;
        attemptController?.abort(CLOSED);
        wake?.();
        const left = queue.splice(0);
        if (left.length > 0) log.warn({ event: 'alert_webhook_closed_unsent', count: left.length }, `alert webhook closed with ${left.length} notice(s) unsent; dropped`);
        settle('dropped', left.length);
        await loop;
      })();
      return closing;
    },
    counts: (): NotificationCounts => ({ ...counts, pending: queue.length + (inFlight === null ? 0 : 1) }),
  };
}

/** Fields naming a notice, for a notice that may be malformed. */
function safeWho(n: AlertNotice): Record<string, unknown> {
  try {
    const t = n.transition;
    return { alertId: typeof t.id === 'string' ? t.id : null, rule: typeof t.rule === 'string' ? t.rule : null };
  } catch {
    return {};
  }
}

/** fetch() rejects with "fetch failed" and puts the reason (ECONNREFUSED, ...) in its cause. */
function describeError(error: unknown): string {
  if (!(error instanceof Error)) return String(error);
  const cause = error.cause;
  if (cause instanceof Error) {
    const code = (cause as { code?: unknown }).code;
    return `${error.message}: ${typeof code === 'string' ? `${code} ` : ''}${cause.message}`;
  }
  return error.message;
}

/** The notifier's options from the parsed `alerts.webhook` section, the token from the environment. */
export function webhookOptionsFrom(section: WebhookSection, env: Readonly<Record<string, string | undefined>>, logger: Logger): WebhookNotifierOptions {
  const token = env[WEBHOOK_TOKEN_ENV];
  return {
    url: section.url,
    logger,
    timeoutMs: section.timeoutMs,
    retries: section.retries,
    backoffMs: section.backoffMs,
    maxBackoffMs: section.maxBackoffMs,
    maxRetryAfterMs: section.maxRetryAfterMs,
    queueSize: section.queueSize,
    headers: section.headers,
    token: token === undefined || token === '' ? null : token,
  };
}
