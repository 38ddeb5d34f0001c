/** The configuration of `headroom watch`: one YAML file, environment overrides, fix-it errors. */
export { describeConfig } from './describe.js';
export { formatDuration, parseDuration } from './durations.js';
export type { DurationResult } from './durations.js';
export { applyEnvOverrides, ENV_VARIABLES } from './env.js';
export type { Env } from './env.js';
export { kafkaClientOptions } from './kafka-options.js';
export type { TlsMaterial } from './kafka-options.js';
export { loadConfig, readTlsMaterial, resolveConfigPaths } from './load.js';
export { modelFor, parseConfig } from './parse.js';
export { ANY_MODEL, MIN_CHECKPOINT_INTERVAL_MS } from './resolve.js';
export type { Problem } from './problems.js';
export { DEFAULT_HTTP_PORT, DEFAULT_MAX_SERIES, DEFAULT_WINDOWS } from './schema.js';
export { Secret } from './secret.js';
export type {
  ConfigResult,
  HeadroomConfig,
  HistoryConfig,
  KafkaConfig,
  KafkaSaslConfig,
  KafkaTlsConfig,
  ModelConfig,
  SaslMechanism,
  WindowViewConfig,
} from './types.js';
