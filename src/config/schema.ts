/**
 * The shape of the YAML file, field by field: types, ranges and defaults. Checks that relate fields to
 * each other (topics vs dead-letter topic, windows vs history) live in validate.ts, where the message
 * can name both fields and the remedy.
 */
import { z } from 'zod';
import { ALERT_CONFIG_KEYS, alertRulesSchema } from '../alerts/index.js';
import { linkBaseSchema, WEBHOOK_CONFIG_KEYS, webhookSectionSchema } from '../notify/config.js';
import { DEFAULT_DECODE_LIMITS } from '../events/index.js';
import { DEFAULT_REFERENCE_THRESHOLDS } from '../reference/index.js';
import { DEFAULT_WINDOW_CONFIG } from '../sketch/index.js';
import { formatDuration, parseDuration } from './durations.js';

/** Every key any section knows, for "did you mean" on a misspelt key. */
export const KNOWN_KEYS = new Set<string>([...ALERT_CONFIG_KEYS, ...WEBHOOK_CONFIG_KEYS]);
/**
 * The keys of each section, by its path with list indices as `[]` (`models[]`, `kafka.tls`), so a
 * misspelt key is matched against its own section's keys first.
 */
export const SECTION_KEYS = new Map<string, ReadonlySet<string>>([
  ['alerts.rules[]', new Set(ALERT_CONFIG_KEYS)],
  ['alerts.webhook', new Set(WEBHOOK_CONFIG_KEYS)],
]);

function section<S extends z.ZodRawShape>(at: string, shape: S) {
  for (const key of Object.keys(shape)) KNOWN_KEYS.add(key);
  SECTION_KEYS.set(at, new Set(Object.keys(shape)));
  return z.strictObject(shape);
}

const duration = z.unknown().transform((value, ctx) => {
  const parsed = parseDuration(value);
  if (parsed.ok) return parsed.ms;
  ctx.addIssue({ code: 'custom', message: parsed.detail });
  return z.NEVER;
});

const name = z.string().min(1, { error: 'must not be empty' });
const wholeAtLeast = (min: number) => z.number().int({ error: 'must be a whole number' }).min(min, { error: `must be at least ${min}` });
const names = z.array(name);

export const DEFAULT_WINDOWS: readonly string[] = Object.freeze(['5m', '1h', '24h']);
export const DEFAULT_MAX_SERIES = 200;
export const DEFAULT_HTTP_PORT = 9464;

const tls = section('kafka.tls', {
  ca: name.nullable().default(null),
  cert: name.nullable().default(null),
  key: name.nullable().default(null),
  rejectUnauthorized: z.boolean().default(true),
  servername: name.nullable().default(null),
});

const sasl = section('kafka.sasl', {
  mechanism: z.enum(['plain', 'scram-sha-256', 'scram-sha-512'], { error: 'must be one of plain, scram-sha-256, scram-sha-512' }),
  username: name,
  // Absent here is normal: the password belongs in HEADROOM_KAFKA_SASL_PASSWORD.
  password: name.optional(),
});

const kafka = section('kafka', {
  brokers: names.min(1, { error: 'must list at least one broker (host:port)' }),
  clientId: name.default('headroom'),
  groupId: name.default('headroom'),
  topics: names.min(1, { error: 'must list at least one topic of scored events' }),
  outcomeTopics: names.default([]),
  deadLetterTopic: name.nullable().default(null),
  // `tls: true` is Node's defaults; `false` and absent are no TLS.
  tls: z.preprocess((v) => (v === true ? {} : v === false ? null : v), tls.nullable()).default(null),
  sasl: sasl.nullable().default(null),
  // kafkajs's own defaults. A crashed watcher's partitions wait this long before another member (or its
  // own restart) gets them, so a shorter session means a faster recovery and more sensitivity to GC pauses.
  sessionTimeout: duration.prefault('30s'),
  heartbeatInterval: duration.prefault('3s'),
});

