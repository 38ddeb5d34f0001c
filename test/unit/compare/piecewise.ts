import type { MarginDistribution } from '../../../src/sketch/distribution.js';

/**
 * A hand-written MarginDistribution with linear segments and jumps, standing in for a sketch whose CDF
 * interpolates: knots are (x, cdfBelow(x), cdf(x)), and between knots the CDF runs linearly from one
 * knot's cdf to the next knot's cdfBelow.
 */
export function piecewise(count: number, knots: readonly (readonly [x: number, below: number, at: number])[]): MarginDistribution {
  const xs = knots.map((k) => k[0]);
  const cdfAt = (x: number, strict: boolean): number => {
    if (knots.length === 0) return 0;
    for (let i = 0; i < knots.length; i++) {
      const [xi, below, at] = knots[i] as readonly [number, number, number];
      if (x === xi) return strict ? below : at;
      if (x < xi) {
        if (i === 0) return 0;
        const [x0, , at0] = knots[i - 1] as readonly [number, number, number];
        return at0 + ((below - at0) * (x - x0)) / (xi - x0);
      }
    }
    return 1;
  };
  return {
    count,
    cdf: (x) => cdfAt(x, false),
    cdfBelow: (x) => cdfAt(x, true),
    breakpoints: () => xs,
    quantile: (q) => {
      // Smallest x with cdf(x) >= q: inside the first segment or at the first knot that reaches q.
      for (let i = 0; i < knots.length; i++) {
        const [xi, below, at] = knots[i] as readonly [number, number, number];
        if (below >= q && i > 0) {
          const [x0, , at0] = knots[i - 1] as readonly [number, number, number];
          return below === at0 ? x0 : x0 + ((q - at0) / (below - at0)) * (xi - x0);
        }
        if (at >= q) return xi;
      }
      return xs[xs.length - 1] ?? Number.NaN;
    },
  };
}

/** Uniform on [lo, hi]: the simplest continuous, linear-between-breakpoints distribution. */
export function uniform(lo: number, hi: number, count = 1000): MarginDistribution {
  return piecewise(count, [
    [lo, 0, 0],
    [hi, 1, 1],
  ]);
}

/** All mass at one point. */
export function pointMass(x: number, count = 1000): MarginDistribution {
  return piecewise(count, [[x, 0, 1]]);
}
