/** The Kafka edge of `headroom watch`: the consumer loop over per-partition states, and the read view src/serve takes. */
export { createWatcher } from './watcher.js';
export type { Watcher, WatcherDependencies } from './watcher.js';
export { createSeriesSource } from './source.js';
export { ReferenceIndex } from './reference-index.js';
export type { ReferenceChange, ReferenceFailure, ReferenceFileSlot, ReferenceRead } from './reference-index.js';
export { createReferenceFiles } from './reference-files.js';
export type { ReferenceFiles, ReloadReport } from './reference-files.js';
export type { SourceView } from './source.js';
export { kafkaLogCreator } from './kafka-log.js';
export { createOutputs } from './outputs.js';
export type { Outputs, OutputsOptions } from './outputs.js';
export { ingestScored } from './ingest.js';
export type { Ingested } from './ingest.js';
export type { TransitionListener } from './alert-runner.js';