const model = section('models[]', {
  name: name.max(DEFAULT_DECODE_LIMITS.maxTextLength, { error: `must be at most ${DEFAULT_DECODE_LIMITS.maxTextLength} characters` }),
  thresholds: z
    .array(z.number().gt(0, { error: 'must be in (0, 1)' }).lt(1, { error: 'must be in (0, 1)' }))
    .min(1, { error: 'must hold at least one threshold' })
    .default([...DEFAULT_REFERENCE_THRESHOLDS]),
  segmentKeys: names.default([]),
  reference: name.nullable().default(null),
  maxSeries: wholeAtLeast(1).default(DEFAULT_MAX_SERIES),
});

export const configSchema = section('', {
  kafka,
  models: z.array(model).min(1, { error: 'must hold at least one model; leave models out to watch every model with defaults' }).prefault([{ name: '*' }]),
  windows: z.array(z.string({ error: 'must be a duration such as "5m"' })).min(1, { error: 'must hold at least one window' }).default([...DEFAULT_WINDOWS]),
  history: section('history', {
    // The sketch's own defaults, so the file and a series built without a config agree.
    bucket: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.bucketMs)),
    fineSpan: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.fineSpanMs)),
    coarseBucket: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.coarseBucketMs)),
    retention: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.retentionMs)),
  }).prefault({}),
  lateness: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.latenessMs)),
  maxFuture: duration.prefault(formatDuration(DEFAULT_WINDOW_CONFIG.maxFutureMs)),
  // Delayed labels (kafka.outcomeTopics): how long a prediction waits for its outcome, in event time, and
  // how many waiting predictions, outcomes and matched ids one partition holds at most.
  labels: section('labels', {
    ttl: duration.prefault('1d'),
    maxPending: wholeAtLeast(1).default(100_000),
  }).prefault({}),
  checkpoint: section('checkpoint', {
    // file: one watcher per group; kafka: a compacted topic, so a partition's state follows it to another watcher.
    store: z.enum(['file', 'kafka'], { error: 'must be file or kafka' }).default('file'),
    dir: name.default('./state'),
    topic: name.default('headroom-state'),
    interval: duration.prefault('5s'),
  }).prefault({}),
  // Reference files are read at start and again on SIGHUP; this adds a reload when a file changes on disk.
  referenceReload: section('referenceReload', {
    watchFiles: z.boolean().default(true),
    // Editors and deploys write a file in several steps: wait for them to finish before reading it.
    debounce: duration.prefault('500ms'),
  }).prefault({}),
  alerts: section('alerts', {
    rules: alertRulesSchema,
    // Evaluated in event time (the series' newest event), on this wall-clock cadence.
    evaluateEvery: duration.prefault('10s'),
    // Absent: transitions go to the log only. The token comes from HEADROOM_ALERT_WEBHOOK_TOKEN.
    webhook: webhookSectionSchema.optional(),
    // Where notices link to (this watcher's address as the receiver reaches it); null: no link.
    linkBase: linkBaseSchema,
  }).prefault({}),
  http: section('http', {
    host: name.default('127.0.0.1'),
    port: wholeAtLeast(0).max(65_535, { error: 'must be at most 65535' }).default(DEFAULT_HTTP_PORT),
  }).prefault({}),
  decode: section('decode', {
    maxBytes: wholeAtLeast(1).default(DEFAULT_DECODE_LIMITS.maxBytes),
    maxTextLength: wholeAtLeast(1).default(DEFAULT_DECODE_LIMITS.maxTextLength),
    maxIdLength: wholeAtLeast(1).default(DEFAULT_DECODE_LIMITS.maxIdLength),
    maxSegmentKeys: wholeAtLeast(0).default(DEFAULT_DECODE_LIMITS.maxSegmentKeys),
  }).prefault({}),
});

export type ParsedConfig = z.output<typeof configSchema>;
