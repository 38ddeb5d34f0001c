/**
 * The configuration of `headroom watch` after validation: every field present and checked, so callers
 * never default or check a value again. Durations are milliseconds; paths are as written until
 * loadConfig resolves them against the config file's directory.
 */
import type { AlertRule } from '../alerts/index.js';
import type { DecodeLimits } from '../events/index.js';
import type { WebhookSection } from '../notify/config.js';
import type { WindowConfig } from '../sketch/index.js';
import type { Secret } from './secret.js';

export type SaslMechanism = 'plain' | 'scram-sha-256' | 'scram-sha-512';

export interface KafkaTlsConfig {
  /** PEM files; null leaves Node's default (the system CAs, no client certificate). */
  readonly ca: string | null;
  readonly cert: string | null;
  readonly key: string | null;
  readonly rejectUnauthorized: boolean;
  /** Name checked against the broker certificate when it differs from the broker address. */
  readonly servername: string | null;
}

export interface KafkaSaslConfig {
  readonly mechanism: SaslMechanism;
  readonly username: string;
  readonly password: Secret;
}

export interface KafkaConfig {
  readonly brokers: readonly string[];
  readonly clientId: string;
  readonly groupId: string;
  /** Topics of scored events. */
  readonly topics: readonly string[];
  /** Topics of outcome events (delayed labels): outcomeTopics[i] holds the outcomes of topics[i], partitioned alike; at most one per scored topic (a scored topic past the list's end has none). */
  readonly outcomeTopics: readonly string[];
  /** Where rejected messages are copied; null counts them without copying. */
  readonly deadLetterTopic: string | null;
  readonly tls: KafkaTlsConfig | null;
  readonly sasl: KafkaSaslConfig | null;
  /** The consumer group's session timeout: how long a silent member keeps its partitions. */
  readonly sessionTimeoutMs: number;
  readonly heartbeatIntervalMs: number;
}

export interface ModelConfig {
  /** Matches event.model exactly; `*` matches every model without an entry of its own. */
  readonly name: string;
  /** Sorted, distinct, each in (0, 1). */
  readonly thresholds: readonly number[];
  readonly segmentKeys: readonly string[];
  /** Reference file path; null when the model has none (no comparisons, margins only). */
  readonly reference: string | null;
  /** Series per model beyond which new segment values fold into `k=other`. */
  readonly maxSeries: number;
  /** The window config of every series of this model: history, lateness and this model's thresholds. */
  readonly window: WindowConfig;
}

export interface WindowViewConfig {
  /** As written in the file (`5m`); the `window` label value of the metrics. */
  readonly name: string;
  readonly durationMs: number;
}

export interface HistoryConfig {
  readonly bucketMs: number;
  readonly fineSpanMs: number;
  readonly coarseBucketMs: number;
  readonly retentionMs: number;
}

export interface HeadroomConfig {
  /** Where the configuration came from (a file path or a label), for messages. */
  readonly source: string;
  readonly kafka: KafkaConfig;
  readonly models: readonly ModelConfig[];
  readonly windows: readonly WindowViewConfig[];
  readonly history: HistoryConfig;
  readonly latenessMs: number;
  readonly maxFutureMs: number;
  /** Delayed labels: a prediction and its outcome pair up within ttlMs of event time; maxPending entries per partition at most. */
  readonly labels: { readonly ttlMs: number; readonly maxPending: number };
  /**
   * Where partition states are kept: files under `dir`, or the compacted Kafka topic `topic`. The alert
   * state is a file under `dir` either way.
   */
  readonly checkpoint: { readonly store: 'file' | 'kafka'; readonly dir: string; readonly topic: string; readonly intervalMs: number };
  /** Reload the reference files when they change on disk (SIGHUP reloads them either way), after debounceMs of quiet. */
  readonly referenceReload: { readonly watchFiles: boolean; readonly debounceMs: number };
  /** Alert rules (src/alerts) and how often the watcher evaluates them. */
  readonly alerts: {
    readonly rules: readonly AlertRule[];
    readonly evaluateEveryMs: number;
    /** Where transitions are POSTed; null: the log only. */
    readonly webhook: WebhookSection | null;
    readonly linkBase: string | null;
  };
  readonly http: { readonly host: string; readonly port: number };
  readonly decode: DecodeLimits;
}

export interface ConfigResult {
  readonly config: HeadroomConfig;
  /** Settings that work but are probably not meant (e.g. SASL without TLS); print them at start-up. */
  readonly warnings: readonly string[];
}
