/**
 * From the schema's output to the HeadroomConfig callers use: the checks that relate fields to each
 * other (kafkajs-style, failing at start-up with the fix), the window config each model's series get,
 * and the warnings for settings that work but are probably not meant.
 */
import { checkAlertRules } from '../alerts/index.js';
import { HeadroomError } from '../errors.js';
import { resolveDecodeLimits } from '../events/index.js';
import { normaliseThresholds, windowConfig } from '../sketch/index.js';
import type { WindowConfig } from '../sketch/index.js';
import { formatDuration, parseDuration } from './durations.js';
import { ENV_VARIABLES } from './env.js';
import { fieldPath } from './problems.js';
import type { ParsedConfig } from './schema.js';
import { Secret } from './secret.js';
import type { HeadroomConfig, KafkaSaslConfig, ModelConfig, WindowViewConfig } from './types.js';

/** Below this a checkpoint (every partition's state, written and synced) would run back to back. */
export const MIN_CHECKPOINT_INTERVAL_MS = 100;
export const ANY_MODEL = '*';
export const MIN_SESSION_TIMEOUT_MS = 6_000;

class ThresholdProblem extends Error {
  constructor(
    readonly field: string,
    readonly detail: string,
  ) {
    super(`${field} ${detail}`);
  }
}

/** `thresholds[2]` → ['thresholds', 2]. */
function parsePathTail(field: string): PropertyKey[] {
  return field.split(/[.[\]]/).filter((p) => p !== '').map((p) => (/^\d+$/.test(p) ? Number(p) : p));
}

/** The sketch names its settings in milliseconds; the file names them as written. */
const WINDOW_FIELDS: Record<string, PropertyKey[]> = {
  bucketMs: ['history', 'bucket'],
  fineSpanMs: ['history', 'fineSpan'],
  coarseBucketMs: ['history', 'coarseBucket'],
  retentionMs: ['history', 'retention'],
  latenessMs: ['lateness'],
  maxFutureMs: ['maxFuture'],
};

function renameWindowFields(detail: string): string {
  return detail.replace(/\b(bucketMs|fineSpanMs|coarseBucketMs|retentionMs|latenessMs|maxFutureMs)\b/g, (name) => fieldPath(WINDOW_FIELDS[name] ?? [name]));
}

