/** Prometheus metrics and the read-only HTTP API of `headroom watch`, over a small read interface of the watcher's state. */
export { createApp } from './app.js';
export type { AppDependencies } from './app.js';
export { DEFAULT_CDF_POINTS, MAX_CDF_POINTS, MIN_CDF_POINTS } from './api.js';
export { createClusterMetrics } from './cluster-metrics.js';
export type { ClusterMetricsOptions } from './cluster-metrics.js';
export { createMetrics } from './metrics.js';
export type { HeadroomMetrics, MetricsOptions } from './metrics.js';
export type {
  AlertReport,
  LabelJoinReport,
  PartitionInfo,
  Readiness,
  ReferenceFileReport,
  ReferenceFileState,
  ReferenceOrigin,
  ReferenceReport,
  SeriesKey,
  SeriesSnapshot,
  ViewSpec,
  WatchedSeriesSource,
} from './model.js';
export { METRIC_QUANTILE_LEVELS, decimalLabel } from './options.js';
export { viewReports } from './report.js';
export type { Drift, ViewReport } from './report.js';
