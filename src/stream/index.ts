/** The Kafka edge of `headroom watch`: the consumer loop over per-partition states, and the read view src/serve takes. */
export { createWatcher } from './watcher.js';
export type { Watcher, WatcherDependencies } from './watcher.js';
export { createSeriesSource, ReferenceIndex } from './source.js';
export type { SourceView } from './source.js';
export { kafkaLogCreator } from './kafka-log.js';
