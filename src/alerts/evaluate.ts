/**
 * One evaluation tick over the watched series: for every rule that watches a series, the figures its
 * kind reads (a view's exact low-margin counts, a view's KS and PSI against the reference, or the
 * series' settled buckets), handed to the AlertBook. Pure: the watcher (live) and replay (backfill) call
 * it with the same series and get the same transitions.
 *
 * The evaluation time of a series is its own event time (the merged watermark), never the wall clock:
 * hold, clear and cooldown times are measured in the data's time, so a catch-up after downtime goes
 * through the same phases a live run did. It never goes back: a partition moving to another instance
 * can lower the merged watermark, and a restored checkpoint can be older than the saved alert book.
 */
import { compareToReference } from '../compare/index.js';
import type { ReferenceSegment } from '../reference/index.js';
import type { MarginWindows } from '../sketch/index.js';
import type { AlertBook, AlertInput } from './book.js';
import type { AlertRule } from './config.js';
import type { ClosedBucket } from './early-warning.js';
import type { AlertTransition, SeriesRef } from './lifecycle.js';

export interface AlertSeries extends SeriesRef {
  readonly windows: MarginWindows;
  readonly reference: ReferenceSegment | undefined;
  /**
   * The oldest watermark of the partitions holding this series (mergeView's settledWatermarkMs): buckets
   * ending before it minus the lateness are final. Absent: the windows' own watermark.
   */
  readonly settledWatermarkMs?: number | null;
}

export interface NamedView {
  readonly name: string;
  readonly durationMs: number;
}

/** The figures `rule` reads on `series`; views are the config's windows, by name. */
export function alertInput(rule: AlertRule, series: AlertSeries, views: readonly NamedView[]): AlertInput {
  const { windows, reference } = series;
  if (rule.kind === 'earlyWarning') {
    const settled = series.settledWatermarkMs ?? windows.watermarkMs;
    const buckets: ClosedBucket[] = settled === null ? [] : windows.settledBuckets(settled - windows.config.latenessMs, rule.threshold);
    return { referenceShare: reference?.lowMarginShare(rule.threshold) ?? null, buckets };
  }
  const view = views.find((v) => v.name === rule.window);
  // checkAlertRules refuses a rule naming no configured window; a view past the retention reads as empty.
  const summary = view === undefined || view.durationMs > windows.config.retentionMs ? undefined : windows.view(view.durationMs).summary;
  const count = summary?.count ?? 0;
  if (rule.kind === 'shareRise') {
    return { low: summary === undefined ? 0 : summary.countBelow(rule.threshold), count, referenceShare: reference?.lowMarginShare(rule.threshold) ?? null };
  }
  if (summary === undefined || reference === undefined || count === 0) return { count, ks: null, psi: null };
  const report = compareToReference(summary.distribution, reference.confidence, reference.compareOptions());
  return { count, ks: report.ks?.statistic ?? null, psi: report.psi?.value ?? null };
}

export interface AlertFailure {
  readonly rule: string;
  readonly series: SeriesRef;
  readonly error: unknown;
}

export interface Evaluation {
  /** In series, then rule order. */
  readonly transitions: AlertTransition[];
  /** Alerts that could not be evaluated this time; every other alert still was. */
  readonly failures: AlertFailure[];
}

/** Evaluates every rule on every series it watches. One alert failing never keeps the others from their turn. */
export function evaluateAlerts(book: AlertBook, series: Iterable<AlertSeries>, views: readonly NamedView[]): Evaluation {
  const transitions: AlertTransition[] = [];
  const failures: AlertFailure[] = [];
  for (const s of series) {
    const watermark = s.windows.watermarkMs;
    if (watermark === null) continue;
    const ref = { model: s.model, version: s.version, segment: s.segment };
    for (const rule of book.rulesFor(ref)) {
      try {
        const nowMs = Math.max(watermark, book.lastTransitionMs(rule.name, ref) ?? -Infinity);
        transitions.push(...book.evaluate(rule.name, ref, alertInput(rule, s, views), nowMs));
      } catch (error) {
        failures.push({ rule: rule.name, series: ref, error });
      }
    }
  }
  return { transitions, failures };
}
