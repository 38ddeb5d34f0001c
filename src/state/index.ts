/** Per-partition state of `headroom watch`: series routing, the partition state with its offset, checkpoint stores. */
export { ALL_SEGMENT, DEFAULT_MAX_SERIES, OTHER_SEGMENT_VALUE, SeriesRouter, describeSeries, routingConfig, splitSegment } from './routing.js';
export type { RoutedSeries, RoutingConfig, RoutingOptions, SeriesId } from './routing.js';
export { ANY_MODEL, PARTITION_STATE_FORMAT, PartitionState, mergeView, parsePartitionState, partitionStateSchema } from './partition-state.js';
export type { ApplyOutcome, MergedView, ModelSettings, OutcomeSettings, PartitionCounts, PartitionSeries, PartitionStateJson, PartitionStateOptions, SavedPartitionState, SeriesCounts, SeriesView } from './partition-state.js';
export { checkGroup, checkKey, corrupt as checkpointCorrupt, closedError as checkpointClosed, decodeCheckpoint, encodeCheckpoint } from './checkpoint-store.js';
export type { CheckpointKey, CheckpointStore } from './checkpoint-store.js';
export { FileCheckpointStore, decodeName, encodeName } from './file-store.js';
export type { FileCheckpointStoreOptions } from './file-store.js';
export { MemoryCheckpointStore } from './memory-store.js';
export type { MemoryBacking } from './memory-store.js';
export { DEFAULT_STATE_TOPIC, KafkaCheckpointStore } from './kafka-store.js';
export type { KafkaCheckpointStoreOptions } from './kafka-store.js';
