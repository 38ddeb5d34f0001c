/**
 * MarginSummary: what one bucket (or one view, or one reference set) knows about its margins. A digest
 * for the shape of the distribution, and beside it the figures that must not be estimates: count, sum,
 * min, max, and the low-margin counts at each configured θ.
 */
import { MarginDigest, type DigestOptions } from './digest.js';
import type { MarginDistribution } from './distribution.js';
import { badArgument } from './fail.js';
import { parseSummaryState, type SummaryState } from './serialise.js';
import { normaliseThresholds, ThresholdCounts } from './thresholds.js';

export interface SummaryOptions extends DigestOptions {
  readonly thresholds?: readonly number[];
}

export class MarginSummary {
  private dig: MarginDigest;
  private low: ThresholdCounts;
  private n = 0;
  private total = 0;
  private smallest = Infinity;
  private largest = -Infinity;

  constructor(options: SummaryOptions = {}) {
    this.dig = new MarginDigest(options);
    this.low = new ThresholdCounts(normaliseThresholds(options.thresholds ?? []));
  }

  /**
   * A new summary holding all of `summaries`, digests merged in one pass. Thresholds, compression and
   * scale come from `options`, else from the first summary; every summary must share the thresholds.
   */
  static merged(summaries: readonly MarginSummary[], options?: SummaryOptions): MarginSummary {
    const first = summaries[0];
    const settings = options ?? (first === undefined ? {} : first.settings());
    const out = new MarginSummary(settings);
    for (const s of summaries) out.mergeCounts(s);
    out.dig = MarginDigest.merged(
      summaries.map((s) => s.dig),
      settings,
    );
    return out;
  }

  static fromState(state: unknown, path = 'summary'): MarginSummary {
    const s = parseSummaryState(state, path);
    const out = new MarginSummary({ thresholds: s.thresholds, compression: s.digest.compression, scale: s.digest.scale });
    out.dig = MarginDigest.fromState(s.digest, `${path}.digest`);
    out.low = new ThresholdCounts(s.thresholds, s.below);
    out.n = s.count;
    out.total = s.sum;
    out.smallest = s.min ?? Infinity;
    out.largest = s.max ?? -Infinity;
    return out;
  }

  /**
   * The distribution of the margins, for comparisons and quantiles. Typed as the read-only interface:
   * adding to the digest behind the summary's back would put it out of step with the exact counters.
   */
  get distribution(): MarginDistribution {
    return this.dig;
  }

  /** Options that make an empty summary of the same kind. */
  settings(): SummaryOptions {
    return { thresholds: this.low.thresholds, compression: this.dig.compression, scale: this.dig.scale };
  }

  get thresholds(): readonly number[] {
    return this.low.thresholds;
  }

  /** Total weight (the number of observations when every weight is 1). */
  get count(): number {
    return this.n;
  }

  get sum(): number {
    return this.total;
  }

  /** NaN when empty. */
  get mean(): number {
    return this.n === 0 ? Number.NaN : this.total / this.n;
  }

  /** NaN when empty. */
  get min(): number {
    return this.n === 0 ? Number.NaN : this.smallest;
  }

  /** NaN when empty. */
  get max(): number {
    return this.n === 0 ? Number.NaN : this.largest;
  }

  add(x: number, weight = 1): void {
    // The digest checks x and weight first, so a refused value changes none of the counters either.
    this.dig.add(x, weight);
    this.n += weight;
    this.total += x * weight;
    if (x < this.smallest) this.smallest = x;
    if (x > this.largest) this.largest = x;
    this.low.add(x, weight);
  }

  /** Adds everything `other` holds; `other` is not changed. Thresholds must match. */
  merge(other: MarginSummary): void {
    this.mergeCounts(other);
    this.dig.merge(other.dig);
  }

  /** Exact weight of observations with x < θ; θ must be one of the configured thresholds. */
  countBelow(threshold: number): number {
    return this.low.countBelow(threshold);
  }

  /** Exact share of observations with x < θ; NaN when empty. */
  lowMarginRatio(threshold: number): number {
    const below = this.low.countBelow(threshold);
    return this.n === 0 ? Number.NaN : below / this.n;
  }

  /** Lets a finished bucket's digest buffer go. */
  compact(): void {
    this.dig.compact();
  }

  toState(): SummaryState {
    const empty = this.n === 0;
    return {
      thresholds: [...this.low.thresholds],
      count: this.n,
      sum: this.total,
      min: empty ? null : this.smallest,
      max: empty ? null : this.largest,
      below: [...this.low.counts()],
      digest: this.dig.toState(),
    };
  }

  private mergeCounts(other: MarginSummary): void {
    if (other === this) throw badArgument('other', 'is this summary; merge a copy');
    this.low.merge(other.low);
    this.n += other.n;
    this.total += other.total;
    if (other.smallest < this.smallest) this.smallest = other.smallest;
    if (other.largest > this.largest) this.largest = other.largest;
  }
}