/** Cross-field checks and the final shape; each problem names every field it involves and the fix. */
export function resolveParsed(
  parsed: ParsedConfig,
  source: string,
  passwordFromEnv: boolean,
  report: (path: PropertyKey[], detail: string) => void,
  warnings: string[],
): HeadroomConfig | undefined {
  const k = parsed.kafka;
  const once = (list: readonly string[], at: PropertyKey[], what: string): void => {
    list.forEach((item, i) => {
      const first = list.indexOf(item);
      if (first !== i) report([...at, i], `repeats ${JSON.stringify(item)} (${fieldPath([...at, first])}); list each ${what} once`);
    });
  };
  k.brokers.forEach((b, i) => {
    if (!/^(\[[0-9A-Fa-f:.]+\]|[^\s:[\]]+):\d{1,5}$/.test(b)) report(['kafka', 'brokers', i], `must be host:port, e.g. "127.0.0.1:9092", got ${JSON.stringify(b)}`);
  });
  once(k.topics, ['kafka', 'topics'], 'topic');
  once(k.outcomeTopics, ['kafka', 'outcomeTopics'], 'topic');
  k.outcomeTopics.forEach((t, i) => {
    if (k.topics.includes(t)) report(['kafka', 'outcomeTopics', i], `${JSON.stringify(t)} is also in kafka.topics; a topic holds scored events or outcomes, not both`);
  });
  if (k.outcomeTopics.length > k.topics.length) {
    report(['kafka', 'outcomeTopics'], `lists ${k.outcomeTopics.length} topics for ${k.topics.length} scored topic(s); outcomeTopics[i] holds the outcomes of topics[i], so list at most one per scored topic, in the same order`);
  }
  if (k.deadLetterTopic !== null && (k.topics.includes(k.deadLetterTopic) || k.outcomeTopics.includes(k.deadLetterTopic))) {
    report(['kafka', 'deadLetterTopic'], `${JSON.stringify(k.deadLetterTopic)} is also an input topic; rejected messages would be read back and rejected again forever — use a topic of its own, e.g. "headroom-rejected"`);
  }

  let sasl: KafkaSaslConfig | null = null;
  if (k.sasl !== null) {
    const password = k.sasl.password;
    if (password === undefined) {
      report(['kafka', 'sasl', 'password'], `is not set; set ${ENV_VARIABLES.saslPassword} (the file need not hold the password)`);
    } else {
      sasl = { mechanism: k.sasl.mechanism, username: k.sasl.username, password: new Secret(password, passwordFromEnv ? ENV_VARIABLES.saslPassword : 'file') };
      if (!passwordFromEnv) warnings.push(`kafka.sasl.password is written in ${source}; prefer ${ENV_VARIABLES.saslPassword} so the file can be shared and kept in version control`);
    }
    if (k.tls === null) {
      warnings.push(
        `kafka.sasl is set but kafka.tls is not: ${k.sasl.mechanism === 'plain' ? 'the password crosses the network in clear text' : 'the traffic after the SCRAM exchange is unencrypted'}; set kafka.tls: true unless the network is private`,
      );
    }
  }
  // The broker's group.min.session.timeout.ms defaults to 6 s; kafkajs wants heartbeats well inside the session.
  if (k.sessionTimeout < MIN_SESSION_TIMEOUT_MS) {
    report(['kafka', 'sessionTimeout'], `${formatDuration(k.sessionTimeout)} is below ${formatDuration(MIN_SESSION_TIMEOUT_MS)}, the broker's default group.min.session.timeout.ms; use 6s or more`);
  } else if (k.heartbeatInterval * 3 > k.sessionTimeout) {
    report(['kafka', 'heartbeatInterval'], `${formatDuration(k.heartbeatInterval)} is more than a third of kafka.sessionTimeout (${formatDuration(k.sessionTimeout)}); a member that misses two heartbeats would lose its partitions — use at most ${formatDuration(Math.floor(k.sessionTimeout / 3))}`);
  }
  if (k.tls !== null && !k.tls.rejectUnauthorized) warnings.push('kafka.tls.rejectUnauthorized is false: any broker certificate is accepted; give kafka.tls.ca instead');
  if (k.tls !== null && (k.tls.cert === null) !== (k.tls.key === null)) {
    const [missing, given] = k.tls.cert === null ? ['cert', 'key'] : ['key', 'cert'];
    report(['kafka', 'tls', missing], `is needed with kafka.tls.${given}: a client certificate and its key go together`);
  }

  const h = parsed.history;
  const history = { bucketMs: h.bucket, fineSpanMs: h.fineSpan, coarseBucketMs: h.coarseBucket, retentionMs: h.retention };
  let base: WindowConfig | undefined;
  try {
    base = windowConfig({ ...history, latenessMs: parsed.lateness, maxFutureMs: parsed.maxFuture, thresholds: [] });
  } catch (error) {
    const field = error instanceof HeadroomError && typeof error.context.field === 'string' ? error.context.field : '';
    const detail = error instanceof HeadroomError ? error.message.slice(error.message.indexOf(field) + field.length).trim() : String(error);
    const at = WINDOW_FIELDS[field];
    const given: Record<string, number> = { ...history, latenessMs: parsed.lateness, maxFutureMs: parsed.maxFuture };
    const value = given[field];
    report(at ?? ['history'], `${renameWindowFields(detail)}${value === undefined ? '' : `, got ${formatDuration(value)}`}`);
  }

  const windows: WindowViewConfig[] = [];
  parsed.windows.forEach((text, i) => {
    const d = parseDuration(text);
    if (!d.ok) return report(['windows', i], d.detail);
    const same = windows.find((w) => w.durationMs === d.ms);
    if (same !== undefined) return report(['windows', i], `${JSON.stringify(text)} is as long as ${JSON.stringify(same.name)}; list each window once`);
    // With the history itself refused, measuring windows against it would only add noise.
    if (base === undefined) return undefined;
    if (d.ms > history.retentionMs) {
      return report(['windows', i], `${text} is longer than the history kept (history.retention: ${formatDuration(history.retentionMs)}); raise history.retention to at least ${formatDuration(d.ms)} or drop the window`);
    }
    // A view covers whole buckets: fine ones while it fits the fine span, coarse ones beyond.
    const grain = d.ms <= history.fineSpanMs ? ['history.bucket', history.bucketMs] as const : ['history.coarseBucket', history.coarseBucketMs] as const;
    if (d.ms % grain[1] !== 0) return report(['windows', i], `${text} is not a whole number of buckets (${grain[0]}: ${formatDuration(grain[1])}); use a multiple of ${formatDuration(grain[1])}`);
    windows.push({ name: text.trim(), durationMs: d.ms });
  });

  const models: ModelConfig[] = [];
  const seen = new Map<string, number>();
  parsed.models.forEach((m, i) => {
    const at = ['models', i];
    const earlier = seen.get(m.name);
    if (earlier !== undefined) {
      report([...at, 'name'], m.name === ANY_MODEL
        ? `"*" appears twice (models[${earlier}]); keep one catch-all entry`
        : `${JSON.stringify(m.name)} repeats models[${earlier}].name; each model gets one entry`);
    }
    seen.set(m.name, i);
    if (m.name === ANY_MODEL && m.reference !== null) {
      warnings.push(`models[${i}] ("*") has a reference: every model it matches is compared with that one file; give each model its own entry and reference`);
    }
    let thresholds: readonly number[] = m.thresholds;
    try {
      thresholds = normaliseThresholds(m.thresholds, 'thresholds', (field, detail) => new ThresholdProblem(field, detail));
    } catch (error) {
      if (!(error instanceof ThresholdProblem)) throw error;
      report([...at, ...parsePathTail(error.field)], error.detail);
    }
    m.segmentKeys.forEach((key, j) => {
      if (key.includes('=') || key === '__proto__') report([...at, 'segmentKeys', j], `${JSON.stringify(key)} cannot be a segment key (series are named key=value)`);
      if (m.segmentKeys.indexOf(key) !== j) report([...at, 'segmentKeys', j], `repeats ${JSON.stringify(key)}; list each key once`);
    });
    if (m.segmentKeys.length > parsed.decode.maxSegmentKeys) {
      report([...at, 'segmentKeys'], `names ${m.segmentKeys.length} keys but decode.maxSegmentKeys is ${parsed.decode.maxSegmentKeys}; raise decode.maxSegmentKeys or drop keys`);
    }
    if (base !== undefined) models.push({ name: m.name, thresholds, segmentKeys: m.segmentKeys, reference: m.reference, maxSeries: m.maxSeries, window: Object.freeze({ ...base, thresholds }) });
  });

  if (base !== undefined) checkAlertRules(parsed.alerts.rules, { models, windows }, report);
  if (parsed.alerts.evaluateEvery < MIN_CHECKPOINT_INTERVAL_MS) {
    report(['alerts', 'evaluateEvery'], `${formatDuration(parsed.alerts.evaluateEvery)} is below ${MIN_CHECKPOINT_INTERVAL_MS}ms; each evaluation merges every watched series' views`);
  }

  const c = parsed.checkpoint;
  if (c.store === 'kafka' && [...k.topics, ...k.outcomeTopics, k.deadLetterTopic].includes(c.topic)) {
    report(['checkpoint', 'topic'], `${JSON.stringify(c.topic)} is also a topic of kafka; checkpoints need a topic of their own, e.g. "headroom-state"`);
  }
  if (c.interval < MIN_CHECKPOINT_INTERVAL_MS) {
    report(['checkpoint', 'interval'], `${formatDuration(c.interval)} is below ${MIN_CHECKPOINT_INTERVAL_MS}ms: each checkpoint writes every partition's state; use 1s or more`);
  }

  if (base === undefined) return undefined;
  return {
    source,
    kafka: {
      brokers: k.brokers,
      clientId: k.clientId,
      groupId: k.groupId,
      topics: k.topics,
      outcomeTopics: k.outcomeTopics,
      deadLetterTopic: k.deadLetterTopic,
      tls: k.tls,
      sasl,
      sessionTimeoutMs: k.sessionTimeout,
      heartbeatIntervalMs: k.heartbeatInterval,
    },
    models,
    windows,
    history,
    latenessMs: parsed.lateness,
    maxFutureMs: parsed.maxFuture,
    labels: { ttlMs: parsed.labels.ttl, maxPending: parsed.labels.maxPending },
    checkpoint: { store: c.store, dir: c.dir, topic: c.topic, intervalMs: c.interval },
    referenceReload: { watchFiles: parsed.referenceReload.watchFiles, debounceMs: parsed.referenceReload.debounce },
    alerts: { rules: parsed.alerts.rules, evaluateEveryMs: parsed.alerts.evaluateEvery, webhook: parsed.alerts.webhook ?? null, linkBase: parsed.alerts.linkBase },
    http: parsed.http,
    decode: resolveDecodeLimits(parsed.decode),
  };
}

