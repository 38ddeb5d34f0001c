/** The margin sketch: digests that are right for atoms, exact low-margin counters, event-time windows. */
export type { MarginDistribution } from './distribution.js';
export { MarginDigest, type DigestOptions } from './digest.js';
export { MarginSummary, type SummaryOptions } from './summary.js';
export { MarginWindows, type AddOutcome, type BucketCounts, type WindowCounters, type WindowView } from './windows.js';
export { DEFAULT_WINDOW_CONFIG, STANDARD_VIEWS, sameWindowConfig, windowConfig, type WindowConfig, type WindowOptions } from './window-config.js';
export { MAX_THRESHOLDS, normaliseThresholds } from './thresholds.js';
export { DEFAULT_COMPRESSION, DEFAULT_SCALE, MAX_COMPRESSION, MIN_COMPRESSION, SCALE_NAMES, type ScaleName } from './scale.js';
export { parseDigestState, parseSummaryState, parseWindowState, type BucketState, type CentroidTuple, type DigestState, type SummaryState, type WindowState } from './serialise.js';
