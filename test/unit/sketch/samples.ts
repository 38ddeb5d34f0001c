/**
 * Seeded test samples shared with test/reference/gen_sketch.py, which makes the same numbers with NumPy
 * and records NumPy's exact quantiles and SciPy's KS statistics for them. Only integer operations and
 * comparisons (plus one multiplication, which IEEE 754 rounds the same in both languages) produce the
 * values, so the two languages agree bit for bit and the fixture need not carry the samples.
 *
 * Generator: counter-based. Word c of stream `key` is fmix32(c * 0x9E3779B9 + key) (MurmurHash3's
 * finaliser over a Weyl sequence, all mod 2^32); uniform j is ((word(2j) >>> 5) * 2^26 + (word(2j+1) >>> 6)) / 2^53,
 * a double in [0, 1) with 53 random bits.
 */

import type { MarginDistribution } from '../../../src/sketch/distribution.js';

const GOLDEN = 0x9e3779b9;

function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

export function word(key: number, counter: number): number {
  return fmix32((Math.imul(counter, GOLDEN) + key) >>> 0);
}

export function uniform(key: number, j: number): number {
  const a = word(key, 2 * j) >>> 5;
  const b = word(key, 2 * j + 1) >>> 6;
  return (a * 67108864 + b) / 9007199254740992;
}

export type Shape = 'uniform' | 'beta82' | 'discrete';
export const SHAPES: readonly Shape[] = ['uniform', 'beta82', 'discrete'];

/** Atoms of the discrete mix and the share of draws each gets (the rest is continuous v*v on [0, 1)). */
export const DISCRETE_ATOMS: readonly (readonly [value: number, upTo: number])[] = [
  [0, 0.3],
  [1, 0.55],
  [0.2, 0.6],
  [0.5, 0.65],
  [0.8, 0.7],
  [0.95, 0.71],
];

/**
 * uniform: U[0,1). beta82: Beta(8, 2) as the second largest of 9 uniforms (an order statistic, so no
 * transcendental functions). discrete: atoms at 0 (30%), 1 (25%), 0.2, 0.5, 0.8 (5% each), 0.95 (1%), and
 * 29% continuous v*v bunched near 0.
 */
export function makeSamples(shape: Shape, key: number, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i += 1) {
    if (shape === 'uniform') {
      out[i] = uniform(key, i);
    } else if (shape === 'beta82') {
      let top = -1;
      let second = -1;
      for (let t = 0; t < 9; t += 1) {
        const u = uniform(key, 9 * i + t);
        if (u > top) {
          second = top;
          top = u;
        } else if (u > second) {
          second = u;
        }
      }
      out[i] = second;
    } else {
      const u = uniform(key, 2 * i);
      const v = uniform(key, 2 * i + 1);
      const atom = DISCRETE_ATOMS.find(([, upTo]) => u < upTo);
      out[i] = atom === undefined ? v * v : atom[0];
    }
  }
  return out;
}

/** Exact empirical distribution of a sample, for rank errors and exact KS. */
export class ExactSample {
  readonly sorted: Float64Array;

  constructor(values: Float64Array) {
    this.sorted = Float64Array.from(values).sort();
  }

  get count(): number {
    return this.sorted.length;
  }

  /** Number of values < x. */
  countBelow(x: number): number {
    let lo = 0;
    let hi = this.sorted.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if ((this.sorted[mid] as number) < x) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  }

  /** Number of values <= x. */
  countAtOrBelow(x: number): number {
    let lo = 0;
    let hi = this.sorted.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if ((this.sorted[mid] as number) <= x) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  }

  /** numpy.quantile(..., method='inverted_cdf'): the smallest sample x with F(x) >= q. */
  invertedCdf(q: number): number {
    const k = Math.max(1, Math.ceil(q * this.sorted.length));
    return this.sorted[k - 1] as number;
  }

  /**
   * Rank error of a claimed q-quantile x: the distance from q to the rank interval [F(x-), F(x)], which
   * is zero whenever x is a correct q-quantile, including anywhere on an atom that q falls into.
   */
  rankError(x: number, q: number): number {
    const below = this.countBelow(x) / this.count;
    const atOrBelow = this.countAtOrBelow(x) / this.count;
    if (q < below) return below - q;
    if (q > atOrBelow) return q - atOrBelow;
    return 0;
  }
}

/** Two-sample KS D between exact samples: sup |F1 - F2|, evaluated just after every sample value. */
export function exactKs(a: ExactSample, b: ExactSample): number {
  const xa = a.sorted;
  const xb = b.sorted;
  let i = 0;
  let j = 0;
  let d = 0;
  while (i < xa.length || j < xb.length) {
    const x = Math.min(i < xa.length ? (xa[i] as number) : Infinity, j < xb.length ? (xb[j] as number) : Infinity);
    while (i < xa.length && xa[i] === x) i += 1;
    while (j < xb.length && xb[j] === x) j += 1;
    d = Math.max(d, Math.abs(i / xa.length - j / xb.length));
  }
  return d;
}

/**
 * KS D between two MarginDistributions. Both CDFs are linear between their breakpoints, so the largest
 * gap sits at a breakpoint of one of them, either at it (cdf) or just before it (cdfBelow).
 */
export function distributionKs(a: MarginDistribution, b: MarginDistribution): number {
  let d = 0;
  for (const x of new Set([...a.breakpoints(), ...b.breakpoints()])) {
    d = Math.max(d, Math.abs(a.cdf(x) - b.cdf(x)), Math.abs(a.cdfBelow(x) - b.cdfBelow(x)));
  }
  return d;
}
