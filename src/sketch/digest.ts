/**
 * MarginDigest: a merging t-digest that is right for atoms, behind the MarginDistribution interface.
 *
 * Why not the npm `tdigest` package (welch/tdigest 0.1.x): its CDF puts half of a centroid's weight on
 * each side of its mean, so a margin of exactly 0 held by 60% of the data reads as cdf(0) = 0.3; it
 * interpolates quantiles across atoms; its compress() reinserts centroids in Math.random() order; and it
 * keeps a red-black tree of objects per digest. test/bench/sketch-accuracy.ts measures it against this
 * digest on the same samples; the figures are in that script's output.
 *
 * Points are buffered and folded in by one sort-and-sweep (centroids.ts) when the buffer fills or when
 * an answer is asked of this digest, so answers always come from compressed centroids. toState() keeps
 * the buffer as it is (it folds nothing), so a restored copy is the same digest: it folds at the same
 * moments and answers exactly as the original does. Views and merged series read live digests through
 * merge() into fresh copies, which leaves the live ones untouched: their figures depend only on what
 * was added, not on when anyone looked or checkpointed.
 */
import { compress, EMPTY_CENTROIDS, type Centroids, type Items } from './centroids.js';
import type { MarginDistribution } from './distribution.js';
import { badArgument, badState } from './fail.js';
import { buildKnots, valueAtWeight, weightUpTo, type Knots } from './knots.js';
import { DEFAULT_COMPRESSION, DEFAULT_SCALE, isScaleName, MAX_COMPRESSION, MIN_COMPRESSION, type ScaleName } from './scale.js';
import { parseDigestState, type CentroidTuple, type DigestState } from './serialise.js';
import { sortFinite } from './sort.js';

export interface DigestOptions {
  /** δ: roughly the number of centroids kept; larger is more accurate and bigger. */
  readonly compression?: number;
  readonly scale?: ScaleName;
}

/** Buffered items before a merge pass: Dunning's merging digest uses a few times δ. */
const BUFFER_PER_COMPRESSION = 5;

/** Centroids merged in from other digests, waiting for the next merge pass. */
interface Merged {
  mean: number[];
  weight: number[];
  lo: number[];
  hi: number[];
}

function emptyMerged(): Merged {
  return { mean: [], weight: [], lo: [], hi: [] };
}

/**
 * Points added one by one, kept apart from centroids merged in from other digests: plain values in a
 * typed array can be sorted natively when every weight is 1, which is most of the cost of an add.
 */
interface Points {
  readonly x: Float64Array;
  readonly w: Float64Array;
  count: number;
  unitWeights: boolean;
}

const NO_ITEMS: Items = EMPTY_CENTROIDS;

/**
 * Buffered points as items; `sort` sorts them (sort.ts) when it can. Sorted in place, not in a copy: the
 * caller (flush) empties the buffer right after compress(), which keeps nothing of its sources, and with
 * unit weights the weight column is all ones whatever the order. Keys in the same order as every other
 * Items object, so the merge pass's property reads stay monomorphic.
 */
function pointItems(p: Points | undefined, sort: boolean): Items {
  if (p === undefined || p.count === 0) return NO_ITEMS;
  const x = p.x.subarray(0, p.count);
  if (sort && p.unitWeights) sortFinite(x);
  return { mean: x, weight: p.w.subarray(0, p.count), lo: x, hi: x };
}

function bufferItems(b: Merged): Items {
  if (b.mean.length === 0) return NO_ITEMS;
  return { mean: Float64Array.from(b.mean), weight: Float64Array.from(b.weight), lo: Float64Array.from(b.lo), hi: Float64Array.from(b.hi) };
}

export class MarginDigest implements MarginDistribution {
  readonly compression: number;
  readonly scale: ScaleName;
  private centroids: Centroids = EMPTY_CENTROIDS;
  private buffer: Merged = emptyMerged();
  private points: Points | undefined;
  private total = 0;
  private knots: Knots | undefined;

