/**
 * Prometheus metrics of `headroom watch`, computed when Prometheus scrapes (STYLE 5): nothing here runs per
 * message. Every family is a prom-client Counter or Gauge on the registry passed in, refilled from the
 * source in its collect(); a series that went away therefore leaves no stale sample behind.
 *
 * Names follow DESIGN.md with two choices made on purpose so that `promtool check metrics` finds nothing:
 * - `_total` families are real counters (type `counter` in the exposition), fed exact counts.
 * - `headroom_margin_quantile` labels its level `level`, not `quantile`: Prometheus reserves `quantile`
 *   for summaries, and a summary's `_count`/`_sum` would claim a cumulative history a window does not have.
 */
import { Counter, Gauge } from 'prom-client';
import type { Registry } from 'prom-client';
import { JOIN_RESULTS } from '../labels/index.js';
import type { JoinCounts } from '../labels/index.js';
import type { SeriesSnapshot, ViewSpec, WatchedSeriesSource } from './model.js';
import { checkQuantiles, checkViews, decimalLabel, METRIC_QUANTILE_LEVELS } from './options.js';
import { viewReports, type ViewReport } from './report.js';

export interface MetricsOptions {
  readonly registry: Registry;
  readonly source: WatchedSeriesSource;
  readonly views: readonly ViewSpec[];
  /** Wall clock for the checkpoint age; passed in so tests need no fake timers. */
  readonly nowMs: () => number;
  /** Levels of `headroom_margin_quantile`; default METRIC_QUANTILE_LEVELS. */
  readonly quantiles?: readonly number[];
}

export interface HeadroomMetrics {
  readonly registry: Registry;
  /** The families registered, in exposition order. */
  readonly names: readonly string[];
}

const SERIES = ['model', 'version', 'segment'] as const;

/** Label values of headroom_label_join_total{result}: stable, snake_case. */
const JOIN_RESULT_LABELS: Record<keyof JoinCounts, string> = {
  matched: 'matched',
  predictionExpired: 'prediction_expired',
  predictionEvicted: 'prediction_evicted',
  predictionDuplicate: 'prediction_duplicate',
  outcomeUnmatched: 'outcome_unmatched',
  outcomeEvicted: 'outcome_evicted',
  outcomeDuplicate: 'outcome_duplicate',
  outcomeBadLabel: 'outcome_bad_label',
};
const WINDOWED = [...SERIES, 'window'] as const;
const PARTITION = ['topic', 'partition'] as const;

interface SeriesFigures {
  readonly snapshot: SeriesSnapshot;
  readonly labels: Record<(typeof SERIES)[number], string>;
  readonly views: readonly ViewReport[];
}

type Emit<L extends string> = (labels: Record<L, string>, value: number) => void;

