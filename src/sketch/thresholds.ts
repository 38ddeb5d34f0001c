/**
 * Exact low-margin counters: for each configured θ, the weight of observations with x < θ. The low-margin
 * share is the figure alerts fire on, so it is counted, never read off the digest.
 */
import { badArgument } from './fail.js';

/** At most this many thresholds: each is a counter in every bucket of every series. */
export const MAX_THRESHOLDS = 16;

/**
 * Sorted, distinct, finite thresholds. `field` names the setting in the error; `fail` makes it (an
 * argument error by default, a state error when the thresholds were read back from a checkpoint).
 */
export function normaliseThresholds(
  values: readonly number[],
  field = 'thresholds',
  fail: (field: string, detail: string) => Error = badArgument,
): readonly number[] {
  if (values.length > MAX_THRESHOLDS) throw fail(field, `holds ${values.length} values; at most ${MAX_THRESHOLDS}`);
  values.forEach((t, i) => {
    if (typeof t !== 'number' || !Number.isFinite(t)) throw fail(`${field}[${i}]`, 'must be a finite number');
  });
  const sorted = [...values].sort((a, b) => a - b);
  for (let i = 1; i < sorted.length; i += 1) {
    if (sorted[i] === sorted[i - 1]) throw fail(field, `holds ${String(sorted[i])} twice`);
  }
  return Object.freeze(sorted);
}

export class ThresholdCounts {
  readonly thresholds: readonly number[];
  private readonly below: number[];

  /** `thresholds` must already be normalised (sorted, distinct). */
  constructor(thresholds: readonly number[], below?: readonly number[]) {
    this.thresholds = thresholds;
    this.below = below === undefined ? thresholds.map(() => 0) : [...below];
  }

  add(x: number, weight: number): void {
    // Thresholds ascend, so once x < θ holds it holds for every later θ.
    for (let i = this.thresholds.length - 1; i >= 0 && x < (this.thresholds[i] as number); i -= 1) {
      this.below[i] = (this.below[i] as number) + weight;
    }
  }

  merge(other: ThresholdCounts): void {
    if (!sameThresholds(this.thresholds, other.thresholds)) {
      throw badArgument('thresholds', `differ: [${this.thresholds.join(', ')}] vs [${other.thresholds.join(', ')}]`);
    }
    other.below.forEach((c, i) => {
      this.below[i] = (this.below[i] as number) + c;
    });
  }

  /** Weight of observations below θ; θ must be one of the configured thresholds. */
  countBelow(threshold: number): number {
    const i = this.thresholds.indexOf(threshold);
    if (i < 0) throw badArgument('threshold', `${String(threshold)} is not configured (have [${this.thresholds.join(', ')}])`, threshold);
    return this.below[i] as number;
  }

  counts(): readonly number[] {
    return [...this.below];
  }
}

export function sameThresholds(a: readonly number[], b: readonly number[]): boolean {
  return a.length === b.length && a.every((t, i) => t === b[i]);
}
