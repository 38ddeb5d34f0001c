import type { MarginDistribution } from '../sketch/distribution.js';

/**
 * Sorted union of both distributions' breakpoints. Between two consecutive entries both CDFs are linear
 * (the MarginDistribution contract), which is what lets KS and Wasserstein be exact rather than sampled.
 */
export function mergedBreakpoints(a: MarginDistribution, b: MarginDistribution): number[] {
  const xs = a.breakpoints();
  const ys = b.breakpoints();
  const out: number[] = [];
  let i = 0;
  let j = 0;
  while (i < xs.length || j < ys.length) {
    const x = xs[i] ?? Number.POSITIVE_INFINITY;
    const y = ys[j] ?? Number.POSITIVE_INFINITY;
    const next = x <= y ? x : y;
    if (x === next) i++;
    if (y === next) j++;
    if (out.length === 0 || out[out.length - 1] !== next) out.push(next);
  }
  return out;
}
