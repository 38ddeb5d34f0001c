/** `headroom replay`: logged events (files or a Kafka time range) through the watcher's core into reports. */
export { ReplayEngine, replayWindowConfig } from './engine.js';
export type { ClosedWindow, EngineCounts, ReplayEngineOptions } from './engine.js';
export { CDF_MARGINS, CdfPicker, cdfPoints } from './cdf.js';
export { loadChartLibrary } from './chart-library.js';
export type { ChartLibrary } from './chart-library.js';
export { reportCsv } from './csv.js';
export { CAUTIONS, reportHtml, scriptSafeJson } from './html.js';
export { planRange, readRange } from './kafka-range.js';
export type { PartitionRange, RangeReader } from './kafka-range.js';
export { openMetricsLines } from './openmetrics.js';
export { ruleAlerts } from './alerts.js';
export { noAlerts, referenceLookup, REPORT_FORMAT, REPORT_QUANTILE_LEVELS, windowEntries, windowFigures, withAlerts } from './report.js';
export type { AlertEntry, AlertEvaluator, CdfPick, LowMarginEntry, ReportCdfs, SeriesCdfs, WindowCdf, WindowFigures, ReferenceLookup, ReplayReport, ReportEntry, ReportTotals } from './report.js';
export { runReplay } from './run.js';
export type { KafkaRange, ReplayIo, ReplayOptions, ReplayResult } from './run.js';
export { MAX_WINDOW_MS, MIN_WINDOW_MS, parseReplayWindow, TOTAL_WINDOW, windowStartOf } from './window-spec.js';
export type { ReplayWindow } from './window-spec.js';
