/** Reference files (`headroom-reference/1`): built from decoded events, read back as comparison-ready views. */
export { buildReference, ReferenceBuilder } from './build.js';
export type { BuildReferenceOptions } from './build.js';
export { CalibrationCounts, invertedCdfQuantiles } from './exact.js';
export { referenceFileName } from './file-name.js';
export { ALL_SEGMENT, CALIBRATION_BINS, DECILE_LEVELS, REFERENCE_FORMAT, referenceSchema } from './format.js';
export type { CalibrationBin, LabelsRecord, LowMarginEntry, ReferenceFile, SegmentRecord } from './format.js';
export { parseReference, parseReferenceText } from './load.js';
export type { LoadedReference, ReferenceLabels, ReferenceSegment } from './load.js';
export { DEFAULT_MAX_SEGMENT_VALUES, DEFAULT_REFERENCE_THRESHOLDS, OTHER_SEGMENT_VALUE, resolveReferenceOptions } from './options.js';
export type { ReferenceOptions, ResolvedReferenceOptions } from './options.js';
export { formatReference } from './serialise.js';
