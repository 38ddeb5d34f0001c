/**
 * The label figures of one series' view, faced with the reference's labelled figures: what /metrics,
 * the API and replay reports show. Pure.
 *
 * The label-free error estimate. For a binary score stating a probability p of the positive class, a
 * *calibrated* model is wrong with probability min(p, 1 − p), so E[min(p, 1 − p)] over all predictions
 * (labelled or not) estimates the error rate before any label arrives. min(p, 1 − p) = (1 − |2p − 1|)/2
 * = (1 − confidence margin)/2, so the estimate is (1 − mean confidence margin)/2, exact from the view's
 * counters. It holds only for a calibrated model: the reliability bins beside it say whether it is.
 */
import { wilsonInterval } from '../compare/index.js';
import type { ShareInterval } from '../compare/index.js';
import type { Score } from '../events/index.js';
import type { CalibrationBin, ReferenceLabels } from '../reference/index.js';
import type { MarginSummary } from '../sketch/index.js';
import { MARGIN_LOSS_GRID } from './label-summary.js';
import type { LabelSummary } from './label-summary.js';

export const LABEL_FREE_NOTE = 'E[min(p, 1 - p)] over all predictions; it estimates the error rate only for a calibrated model';

/** Signed-margin quantile levels shown beside the margin-loss curve (from the digest). */
export const SIGNED_QUANTILE_LEVELS: readonly number[] = Object.freeze([0.05, 0.25, 0.5, 0.75, 0.95]);

export interface LabelFigures {
  /** Labelled predictions in the view. */
  readonly n: number;
  /** Of those, signed margin <= 0 (exact), with the Wilson 95 % interval of the share. */
  readonly errorRate: ShareInterval;
  readonly referenceErrorRate: number | null;
  /** P(signed margin <= θ): live exact counts; reference from its signed digest (θ = 0: its exact error share). */
  readonly marginLoss: readonly { readonly theta: number; readonly live: number | null; readonly reference: number | null }[];
  readonly signed: { readonly mean: number | null; readonly quantiles: readonly { readonly q: number; readonly live: number | null }[] };
  /** null when no labelled prediction in the view (nor in the reference) stated a probability. */
  readonly calibration: {
    readonly live: readonly CalibrationBin[] | null;
    readonly ece: number | null;
    readonly reference: readonly CalibrationBin[] | null;
    readonly referenceEce: number | null;
  } | null;
  /** null unless every event of the series stated a probability (probability or logit scores). */
  readonly labelFree: { readonly estimate: number; readonly observed: number | null; readonly note: string } | null;
}

/** The probability of the positive class a binary score states; undefined for votes, classes and margins. */
export function positiveProbability(score: Score): number | undefined {
  if (score.kind === 'probability') return score.p;
  if (score.kind === 'logit') return 1 / (1 + Math.exp(-score.z));
  return undefined;
}

/** Σ (n_b / N)·|mean predicted_b − observed rate_b| over the non-empty bins; null when all are empty. */
export function expectedCalibrationError(bins: readonly CalibrationBin[]): number | null {
  let n = 0;
  let sum = 0;
  for (const b of bins) {
    if (b.count === 0 || b.meanPredicted === null || b.observedRate === null) continue;
    n += b.count;
    sum += b.count * Math.abs(b.meanPredicted - b.observedRate);
  }
  return n === 0 ? null : sum / n;
}

export interface LabelFigureInputs {
  readonly labels: LabelSummary;
  /** The same view's confidence margins (for the label-free estimate). */
  readonly confidence: MarginSummary;
  /** True when every event of the series stated a probability. */
  readonly probabilistic: boolean;
  readonly reference: ReferenceLabels | null | undefined;
}

export function labelFigures({ labels, confidence, probabilistic, reference }: LabelFigureInputs): LabelFigures {
  const n = labels.count;
  const errorRate = wilsonInterval(labels.wrong, n);
  const counts = labels.lossCounts();
  const ref = reference ?? null;
  const marginLoss = MARGIN_LOSS_GRID.map((theta, i) => ({
    theta,
    live: n === 0 ? null : (counts[i] as number) / n,
    reference: ref === null || ref.n === 0 ? null : theta === 0 ? ref.errors.share : ref.signed.cdf(theta),
  }));
  const liveBins = labels.calibration?.bins() ?? null;
  const refBins = ref?.calibration ?? null;
  const calibration =
    liveBins === null && refBins === null
      ? null
      : { live: liveBins, ece: liveBins === null ? null : expectedCalibrationError(liveBins), reference: refBins, referenceEce: refBins === null ? null : expectedCalibrationError(refBins) };
  const labelFree =
    probabilistic && confidence.count > 0 ? { estimate: (1 - confidence.mean) / 2, observed: errorRate.share, note: LABEL_FREE_NOTE } : null;
  return {
    n,
    errorRate,
    referenceErrorRate: ref === null || ref.n === 0 ? null : ref.errors.share,
    marginLoss,
    signed: {
      mean: n === 0 ? null : labels.signed.mean,
      quantiles: SIGNED_QUANTILE_LEVELS.map((q) => ({ q, live: n === 0 ? null : labels.signed.distribution.quantile(q) })),
    },
    calibration,
    labelFree,
  };
}
