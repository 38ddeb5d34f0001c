import { HeadroomError } from '../errors.js';
import type { MarginDistribution } from './distribution.js';

/**
 * The exact empirical distribution of a sample: a step-function CDF with one jump per distinct value.
 * Used for tests, small references and as the yardstick a sketch is measured against. Ties are the
 * normal case for margins (many are exactly 0 or 1), so every value is stored once with its count and
 * `cdf`/`cdfBelow` differ by exactly that count at a tie.
 */
export class EmpiricalDistribution implements MarginDistribution {
  readonly count: number;
  /** Distinct values, ascending. */
  readonly #values: readonly number[];
  /** #atOrBelow[i] = number of observations <= #values[i]; integers, so cdf is one exact division. */
  readonly #atOrBelow: Float64Array;

  private constructor(values: readonly number[], atOrBelow: Float64Array, count: number) {
    this.#values = values;
    this.#atOrBelow = atOrBelow;
    this.count = count;
  }

  static fromSamples(samples: Iterable<number>): EmpiricalDistribution {
    const sorted = Float64Array.from(samples);
    for (const x of sorted) {
      if (!Number.isFinite(x)) {
        throw new HeadroomError('HR_ERR_SKETCH_ARGUMENT', `samples must be finite numbers, got ${x}`);
      }
    }
    sorted.sort();
    const values: number[] = [];
    const counts: number[] = [];
    for (let i = 0; i < sorted.length; i++) {
      const x = sorted[i] as number;
      // -0 and +0 are one margin; Float64Array.sort puts -0 first, so compare with === rather than Object.is.
      if (values.length > 0 && values[values.length - 1] === x) {
        counts[counts.length - 1] = i + 1;
      } else {
        values.push(x === 0 ? 0 : x);
        counts.push(i + 1);
      }
    }
    return new EmpiricalDistribution(Object.freeze(values), Float64Array.from(counts), sorted.length);
  }

  cdf(x: number): number {
    const i = this.#lastIndexAtOrBelow(x);
    return i < 0 ? 0 : (this.#atOrBelow[i] as number) / this.count;
  }

  cdfBelow(x: number): number {
    const i = this.#lastIndexBelow(x);
    return i < 0 ? 0 : (this.#atOrBelow[i] as number) / this.count;
  }

  breakpoints(): readonly number[] {
    return this.#values;
  }

  /**
   * Smallest x with cdf(x) >= q (NumPy's `inverted_cdf`). q = 0 is met by every x; the smallest sample is
   * returned as the useful answer (the infimum of the support). The comparison is made on cdf's own
   * quotient, not on q·count, so that quantile(cdf(x)) === x holds exactly for every sample value.
   */
  quantile(q: number): number {
    if (!(q >= 0 && q <= 1)) {
      throw new HeadroomError('HR_ERR_SKETCH_ARGUMENT', `quantile level must be in [0, 1], got ${q}`);
    }
    if (this.count === 0) return Number.NaN;
    let lo = 0;
    let hi = this.#values.length - 1;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if ((this.#atOrBelow[mid] as number) / this.count >= q) hi = mid;
      else lo = mid + 1;
    }
    return this.#values[lo] as number;
  }

  #lastIndexAtOrBelow(x: number): number {
    let lo = 0;
    let hi = this.#values.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if ((this.#values[mid] as number) <= x) lo = mid + 1;
      else hi = mid;
    }
    return lo - 1;
  }

  #lastIndexBelow(x: number): number {
    let lo = 0;
    let hi = this.#values.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if ((this.#values[mid] as number) < x) lo = mid + 1;
      else hi = mid;
    }
    return lo - 1;
  }
}
