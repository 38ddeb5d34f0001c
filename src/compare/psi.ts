import type { MarginDistribution } from '../sketch/distribution.js';
import { argumentError, requireNonEmpty } from './arguments.js';

/**
 * Added to every bin's proportion before the logs (then renormalised), so an empty bin costs a large
 * but finite amount instead of infinity, and a bin going from empty to one event does not jump.
 * 1e-4 is small beside the 10 % a reference decile holds, so filled bins are barely moved.
 */
export const DEFAULT_PSI_EPSILON = 1e-4;

/**
 * Rule-of-thumb bands: below 0.1 "no material shift", 0.1 to 0.25 "moderate", above 0.25 "major".
 * Common practice in credit scoring with no derivation or primary source behind them; treat them as
 * conventions to tune, not as significance levels.
 */
export const PSI_BANDS = Object.freeze({ moderate: 0.1, major: 0.25 });

export type PsiBand = 'stable' | 'moderate' | 'major';

export interface PsiBin {
  /** Inclusive lower edge; −Infinity for the first bin. */
  readonly lower: number;
  /** Exclusive upper edge; +Infinity for the last bin. */
  readonly upper: number;
  /** Raw proportions, before ε. */
  readonly live: number;
  readonly reference: number;
  /** This bin's term (p − q)·ln(p/q) after ε; the PSI is their sum. */
  readonly contribution: number;
}

export interface PsiResult {
  readonly value: number;
  readonly band: PsiBand;
  readonly epsilon: number;
  readonly bins: readonly PsiBin[];
}

export interface PsiOptions {
  /**
   * Interior cut points, ascending, e.g. the reference's 10 %…90 % quantiles as its file stores them.
   * Repeated values (an atom spanning several deciles) are merged. Defaults to referenceDecileEdges.
   */
  readonly edges?: readonly number[];
  readonly epsilon?: number;
}

/** The reference's 10 %, 20 %, …, 90 % quantiles: the cut points of ten equal-mass bins. */
export function referenceDecileEdges(reference: MarginDistribution): number[] {
  requireNonEmpty(reference, 'reference');
  return [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9].map((q) => reference.quantile(q));
}

/**
 * Population stability index Σ (p − q)·ln(p/q) of the live proportions p against the reference
 * proportions q over bins (−∞, c₁), [c₁, c₂), …, [c_k, ∞).
 *
 * Half-open bins on the right make atoms land in one bin for both sides: mass exactly at c_i belongs to
 * [c_i, c_{i+1}), and every bin's mass is a difference of cdfBelow values, exact for samples and sketches
 * alike. If 40 % of the reference sits at 1.0, the 70 %, 80 % and 90 % edges all equal 1.0, merge into
 * one cut, and the atom is one bin [1.0, ∞) holding 40 % on the reference side. The outer bins are open
 * so that live mass outside the reference's range still counts.
 */
export function psi(live: MarginDistribution, reference: MarginDistribution, options: PsiOptions = {}): PsiResult {
  requireNonEmpty(live, 'live');
  requireNonEmpty(reference, 'reference');
  const epsilon = options.epsilon ?? DEFAULT_PSI_EPSILON;
  if (!(epsilon >= 0 && Number.isFinite(epsilon))) {
    throw argumentError(`PSI epsilon must be finite and >= 0, got ${epsilon}`, { epsilon });
  }
  const cuts = mergeEdges(options.edges ?? referenceDecileEdges(reference));
  const bounds = [Number.NEGATIVE_INFINITY, ...cuts, Number.POSITIVE_INFINITY];
  const massBelow = (d: MarginDistribution, x: number): number =>
    x === Number.NEGATIVE_INFINITY ? 0 : x === Number.POSITIVE_INFINITY ? 1 : d.cdfBelow(x);

  const binCount = bounds.length - 1;
  const norm = 1 + binCount * epsilon;
  const bins: PsiBin[] = [];
  let value = 0;
  for (let i = 0; i < binCount; i++) {
    const lower = bounds[i] as number;
    const upper = bounds[i + 1] as number;
    // max(0, ·): a sketch's cdfBelow can dip by rounding; a negative share would make the log NaN.
    const p = Math.max(0, massBelow(live, upper) - massBelow(live, lower));
    const q = Math.max(0, massBelow(reference, upper) - massBelow(reference, lower));
    const ps = (p + epsilon) / norm;
    const qs = (q + epsilon) / norm;
    const contribution = ps === qs ? 0 : (ps - qs) * Math.log(ps / qs);
    value += contribution;
    bins.push({ lower, upper, live: p, reference: q, contribution });
  }
  return { value, band: psiBand(value), epsilon, bins };
}

export function psiBand(value: number): PsiBand {
  if (value >= PSI_BANDS.major) return 'major';
  if (value >= PSI_BANDS.moderate) return 'moderate';
  return 'stable';
}

function mergeEdges(edges: readonly number[]): number[] {
  const out: number[] = [];
  for (const e of edges) {
    if (!Number.isFinite(e)) throw argumentError(`PSI edges must be finite, got ${e}`, { edges });
    const last = out[out.length - 1];
    if (last !== undefined && e < last) throw argumentError('PSI edges must be ascending', { edges });
    if (last === undefined || e > last) out.push(e);
  }
  return out;
}
