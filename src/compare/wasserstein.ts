import type { MarginDistribution } from '../sketch/distribution.js';
import { requireNonEmpty } from './arguments.js';
import { mergedBreakpoints } from './breakpoints.js';

/**
 * Wasserstein-1 distance ∫|F_a − F_b| dx, in margin units (how far, on average, mass has to move).
 * Exact for piecewise-linear CDFs: on a segment between merged breakpoints the gap g runs linearly from
 * g₀ (just right of the left end) to g₁ (just left of the right end), so the integral of |g| is a
 * trapezoid, or two triangles when g changes sign inside the segment. Jumps at atoms have no width
 * and add nothing; outside the breakpoints both CDFs agree (0 or 1).
 */
export function wasserstein1(a: MarginDistribution, b: MarginDistribution): number {
  requireNonEmpty(a, 'first');
  requireNonEmpty(b, 'second');
  const xs = mergedBreakpoints(a, b);
  let total = 0;
  for (let i = 0; i + 1 < xs.length; i++) {
    const left = xs[i] as number;
    const right = xs[i + 1] as number;
    const g0 = a.cdf(left) - b.cdf(left);
    const g1 = a.cdfBelow(right) - b.cdfBelow(right);
    total += (right - left) * segmentMeanAbs(g0, g1);
  }
  return total;
}

/** Mean of |g| over a segment on which g is linear from g0 to g1. */
function segmentMeanAbs(g0: number, g1: number): number {
  if ((g0 >= 0 && g1 >= 0) || (g0 <= 0 && g1 <= 0)) return Math.abs(g0 + g1) / 2;
  // Zero crossing at fraction |g0| / (|g0| + |g1|): two triangles.
  return (g0 * g0 + g1 * g1) / (2 * (Math.abs(g0) + Math.abs(g1)));
}