export function createMetrics(options: MetricsOptions): HeadroomMetrics {
  const { registry, source, nowMs } = options;
  const views = checkViews(options.views);
  const quantiles = checkQuantiles(options.quantiles ?? METRIC_QUANTILE_LEVELS, 'quantiles');

  // Registry.metrics() calls every collector's get() in one synchronous pass, and the microtask runs
  // after it: one scrape merges each view and compares it once, not once per family. Were a collector
  // ever run after the microtask, it would recompute: slower, never stale.
  let figures: readonly SeriesFigures[] | undefined;
  const current = (): readonly SeriesFigures[] => {
    if (figures === undefined) {
      figures = [...source.series()].map((snapshot) => ({
        snapshot,
        labels: { model: snapshot.model, version: snapshot.version, segment: snapshot.segment },
        views: viewReports(snapshot, views, quantiles),
      }));
      queueMicrotask(() => {
        figures = undefined;
      });
    }
    return figures;
  };

  const names: string[] = [];
  const gauge = <L extends string>(name: string, help: string, labelNames: readonly L[], fill: (emit: Emit<L>) => void): void => {
    names.push(name);
    new Gauge<L>({
      name,
      help,
      labelNames,
      registers: [registry],
      collect(this: Gauge<L>) {
        this.reset();
        fill((labels, value) => this.set(labels, value));
      },
    });
  };
  const counter = <L extends string>(name: string, help: string, labelNames: readonly L[], fill: (emit: Emit<L>) => void): void => {
    names.push(name);
    new Counter<L>({
      name,
      help,
      labelNames,
      registers: [registry],
      // The source keeps the exact count; reset-then-inc hands it over without a second running total here.
      collect(this: Counter<L>) {
        this.reset();
        fill((labels, value) => this.inc(labels, value));
      },
    });
  };

  counter('headroom_events_total', 'Scored events routed to a series, late and future ones included.', SERIES, (emit) => {
    for (const f of current()) emit(f.labels, f.snapshot.events);
  });
  counter('headroom_events_rejected_total', 'Messages turned away, by reason code; never counted in any series.', ['reason'], (emit) => {
    for (const [reason, count] of source.rejections()) emit({ reason }, count);
  });
  gauge('headroom_series', 'Series watched per model (segments of all versions).', ['model'], (emit) => {
    const perModel = new Map<string, number>();
    for (const f of current()) perModel.set(f.labels.model, (perModel.get(f.labels.model) ?? 0) + 1);
    for (const [model, n] of perModel) emit({ model }, n);
  });
  gauge('headroom_reference_loaded', '1 when the model version has a reference to compare with, else 0.', ['model', 'version'], (emit) => {
    const loaded = new Map<string, { model: string; version: string; value: number }>();
    for (const { labels, snapshot } of current()) {
      const key = JSON.stringify([labels.model, labels.version]);
      const value = snapshot.reference === undefined ? 0 : 1;
      const seen = loaded.get(key);
      loaded.set(key, { model: labels.model, version: labels.version, value: Math.max(value, seen?.value ?? 0) });
    }
    for (const { model, version, value } of loaded.values()) emit({ model, version }, value);
  });
  gauge(
    'headroom_reference_loaded_timestamp_seconds',
    'Unix time the model version\'s reference was read, at start or by the reload that found it changed.',
    ['model', 'version'],
    (emit) => {
      for (const r of source.references?.().loaded ?? []) emit({ model: r.model, version: r.version }, r.loadedAtMs / 1000);
    },
  );
  // Keyed by models[].name, the one name a file that cannot be read still has.
  counter('headroom_reference_reload_errors_total', 'Reads of a configured reference file that failed; the previous reference stayed in force.', ['model'], (emit) => {
    for (const f of source.references?.().files ?? []) emit({ model: f.model }, f.reloadErrors);
  });
  gauge('headroom_reference_reload_failing', '1 while the latest read of the model\'s reference file failed (the previous reference is in force), else 0.', ['model'], (emit) => {
    for (const f of source.references?.().files ?? []) emit({ model: f.model }, f.failing ? 1 : 0);
  });
  gauge('headroom_window_events', 'Events in the window (the denominator of the window ratios).', WINDOWED, (emit) => {
    for (const f of current()) for (const v of f.views) emit({ ...f.labels, window: v.window }, v.summary.count);
  });
  gauge(
    'headroom_low_margin_ratio',
    'Exact share of predictions in the window whose confidence margin is below the threshold.',
    [...WINDOWED, 'threshold'],
    (emit) => {
      for (const f of current()) {
        for (const v of f.views) {
          if (v.summary.count === 0) continue;
          for (const t of v.summary.thresholds) emit({ ...f.labels, window: v.window, threshold: decimalLabel(t) }, v.summary.lowMarginRatio(t));
        }
      }
    },
  );
  gauge(
    'headroom_reference_low_margin_ratio',
    'Share of reference predictions whose confidence margin is below the threshold, as the reference file stores it.',
    [...SERIES, 'threshold'],
    (emit) => {
      for (const f of current()) {
        for (const entry of f.snapshot.reference?.lowMargin ?? []) emit({ ...f.labels, threshold: decimalLabel(entry.threshold) }, entry.share);
      }
    },
  );
  gauge('headroom_margin_quantile', 'Confidence-margin quantile at the level in the window (from the sketch).', [...WINDOWED, 'level'], (emit) => {
    for (const f of current()) {
      for (const v of f.views) {
        for (const q of v.quantiles) if (q.live !== null) emit({ ...f.labels, window: v.window, level: decimalLabel(q.q) }, q.live);
      }
    }
  });
  const drift = (name: string, help: string, pick: (d: NonNullable<ViewReport['drift']>) => number): void =>
    gauge(name, help, WINDOWED, (emit) => {
      for (const f of current()) for (const v of f.views) if (v.drift !== null) emit({ ...f.labels, window: v.window }, pick(v.drift));
    });
  drift('headroom_drift_ks', 'Kolmogorov-Smirnov D between the window and the reference confidence margins.', (d) => d.ks.statistic);
  drift('headroom_drift_psi', 'Population stability index of the window over the reference deciles.', (d) => d.psi.value);
  drift('headroom_drift_wasserstein', 'Wasserstein-1 distance between the window and the reference confidence margins.', (d) => d.wasserstein);
  // Labels (src/labels): observed figures by view, the reference's beside them, and the join's counts.
  counter('headroom_labelled_total', 'Predictions with a known label (carried inline or joined from an outcome), routed to the series.', SERIES, (emit) => {
    for (const f of current()) if (f.snapshot.labelled !== undefined) emit(f.labels, f.snapshot.labelled);
  });
  const labelled = (name: string, help: string, pick: (l: NonNullable<ViewReport['labels']>) => number | null): void =>
    gauge(name, help, WINDOWED, (emit) => {
      for (const f of current()) {
        for (const v of f.views) {
          const value = v.labels === null ? null : pick(v.labels);
          if (value !== null) emit({ ...f.labels, window: v.window }, value);
        }
      }
    });
  labelled('headroom_window_labelled_events', 'Labelled predictions among the window\'s predictions (by prediction time).', (l) => l.n);
  labelled('headroom_error_ratio', 'Exact share of labelled predictions in the window with signed margin <= 0 (wrong or on the boundary).', (l) => l.errorRate.share);
  labelled('headroom_calibration_error', 'Expected calibration error (10 equal-width bins) of the window\'s labelled probability scores.', (l) => l.calibration?.ece ?? null);
  labelled(
    'headroom_label_free_error_ratio',
    'E[min(p, 1-p)] over the window\'s predictions: the error rate of a calibrated model, known before any label.',
    (l) => l.labelFree?.estimate ?? null,
  );
  gauge('headroom_margin_loss_ratio', 'Exact share of labelled predictions in the window with signed margin <= threshold.', [...WINDOWED, 'threshold'], (emit) => {
    for (const f of current()) {
      for (const v of f.views) for (const m of v.labels?.marginLoss ?? []) if (m.live !== null) emit({ ...f.labels, window: v.window, threshold: decimalLabel(m.theta) }, m.live);
    }
  });
  // Reference figures are the same in every view: the first view carries them.
  gauge('headroom_reference_error_ratio', 'Share of labelled reference predictions with signed margin <= 0, as the reference file stores it.', SERIES, (emit) => {
    for (const f of current()) {
      const r = f.views[0]?.labels?.referenceErrorRate ?? null;
      if (r !== null) emit(f.labels, r);
    }
  });
  gauge('headroom_reference_margin_loss_ratio', 'Share of labelled reference predictions with signed margin <= threshold (from its signed-margin digest).', [...SERIES, 'threshold'], (emit) => {
    for (const f of current()) for (const m of f.views[0]?.labels?.marginLoss ?? []) if (m.reference !== null) emit({ ...f.labels, threshold: decimalLabel(m.theta) }, m.reference);
  });
  gauge('headroom_reference_calibration_error', 'Expected calibration error of the reference file\'s calibration bins.', SERIES, (emit) => {
    for (const f of current()) {
      const r = f.views[0]?.labels?.calibration?.referenceEce ?? null;
      if (r !== null) emit(f.labels, r);
    }
  });
  if (source.labelJoin !== undefined) {
    const join = source.labelJoin.bind(source);
    counter('headroom_label_join_total', 'Predictions and outcomes leaving the delayed-label join, by result.', ['result'], (emit) => {
      const j = join().join;
      for (const k of JOIN_RESULTS) emit({ result: JOIN_RESULT_LABELS[k] }, j[k]);
    });
    counter('headroom_outcomes_total', 'Outcome messages decoded and offered to the join (rejected ones are in headroom_events_rejected_total).', [], (emit) => emit({}, join().outcomes));
    gauge('headroom_labels_waiting', 'Predictions waiting for their outcome, and outcomes waiting for their prediction, now.', ['side'], (emit) => {
      const w = join().waiting;
      emit({ side: 'prediction' }, w.predictions);
      emit({ side: 'outcome' }, w.outcomes);
    });
  }
  gauge('headroom_consumer_lag_messages', 'Messages between the consumer position and the partition high watermark.', PARTITION, (emit) => {
    for (const p of source.partitions()) if (p.lagMessages !== null) emit({ topic: p.topic, partition: String(p.partition) }, p.lagMessages);
  });
  gauge('headroom_checkpoint_age_seconds', 'Seconds since the partition state was last checkpointed.', PARTITION, (emit) => {
    const now = nowMs();
    for (const p of source.partitions()) {
      // Clocks step: a checkpoint a little in the future reads as just written, not as a negative age.
      if (p.lastCheckpointMs !== null) emit({ topic: p.topic, partition: String(p.partition) }, Math.max(0, now - p.lastCheckpointMs) / 1000);
    }
  });
  if (source.alerts !== undefined) {
    const alerts = source.alerts.bind(source);
    // Firing and easing both count as firing: easing is a firing alert waiting out its clear hold.
    gauge('headroom_alert_firing', '1 while the alert rule fires for the series (phase firing or easing), else 0.', [...SERIES, 'rule'], (emit) => {
      for (const a of alerts().alerts) emit({ ...a.series, rule: a.rule }, a.phase === 'firing' || a.phase === 'easing' ? 1 : 0);
    });
  }

  return { registry, names: Object.freeze(names) };
}
