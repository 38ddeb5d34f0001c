import type { MarginDistribution } from '../sketch/distribution.js';
import { requireNonEmpty } from './arguments.js';
import { mergedBreakpoints } from './breakpoints.js';
import { kolmogorovSf } from './kolmogorov.js';

export interface KsStatistic {
  /** D = sup |F_a − F_b|. */
  readonly statistic: number;
  /**
   * The smallest margin where the gap D is reached, either at that margin or as it is approached from
   * below (a sketch's CDF can peak in a left limit). For two step CDFs it is always a sample value, as
   * in SciPy's `statistic_location`.
   */
  readonly location: number;
  /**
   * +1 when F_a − F_b reaches D (a has more mass below `location`: with a = live and b = reference,
   * live margins are lower), −1 when F_b − F_a does and is strictly larger. SciPy's `statistic_sign`.
   */
  readonly sign: 1 | -1;
}

export interface KsResult extends KsStatistic {
  /** n·m/(n+m), unrounded. */
  readonly effectiveN: number;
  /**
   * Asymptotic two-sided p-value as `scipy.stats.ks_2samp(a, b, method='asymp')` computes it:
   * kstwo.sf(D, round(n·m/(n+m))), rounding half to even like NumPy. It assumes two independent
   * samples from continuous distributions; with atoms it is conservative, with a sketch it is only as
   * good as the sketch's D. null when the effective n rounds to 0 (one observation on each side), where
   * SciPy returns NaN.
   */
  readonly pValue: number | null;
}

/**
 * D between two piecewise-linear CDFs, exactly: on each segment between merged breakpoints both CDFs
 * are linear, so the gap is extreme at a segment's ends; each breakpoint is therefore checked twice, at
 * its left limit (cdfBelow) and at its value (cdf). Left limit first, and only a strictly larger gap
 * moves the location, so the location is the smallest margin where D is reached.
 */
export function ksStatistic(a: MarginDistribution, b: MarginDistribution): KsStatistic {
  requireNonEmpty(a, 'first');
  requireNonEmpty(b, 'second');
  const xs = mergedBreakpoints(a, b);
  let above = 0; // max of F_a − F_b
  let aboveAt = xs[0] as number;
  let below = 0; // max of F_b − F_a
  let belowAt = xs[0] as number;
  for (const x of xs) {
    for (const gap of [a.cdfBelow(x) - b.cdfBelow(x), a.cdf(x) - b.cdf(x)]) {
      if (gap > above) {
        above = gap;
        aboveAt = x;
      } else if (-gap > below) {
        below = -gap;
        belowAt = x;
      }
    }
  }
  // SciPy's tie rule: the positive side wins unless the negative one is strictly larger.
  return below > above ? { statistic: below, location: belowAt, sign: -1 } : { statistic: above, location: aboveAt, sign: 1 };
}

export function ksTest(a: MarginDistribution, b: MarginDistribution): KsResult {
  const found = ksStatistic(a, b);
  const effectiveN = (a.count * b.count) / (a.count + b.count);
  // Half to even as NumPy rounds: 5 against 5 observations gives en = 2.5 and kstwo at n = 2, not 3.
  const n = roundHalfToEven(effectiveN);
  return { ...found, effectiveN, pValue: n >= 1 ? kolmogorovSf(n, found.statistic) : null };
}

function roundHalfToEven(x: number): number {
  const floor = Math.floor(x);
  const fraction = x - floor;
  if (fraction > 0.5) return floor + 1;
  if (fraction < 0.5) return floor;
  return floor % 2 === 0 ? floor : floor + 1;
}
