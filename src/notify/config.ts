/**
 * The `alerts.webhook` section of the watch configuration, and `alerts.linkBase`. Pure (zod only), so
 * the alerts section can take it in without pulling any I/O along.
 *
 * The bearer token is not a setting of the file: it comes from HEADROOM_ALERT_WEBHOOK_TOKEN, so one file
 * serves every environment and holds no secret. A `token` (or an `Authorization` header) written in the
 * file is refused with a message that says so, rather than silently sent or silently ignored.
 */
import { z } from 'zod';
import { ENV_VARIABLES } from '../config/env.js';
import { parseDuration } from '../config/durations.js';

export const WEBHOOK_TOKEN_ENV = ENV_VARIABLES.alertWebhookToken;

export const WEBHOOK_DEFAULTS = Object.freeze({
  timeout: '5s',
  retries: 5,
  /** First retry after about this long (with jitter), doubling each time up to maxBackoff. */
  backoff: '1s',
  maxBackoff: '1m',
  /** A receiver's Retry-After is honoured up to this; beyond it the notice would hold the queue too long. */
  maxRetryAfter: '5m',
  queueSize: 1000,
});

/** Headers headroom sets itself, each for a reason the refusal message gives. */
const RESERVED_HEADERS: Readonly<Record<string, string>> = {
  'content-type': 'headroom sets it (application/json)',
  'content-length': 'it follows from the body',
  host: 'it follows from url',
  'idempotency-key': 'headroom sets it to the transition id',
  authorization: `the bearer token comes from ${WEBHOOK_TOKEN_ENV}, never from the file`,
};

const duration = z.unknown().transform((value, ctx) => {
  const parsed = parseDuration(value);
  if (parsed.ok) return parsed.ms;
  ctx.addIssue({ code: 'custom', message: parsed.detail });
  return z.NEVER;
});

/** RFC 9110 token characters. */
const HEADER_NAME = /^[!#$%&'*+.^_`|~0-9A-Za-z-]+$/;
/** Visible ASCII, spaces and tabs: no CR or LF, which would start another header. */
const HEADER_VALUE = /^[\t\x20-\x7e]*$/;

function httpUrl(field: string) {
  return z.string({ error: 'must be a URL (http:// or https://)' }).superRefine((text, ctx) => {
    let url: URL;
    try {
      url = new URL(text);
    } catch {
      ctx.addIssue({ code: 'custom', message: `must be an absolute http:// or https:// URL, got ${JSON.stringify(text)}` });
      return;
    }
    if (url.protocol !== 'http:' && url.protocol !== 'https:') ctx.addIssue({ code: 'custom', message: `must use http or https, got ${url.protocol.replace(/:$/, '')}` });
    // Shown without the credentials: the message may end up in a log.
    if (url.username !== '' || url.password !== '') {
      ctx.addIssue({ code: 'custom', message: `must not hold user:password@ (${field} is logged by origin only, but a file is no place for a secret); set ${WEBHOOK_TOKEN_ENV} for a bearer token` });
    }
  });
}

const headers = z.record(z.string(), z.string({ error: 'must be a string' })).superRefine((map, ctx) => {
  for (const [name, value] of Object.entries(map)) {
    if (!HEADER_NAME.test(name)) ctx.addIssue({ code: 'custom', path: [name], message: 'is not a valid header name (letters, digits and !#$%&\'*+.^_`|~- only)' });
    const reserved = RESERVED_HEADERS[name.toLowerCase()];
    if (reserved !== undefined) ctx.addIssue({ code: 'custom', path: [name], message: `may not be set here: ${reserved}` });
    // The value itself is never repeated in a message: it may be a key.
    if (!HEADER_VALUE.test(value)) ctx.addIssue({ code: 'custom', path: [name], message: 'must be printable ASCII on one line (no CR, LF or other control characters)' });
  }
});

export const webhookSectionSchema = z
  .strictObject({
    url: httpUrl('url'),
    timeout: duration.prefault(WEBHOOK_DEFAULTS.timeout),
    retries: z.number({ error: 'must be a number' }).int({ error: 'must be a whole number' }).min(0, { error: 'must be at least 0' }).max(20, { error: 'must be at most 20' }).default(WEBHOOK_DEFAULTS.retries),
    backoff: duration.prefault(WEBHOOK_DEFAULTS.backoff),
    maxBackoff: duration.prefault(WEBHOOK_DEFAULTS.maxBackoff),
    maxRetryAfter: duration.prefault(WEBHOOK_DEFAULTS.maxRetryAfter),
    queueSize: z.number({ error: 'must be a number' }).int({ error: 'must be a whole number' }).min(1, { error: 'must be at least 1' }).max(1_000_000, { error: 'must be at most 1000000' }).default(WEBHOOK_DEFAULTS.queueSize),
    headers: headers.default({}),
    token: z.unknown().optional(),
  })
  .superRefine((section, ctx) => {
    if (section.token !== undefined) ctx.addIssue({ code: 'custom', path: ['token'], message: `must not be in the file: set the environment variable ${WEBHOOK_TOKEN_ENV} instead` });
    if (section.maxBackoff < section.backoff) ctx.addIssue({ code: 'custom', path: ['maxBackoff'], message: `must be at least backoff (${section.backoff} ms)` });
  })
  .transform(
    (s): WebhookSection => ({
      url: s.url,
      timeoutMs: s.timeout,
      retries: s.retries,
      backoffMs: s.backoff,
      maxBackoffMs: s.maxBackoff,
      maxRetryAfterMs: s.maxRetryAfter,
      queueSize: s.queueSize,
      headers: s.headers,
    }),
  );

/** `alerts.linkBase`: where a receiver can look the series up, e.g. `https://headroom.example`; null: no link. */
export const linkBaseSchema = httpUrl('linkBase').nullable().default(null);

export interface WebhookSection {
  readonly url: string;
  readonly timeoutMs: number;
  readonly retries: number;
  readonly backoffMs: number;
  readonly maxBackoffMs: number;
  readonly maxRetryAfterMs: number;
  readonly queueSize: number;
  readonly headers: Readonly<Record<string, string>>;
}

/** Every key of the section, for the config's "did you mean" on a misspelt key. */
export const WEBHOOK_CONFIG_KEYS: readonly string[] = Object.freeze(['webhook', 'linkBase', 'url', 'timeout', 'retries', 'backoff', 'maxBackoff', 'maxRetryAfter', 'queueSize', 'headers']);
