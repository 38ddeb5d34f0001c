/** The file edge: which files an input list names, and the scored events in them, streamed. */
export { CSV_CLASS_PREFIX, CSV_SEGMENT_PREFIX, csvLayout, csvRowToWire } from './csv-events.js';
export type { CsvLayout } from './csv-events.js';
export { CsvRecordSplitter } from './csv-records.js';
export type { CsvRecord } from './csv-records.js';
export { DIRECTORY_PATTERNS, formatOf, listInputFiles } from './inputs.js';
export type { InputFile, InputFormat } from './inputs.js';
export { skipBom, splitLines } from './lines.js';
export type { RawLine } from './lines.js';
export { readScoredEvents } from './read.js';
export type { ReadOptions, SourceItem } from './read.js';
export { loadReferenceFile } from './reference-file.js';
export { formatRejectionSummary, RejectionTally, SOURCE_REJECTION_REASONS, sourceRejection } from './rejections.js';
export { createProgress, formatBytes, formatRate, PROGRESS_MIN_BYTES } from './progress.js';
export type { Progress, ProgressOptions, ProgressOutput } from './progress.js';
export type { LineRejection, LineRejectionReason, RejectionSummaryRow, SourceRejection, SourceRejectionReason } from './rejections.js';