  constructor(options: DigestOptions = {}) {
    const compression = options.compression ?? DEFAULT_COMPRESSION;
    if (!Number.isFinite(compression) || compression < MIN_COMPRESSION || compression > MAX_COMPRESSION) {
      throw badArgument('compression', `must be a number in [${MIN_COMPRESSION}, ${MAX_COMPRESSION}]`, compression);
    }
    const scale = options.scale ?? DEFAULT_SCALE;
    if (!isScaleName(scale)) throw badArgument('scale', "must be 'k1', 'k2' or 'k3'", scale);
    this.compression = compression;
    this.scale = scale;
  }

  /** A new digest holding all of `digests`, folded in one merge pass (more accurate than one at a time). */
  static merged(digests: readonly MarginDigest[], options: DigestOptions = {}): MarginDigest {
    const out = new MarginDigest(options);
    for (const d of digests) out.absorb(d);
    out.flush();
    return out;
  }

  static fromState(state: unknown, path = 'digest'): MarginDigest {
    const s = parseDigestState(state, path);
    const d = new MarginDigest({ compression: s.compression, scale: s.scale });
    const n = s.centroids.length;
    const mean = new Float64Array(n);
    const weight = new Float64Array(n);
    const lo = new Float64Array(n);
    const hi = new Float64Array(n);
    s.centroids.forEach((c, i) => {
      mean[i] = c[0];
      weight[i] = c[1];
      lo[i] = c.length === 2 ? c[0] : c[2];
      hi[i] = c.length === 2 ? c[0] : c[3];
      d.total += c[1];
    });
    if (n > 0 && !(d.total > 0 && Number.isFinite(d.total))) throw badState(`${path}.centroids`, 'weights do not sum to a finite total');
    d.centroids = { mean, weight, lo, hi };
    for (const c of s.merging ?? []) {
      d.buffer.mean.push(c[0]);
      d.buffer.weight.push(c[1]);
      d.buffer.lo.push(c.length === 2 ? c[0] : c[2]);
      d.buffer.hi.push(c.length === 2 ? c[0] : c[3]);
      d.total += c[1];
    }
    const capacity = BUFFER_PER_COMPRESSION * d.compression;
    if (s.points !== undefined && s.points.length > 0) {
      if (s.points.length >= capacity) throw badState(`${path}.points`, `holds ${s.points.length} values; a digest of compression ${d.compression} folds at ${capacity}`);
      const points: Points = { x: new Float64Array(capacity), w: new Float64Array(capacity), count: s.points.length, unitWeights: true };
      s.points.forEach(([x, w], i) => {
        points.x[i] = x;
        points.w[i] = w;
        if (w !== 1) points.unitWeights = false;
        d.total += w;
      });
      d.points = points;
    }
    return d;
  }

  /** Total weight added (the number of observations when every weight is 1). */
  get count(): number {
    return this.total;
  }

  /**
   * Adds x with the given weight. Non-finite x is refused rather than skipped: the decoder upstream only
   * lets finite margins through, so one arriving here is a bug to surface, not data to drop quietly.
   */
  add(x: number, weight = 1): void {
    if (typeof x !== 'number' || !Number.isFinite(x)) throw badArgument('x', 'must be a finite number', x);
    if (typeof weight !== 'number' || !Number.isFinite(weight) || weight <= 0) throw badArgument('weight', 'must be a positive finite number', weight);
    // Allocated on first use: restored and finished digests hold no point buffer.
    const capacity = BUFFER_PER_COMPRESSION * this.compression;
    const p = (this.points ??= { x: new Float64Array(capacity), w: new Float64Array(capacity), count: 0, unitWeights: true });
    p.x[p.count] = x;
    p.w[p.count] = weight;
    p.count += 1;
    if (weight !== 1) p.unitWeights = false;
    this.total += weight;
    this.knots = undefined;
    if (p.count >= capacity) this.flush();
  }

  /** Adds everything `other` holds; `other` is not changed. */
  merge(other: MarginDigest): void {
    this.absorb(other);
    if (this.buffer.mean.length >= BUFFER_PER_COMPRESSION * this.compression) this.flush();
  }

