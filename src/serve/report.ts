/**
 * One series' views faced with its reference: the figures /metrics exports and the API shows, computed by
 * one function so the two can never disagree. Pure: no clock, no I/O.
 */
import { compareToReference, wilsonInterval } from '../compare/index.js';
import { labelFigures } from '../labels/index.js';
import type { LabelFigures } from '../labels/index.js';
import type { KsResult, LowMarginReport, PsiResult, QuantileShift } from '../compare/index.js';
import { LabelSummary } from '../labels/index.js';
import type { MarginSummary } from '../sketch/index.js';
import type { SeriesSnapshot, ViewSpec } from './model.js';

export interface Drift {
  readonly ks: KsResult;
  readonly psi: PsiResult;
  readonly wasserstein: number;
}

export interface ViewReport {
  readonly window: string;
  readonly durationMs: number;
  readonly startMs: number | null;
  readonly endMs: number | null;
  readonly summary: MarginSummary;
  /** Exact counters with Wilson intervals; the reference share is null when there is no reference. */
  readonly lowMargin: readonly LowMarginReport[];
  readonly quantiles: readonly QuantileShift[];
  /** null when there is no reference or either side is empty: no figure rather than a made-up one. */
  readonly drift: Drift | null;
  /**
   * Label figures of the predictions in the view (src/labels/figures.ts); null when the series has no
   * label yet and its events do not state probabilities (nothing to show, not even the label-free estimate).
   */
  readonly labels: LabelFigures | null;
}

function labelsOf(snapshot: SeriesSnapshot, durationMs: number, confidence: MarginSummary): LabelFigures | null {
  const probabilistic = snapshot.probabilistic === true;
  if (snapshot.labels === undefined && !probabilistic) return null;
  const w = snapshot.windows.watermarkMs;
  const labels = snapshot.labels?.view(durationMs, w).summary ?? new LabelSummary(snapshot.windows.config.compression);
  return labelFigures({ labels, confidence, probabilistic, reference: snapshot.reference?.labels });
}

/**
 * Views longer than a series' retention are left out for that series: MarginWindows refuses them, and one
 * series configured with a shorter history must not break the scrape of all the others.
 */
export function viewReports(snapshot: SeriesSnapshot, views: readonly ViewSpec[], quantiles: readonly number[]): ViewReport[] {
  const { windows, reference } = snapshot;
  const out: ViewReport[] = [];
  for (const spec of views) {
    if (spec.durationMs > windows.config.retentionMs) continue;
    const view = windows.view(spec.durationMs);
    const live = view.summary;
    const counts = live.thresholds.map((threshold) => ({ threshold, low: live.countBelow(threshold), count: live.count }));
    const base = { window: spec.name, durationMs: spec.durationMs, startMs: view.startMs, endMs: view.endMs, summary: live };
    if (reference === undefined) {
      out.push({
        ...base,
        lowMargin: counts.map((c) => ({ threshold: c.threshold, live: wilsonInterval(c.low, c.count), referenceShare: null, difference: null })),
        quantiles: quantiles.map((q) => ({ q, live: live.count > 0 ? live.distribution.quantile(q) : null, reference: null, shift: null })),
        drift: null,
        labels: labelsOf(snapshot, spec.durationMs, live),
      });
      continue;
    }
    const report = compareToReference(live.distribution, reference.confidence, { ...reference.compareOptions(counts), quantiles });
    const drift =
      report.state === 'ok' && report.ks !== null && report.psi !== null && report.wasserstein !== null
        ? { ks: report.ks, psi: report.psi, wasserstein: report.wasserstein }
        : null;
    out.push({ ...base, lowMargin: report.lowMargin, quantiles: report.quantileShifts, drift, labels: labelsOf(snapshot, spec.durationMs, live) });
  }
  return out;
}
