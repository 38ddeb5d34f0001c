/**
 * Exact figures computed from every reference margin rather than from a sketch: decile edges and
 * calibration bins. A reference is built once and read for months, so it may afford the exact answer.
 */
import { CALIBRATION_BINS } from './format.js';
import type { CalibrationBin } from './format.js';

/** An append-only list of doubles that does not box each value as a JS array of numbers would. */
export class Float64List {
  private data = new Float64Array(1024);
  private size = 0;

  get length(): number {
    return this.size;
  }

  push(x: number): void {
    if (this.size === this.data.length) {
      const grown = new Float64Array(this.data.length * 2);
      grown.set(this.data);
      this.data = grown;
    }
    this.data[this.size++] = x;
  }

  append(other: Float64List): void {
    for (let i = 0; i < other.size; i++) this.push(other.data[i] as number);
  }

  /** A view of the values in insertion order; valid until the next push. */
  values(): Float64Array {
    return this.data.subarray(0, this.size);
  }
}

/**
 * Inverted-CDF quantiles (NumPy's method='inverted_cdf'): the smallest sample x with #(≤ x)/n ≥ q.
 * The comparison is made on the quotient itself, as src/sketch's EmpiricalDistribution does, so these
 * edges are exactly that distribution's quantile(q). An atom spanning several deciles repeats an edge;
 * src/compare's psi merges repeats, which is what keeps the atom in one bin.
 */
export function invertedCdfQuantiles(sorted: Float64Array, levels: readonly number[]): number[] {
  const n = sorted.length;
  return levels.map((q) => {
    // Start near the answer, then settle the rounding of q·n by the quotient test.
    let k = Math.min(n - 1, Math.max(0, Math.ceil(q * n) - 1));
    while (k > 0 && k / n >= q) k--;
    while (k < n - 1 && (k + 1) / n < q) k++;
    return sorted[k] as number;
  });
}

/**
 * Calibration of the predicted probability of the positive class against the observed outcome. Bin i
 * holds p in (i/10, (i+1)/10], the first bin also p = 0: scikit-learn's calibration_curve(n_bins=10,
 * strategy='uniform') bins the same way, so a fixture can check these figures directly. (Its edges come
 * from numpy.linspace, i·0.1, which differs from i/10 only at 0.3, 0.6 and 0.7, by one ulp.)
 */
export class CalibrationCounts {
  private readonly counts = new Float64Array(CALIBRATION_BINS);
  private readonly positives = new Float64Array(CALIBRATION_BINS);
  private readonly sums = new Float64Array(CALIBRATION_BINS);
  private total = 0;

  get count(): number {
    return this.total;
  }

  /** Per bin: events, positives and the sum of p; a checkpoint carries these (src/labels). */
  toState(): { counts: number[]; positives: number[]; sums: number[] } {
    return { counts: [...this.counts], positives: [...this.positives], sums: [...this.sums] };
  }

  /** The caller has checked the lengths (CALIBRATION_BINS each) and that positives <= counts. */
  static fromState(state: { readonly counts: readonly number[]; readonly positives: readonly number[]; readonly sums: readonly number[] }): CalibrationCounts {
    const out = new CalibrationCounts();
    out.counts.set(state.counts);
    out.positives.set(state.positives);
    out.sums.set(state.sums);
    out.total = state.counts.reduce((a, b) => a + b, 0);
    return out;
  }

  add(p: number, positive: boolean): void {
    let bin = 0;
    while (bin < CALIBRATION_BINS - 1 && edge(bin + 1) < p) bin++;
    this.counts[bin] = (this.counts[bin] as number) + 1;
    this.sums[bin] = (this.sums[bin] as number) + p;
    if (positive) this.positives[bin] = (this.positives[bin] as number) + 1;
    this.total++;
  }

  merge(other: CalibrationCounts): void {
    for (let i = 0; i < CALIBRATION_BINS; i++) {
      this.counts[i] = (this.counts[i] as number) + (other.counts[i] as number);
      this.sums[i] = (this.sums[i] as number) + (other.sums[i] as number);
      this.positives[i] = (this.positives[i] as number) + (other.positives[i] as number);
    }
    this.total += other.total;
  }

  bins(): CalibrationBin[] {
    return Array.from({ length: CALIBRATION_BINS }, (_, i) => {
      const count = this.counts[i] as number;
      const positives = this.positives[i] as number;
      return {
        lower: edge(i),
        upper: edge(i + 1),
        count,
        positives,
        // min(1, ·): a sum of values ≤ 1 divided by their number can round a hair above 1.
        meanPredicted: count === 0 ? null : Math.min(1, (this.sums[i] as number) / count),
        observedRate: count === 0 ? null : positives / count,
      };
    });
  }
}

function edge(i: number): number {
  return i / CALIBRATION_BINS;
}