  /** Folds the buffer into the centroids and lets the buffer's memory go; for buckets that are done. */
  compact(): void {
    this.flush();
    this.buffer = emptyMerged();
    this.points = undefined;
  }

  /** Number of centroids after folding in the buffer. */
  centroidCount(): number {
    this.flush();
    return this.centroids.mean.length;
  }

  cdf(x: number): number {
    return this.fraction(x, true);
  }

  cdfBelow(x: number): number {
    return this.fraction(x, false);
  }

  breakpoints(): readonly number[] {
    return Array.from(this.table().x);
  }

  quantile(q: number): number {
    if (typeof q !== 'number' || !(q >= 0 && q <= 1)) throw badArgument('q', 'must be a number in [0, 1]', q);
    if (this.total === 0) return Number.NaN;
    const k = this.table();
    return valueAtWeight(k, q * k.total);
  }

  /**
   * The digest as it is, without folding anything: the centroids, and what waits to be folded (`merging`:
   * centroids merged in from other digests; `points`: values added one by one, in the order added). It
   * changes nothing, so when a checkpoint is taken never moves a figure, and a restored copy folds at the
   * same moments as the original would have: both answer alike from then on, and so do a live watcher, a
   * restarted one and a replay of the same events. A finished digest (compact()) has nothing waiting.
   */
  toState(): DigestState {
    const tuples = (c: Items, n: number): CentroidTuple[] => {
      const out: CentroidTuple[] = [];
      for (let i = 0; i < n; i += 1) {
        const lo = c.lo[i] as number;
        const hi = c.hi[i] as number;
        out.push(lo === hi ? [lo, c.weight[i] as number] : [c.mean[i] as number, c.weight[i] as number, lo, hi]);
      }
      return out;
    };
    const state: { -readonly [K in keyof DigestState]: DigestState[K] } = { v: 1, compression: this.compression, scale: this.scale, centroids: tuples(this.centroids, this.centroids.mean.length) };
    if (this.buffer.mean.length > 0) state.merging = tuples(bufferItems(this.buffer), this.buffer.mean.length);
    const p = this.points;
    if (p !== undefined && p.count > 0) {
      const points: [number, number][] = [];
      for (let i = 0; i < p.count; i += 1) points.push([p.x[i] as number, p.w[i] as number]);
      state.points = points;
    }
    return state;
  }

  private fraction(x: number, inclusive: boolean): number {
    if (typeof x !== 'number' || Number.isNaN(x)) throw badArgument('x', 'must be a number', x);
    if (this.total === 0) return 0;
    const k = this.table();
    return weightUpTo(k, x, inclusive) / k.total;
  }

  private absorb(other: MarginDigest): void {
    const sources: Items[] = [other.centroids, bufferItems(other.buffer), pointItems(other.points, false)];
    // Lengths read first: merging a digest into itself must not chase its own growing buffer.
    const lengths = sources.map((s) => s.mean.length);
    const b = this.buffer;
    sources.forEach((s, k) => {
      for (let i = 0; i < (lengths[k] as number); i += 1) {
        b.mean.push(s.mean[i] as number);
        b.weight.push(s.weight[i] as number);
        b.lo.push(s.lo[i] as number);
        b.hi.push(s.hi[i] as number);
      }
    });
    this.total += other.total;
    this.knots = undefined;
  }

  private flush(): void {
    const points = this.points;
    if (this.buffer.mean.length === 0 && (points === undefined || points.count === 0)) return;
    this.centroids = compress([this.centroids, bufferItems(this.buffer), pointItems(points, true)], this.total, this.compression, this.scale);
    const b = this.buffer;
    b.mean.length = 0;
    b.weight.length = 0;
    b.lo.length = 0;
    b.hi.length = 0;
    if (points !== undefined) {
      points.count = 0;
      points.unitWeights = true;
    }
    this.knots = undefined;
  }

  private table(): Knots {
    this.flush();
    this.knots ??= buildKnots(this.centroids, this.total);
    return this.knots;
  }
}
