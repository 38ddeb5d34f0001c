/**
 * Cluster totals for Prometheus when several watchers share a group (README "Running several watchers").
 * Each watcher's own families cover only the partitions it owns; these cover every partition of the
 * group (the cluster view) and are exported by one watcher at a time, the elected one, so that nothing is
 * counted twice: `headroom_cluster_exporter` is 1 there and 0 on every other watcher, which export no
 * other `headroom_cluster_` sample but `headroom_cluster_partitions` (the partitions each one's view holds). Computed at scrape time, like the rest.
 */
import { Counter, Gauge } from 'prom-client';
import type { Registry } from 'prom-client';
import type { ViewSpec, WatchedSeriesSource } from './model.js';
import { checkViews, decimalLabel, METRIC_QUANTILE_LEVELS } from './options.js';
import { viewReports } from './report.js';

export interface ClusterMetricsOptions {
  readonly registry: Registry;
  /** The cluster view as a series source. */
  readonly source: WatchedSeriesSource;
  readonly views: readonly ViewSpec[];
  /** True while this watcher is the one that exports the cluster figures. */
  readonly exporting: () => boolean;
  /** Partitions merged into the cluster view. */
  readonly partitions: () => number;
}

const SERIES = ['model', 'version', 'segment'] as const;
const WINDOWED = [...SERIES, 'window'] as const;

export function createClusterMetrics(options: ClusterMetricsOptions): readonly string[] {
  const { registry, source, exporting } = options;
  const views = checkViews(options.views);
  const names: string[] = [];
  type Figures = { labels: Record<(typeof SERIES)[number], string>; events: number; views: ReturnType<typeof viewReports> }[];
  // As in metrics.ts: one merge and comparison per scrape, shared by the families of that scrape.
  let figures: Figures | undefined;
  const current = (): Figures => {
    if (!exporting()) return [];
    if (figures === undefined) {
      figures = [...source.series()].map((s) => ({
        labels: { model: s.model, version: s.version, segment: s.segment },
        events: s.events,
        views: viewReports(s, views, METRIC_QUANTILE_LEVELS),
      }));
      queueMicrotask(() => {
        figures = undefined;
      });
    }
    return figures;
  };
  const family = <L extends string>(kind: 'gauge' | 'counter', name: string, help: string, labelNames: readonly L[], fill: (emit: (labels: Record<L, string>, value: number) => void) => void): void => {
    names.push(name);
    if (kind === 'gauge') {
      new Gauge<L>({ name, help, labelNames, registers: [registry], collect(this: Gauge<L>) {
        this.reset();
        fill((labels, value) => this.set(labels, value));
      } });
    } else {
      new Counter<L>({ name, help, labelNames, registers: [registry], collect(this: Counter<L>) {
        this.reset();
        fill((labels, value) => this.inc(labels, value));
      } });
    }
  };

  family('gauge', 'headroom_cluster_exporter', '1 on the one watcher of the group that exports the headroom_cluster_ families (it owns partition 0 of the first input topic), else 0.', [], (emit) =>
    emit({}, exporting() ? 1 : 0),
  );
  // On every watcher (a label-less gauge always has a sample): shows that each one's view covers the group.
  family('gauge', 'headroom_cluster_partitions', 'Partitions of the group in this watcher\'s cluster view (owned ones live, the others from their last checkpoint).', [], (emit) => {
    emit({}, options.partitions());
  });
  family('counter', 'headroom_cluster_events_total', 'Scored events routed to the series, over every partition of the group.', SERIES, (emit) => {
    for (const f of current()) emit(f.labels, f.events);
  });
  family('gauge', 'headroom_cluster_window_events', 'Events in the window over every partition of the group.', WINDOWED, (emit) => {
    for (const f of current()) for (const v of f.views) emit({ ...f.labels, window: v.window }, v.summary.count);
  });
  family('gauge', 'headroom_cluster_low_margin_ratio', 'Exact share of the window\'s predictions with confidence margin below the threshold, over every partition of the group.', [...WINDOWED, 'threshold'], (emit) => {
    for (const f of current()) {
      for (const v of f.views) {
        if (v.summary.count === 0) continue;
        for (const t of v.summary.thresholds) emit({ ...f.labels, window: v.window, threshold: decimalLabel(t) }, v.summary.lowMarginRatio(t));
      }
    }
  });
  family('gauge', 'headroom_cluster_drift_ks', 'Kolmogorov-Smirnov D between the window (every partition of the group) and the reference.', WINDOWED, (emit) => {
    for (const f of current()) for (const v of f.views) if (v.drift !== null) emit({ ...f.labels, window: v.window }, v.drift.ks.statistic);
  });
  family('gauge', 'headroom_cluster_drift_psi', 'Population stability index of the window (every partition of the group) over the reference deciles.', WINDOWED, (emit) => {
    for (const f of current()) for (const v of f.views) if (v.drift !== null) emit({ ...f.labels, window: v.window }, v.drift.psi.value);
  });
  return names;
}
