/**
 * The CDF a set of centroids stands for, in the shape MarginDistribution promises: a table of knots, each
 * with the weight strictly below it and at-or-below it, linear in between.
 *
 * - A centroid with lo === hi holds one repeated value: the CDF jumps by its weight there (an atom).
 * - Any other centroid is taken to hold half its weight below its mean and half above, the classic t-digest
 *   reading, and the CDF runs linearly from one centroid's mean to the next.
 * - Where a centroid's range [lo, hi] does not reach its neighbour (a gap in the data, or the data's two
 *   ends), the CDF is pinned at lo and hi instead of being stretched across the gap: it is exact there and
 *   flat over the gap, which matters when a producer sends a few clusters or a few distinct values.
 *
 * Ranges are not used inside a centroid: after many merge passes each centroid's range reaches into its
 * neighbours' (a point between two full centroids joins one of them), so the mean says more than the range
 * about where the mass is.
 */
import type { Centroids } from './centroids.js';

export interface Knots {
  /** Ascending, distinct. */
  readonly x: Float64Array;
  /** Weight strictly below x[k]. */
  readonly below: Float64Array;
  /** Weight at or below x[k]. */
  readonly atOrBelow: Float64Array;
  readonly total: number;
}

export function buildKnots(c: Centroids, total: number): Knots {
  const xs: number[] = [];
  const below: number[] = [];
  const atOrBelow: number[] = [];
  const push = (x: number, b: number, a: number): void => {
    const last = xs.length - 1;
    if (last >= 0 && x <= (xs[last] as number)) {
      // Same point twice (equal means, or a mean that rounds onto an edge): one knot spanning both.
      atOrBelow[last] = Math.max(atOrBelow[last] as number, a);
      return;
    }
    // Rounding in the running sums must not make the table step backwards.
    const floor = last >= 0 ? (atOrBelow[last] as number) : 0;
    xs.push(x);
    below.push(Math.min(Math.max(b, floor), total));
    atOrBelow.push(Math.min(Math.max(a, b, floor), total));
  };

  const n = c.mean.length;
  // The nearest value the neighbouring centroid may hold: its value if single-valued, else its range edge.
  const rightEdgeOf = (i: number): number => (i < 0 ? -Infinity : (c.hi[i] as number));
  const leftEdgeOf = (i: number): number => (i >= n ? Infinity : (c.lo[i] as number));
  let before = 0;
  for (let i = 0; i < n; i += 1) {
    const w = c.weight[i] as number;
    const lo = c.lo[i] as number;
    const hi = c.hi[i] as number;
    if (lo === hi) {
      push(lo, before, before + w);
    } else {
      if (rightEdgeOf(i - 1) < lo) push(lo, before, before);
      push(c.mean[i] as number, before + w / 2, before + w / 2);
      if (leftEdgeOf(i + 1) > hi) push(hi, before + w, before + w);
    }
    before += w;
  }
  if (xs.length > 0) atOrBelow[xs.length - 1] = total;
  return { x: Float64Array.from(xs), below: Float64Array.from(below), atOrBelow: Float64Array.from(atOrBelow), total };
}

/** Largest k with x[k] <= value, or -1. */
function floorIndex(knots: Knots, value: number): number {
  let lo = 0;
  let hi = knots.x.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((knots.x[mid] as number) <= value) lo = mid + 1;
    else hi = mid;
  }
  return lo - 1;
}

/** Weight at or below `value` (inclusive) or strictly below it. */
export function weightUpTo(knots: Knots, value: number, inclusive: boolean): number {
  const k = floorIndex(knots, value);
  if (k < 0) return 0;
  const xk = knots.x[k] as number;
  if (xk === value) return inclusive ? (knots.atOrBelow[k] as number) : (knots.below[k] as number);
  if (k === knots.x.length - 1) return knots.total;
  const from = knots.atOrBelow[k] as number;
  const to = knots.below[k + 1] as number;
  return from + ((to - from) * (value - xk)) / ((knots.x[k + 1] as number) - xk);
}

/** Smallest x whose at-or-below weight reaches `target`. */
export function valueAtWeight(knots: Knots, target: number): number {
  let lo = 0;
  let hi = knots.x.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((knots.atOrBelow[mid] as number) >= target) hi = mid;
    else lo = mid + 1;
  }
  const k = lo;
  const xk = knots.x[k] as number;
  if (k === 0 || (knots.below[k] as number) < target) return xk;
  // The weight crosses the target on the open segment before knot k, where it rises linearly.
  const from = knots.atOrBelow[k - 1] as number;
  const to = knots.below[k] as number;
  const x0 = knots.x[k - 1] as number;
  const x = x0 + ((target - from) / (to - from)) * (xk - x0);
  return Math.min(Math.max(x, x0), xk);
}
