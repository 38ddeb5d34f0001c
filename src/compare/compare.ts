import type { MarginDistribution } from '../sketch/distribution.js';
import { argumentError, requireProbability } from './arguments.js';
import type { BernoulliCusum, BernoulliCusumState } from './cusum.js';
import { ksTest, type KsResult } from './ks.js';
import { psi, type PsiResult } from './psi.js';
import { DEFAULT_QUANTILE_LEVELS, quantileShifts, type QuantileShift } from './quantiles.js';
import { wasserstein1 } from './wasserstein.js';
import { wilsonInterval, type ShareInterval } from './wilson.js';

/** Exact low-margin counters of the live view at one θ (DESIGN: counters, not sketch estimates). */
export interface LowMarginCounts {
  readonly threshold: number;
  /** Live events with confidence margin < threshold. */
  readonly low: number;
  /** All live events counted at this threshold. */
  readonly count: number;
  /**
   * The reference's exact share at this θ, as its file stores it. When absent, reference.cdfBelow(θ)
   * is used: exact for an EmpiricalDistribution, an estimate for a sketch.
   */
  readonly referenceShare?: number;
}

export interface CompareOptions {
  /** PSI cut points from the reference file; default: the reference distribution's deciles. */
  readonly psiEdges?: readonly number[];
  readonly psiEpsilon?: number;
  readonly quantiles?: readonly number[];
  readonly lowMargin?: readonly LowMarginCounts[];
  /** A chart the caller feeds event by event; its state is copied into the report. */
  readonly cusum?: BernoulliCusum;
}

export interface LowMarginReport {
  readonly threshold: number;
  readonly live: ShareInterval;
  /** null when the reference is empty and no stored share was given. */
  readonly referenceShare: number | null;
  /** live share − reference share; null when either is null. */
  readonly difference: number | null;
}

export interface ComparisonReport {
  /**
   * 'empty' when either side has no observations: the distribution figures are null instead of an
   * error, because an idle window is normal (a quiet hour, a fresh deployment) and a page or a gauge
   * should say so rather than fail. Low-margin shares are still reported from their counters.
   */
  readonly state: 'ok' | 'empty';
  readonly liveCount: number;
  readonly referenceCount: number;
  readonly ks: KsResult | null;
  readonly psi: PsiResult | null;
  readonly wasserstein: number | null;
  readonly quantileShifts: readonly QuantileShift[];
  readonly lowMargin: readonly LowMarginReport[];
  readonly cusum: BernoulliCusumState | null;
}

/** Every comparison of a live view with the reference, in one plain object: watch, replay and demo call this. */
export function compareToReference(
  live: MarginDistribution,
  reference: MarginDistribution,
  options: CompareOptions = {},
): ComparisonReport {
  const lowMargin = (options.lowMargin ?? []).map((c) => lowMarginReport(c, reference));
  const shifts = quantileShifts(live, reference, options.quantiles ?? DEFAULT_QUANTILE_LEVELS);
  const cusum = options.cusum?.toState() ?? null;
  const common = { liveCount: live.count, referenceCount: reference.count, quantileShifts: shifts, lowMargin, cusum };
  if (!(live.count > 0 && reference.count > 0)) {
    return { state: 'empty', ks: null, psi: null, wasserstein: null, ...common };
  }
  return {
    state: 'ok',
    ks: ksTest(live, reference),
    psi: psi(live, reference, { edges: options.psiEdges, epsilon: options.psiEpsilon }),
    wasserstein: wasserstein1(live, reference),
    ...common,
  };
}

function lowMarginReport(counts: LowMarginCounts, reference: MarginDistribution): LowMarginReport {
  if (!Number.isFinite(counts.threshold)) {
    throw argumentError(`low-margin threshold must be finite, got ${counts.threshold}`, { threshold: counts.threshold });
  }
  const liveShare = wilsonInterval(counts.low, counts.count);
  let referenceShare: number | null;
  if (counts.referenceShare !== undefined) {
    requireProbability(counts.referenceShare, 'referenceShare');
    referenceShare = counts.referenceShare;
  } else {
    referenceShare = reference.count > 0 ? reference.cdfBelow(counts.threshold) : null;
  }
  const difference = liveShare.share === null || referenceShare === null ? null : liveShare.share - referenceShare;
  return { threshold: counts.threshold, live: liveShare, referenceShare, difference };
}
