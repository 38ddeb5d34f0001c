/**
 * The npm `tdigest` package (welch/tdigest 0.1.x) behind MarginDistribution, as fairly as it allows, so
 * test/bench/sketch-accuracy.ts can measure it beside src/sketch/digest.ts on the same samples.
 *
 * What the wrapper fixes: compress() reinserts centroids in Math.random() order, so it is replaced by
 * the same loop over a seeded shuffle (deterministic state); its p_rank puts half of a centroid's weight
 * on each side of the mean, which is wrong for atoms, so exact 0s and 1s (the usual margin atoms) are
 * counted beside the package and only the values strictly between go into it. Interior atoms (a producer
 * sending 0.2, 0.5, 0.8) it cannot fix: the package blends them like any centroid.
 */
import tdigest from 'tdigest';
import type { MarginDistribution } from '../../src/sketch/distribution.js';

interface Internals {
  compressing?: boolean;
  toArray(): { mean: number; n: number }[];
  reset(): void;
  push_centroid(c: { mean: number; n: number }): void;
  _cumulate(exact: boolean): void;
}

function seededShuffle<T>(items: T[], seed: number): T[] {
  let s = seed >>> 0 || 1;
  for (let i = items.length - 1; i > 0; i -= 1) {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    const j = s % (i + 1);
    [items[i], items[j]] = [items[j] as T, items[i] as T];
  }
  return items;
}

export class PackageDigest implements MarginDistribution {
  private readonly td: tdigest.TDigest;
  private zeros = 0;
  private ones = 0;
  private interior = 0;
  private shuffles = 0;

  constructor(delta = 0.01) {
    this.td = new tdigest.TDigest(delta, 25, 1.1);
    const td = this.td as unknown as Internals;
    (td as unknown as { compress: () => void }).compress = () => {
      if (td.compressing) return;
      const points = seededShuffle(td.toArray(), 0x9e3779b9 + (this.shuffles += 1));
      td.reset();
      td.compressing = true;
      for (const p of points) td.push_centroid(p);
      td._cumulate(true);
      td.compressing = false;
    };
  }

  get count(): number {
    return this.zeros + this.ones + this.interior;
  }

  add(x: number): void {
    if (x === 0) this.zeros += 1;
    else if (x === 1) this.ones += 1;
    else {
      this.td.push(x);
      this.interior += 1;
    }
  }

  finish(): void {
    this.td.compress();
  }

  size(): number {
    return this.td.size();
  }

  serialisedBytes(): number {
    const centroids = this.td.toArray().map((c) => [c.mean, c.n]);
    return JSON.stringify({ v: 1, zeros: this.zeros, ones: this.ones, centroids }).length;
  }

  cdf(x: number): number {
    return this.at(x, true);
  }

  cdfBelow(x: number): number {
    return this.at(x, false);
  }

  breakpoints(): readonly number[] {
    const means = this.interior > 0 ? this.td.toArray().map((c) => c.mean) : [];
    const all = [...(this.zeros > 0 ? [0] : []), ...means, ...(this.ones > 0 ? [1] : [])];
    return all.filter((x, i) => i === 0 || x > (all[i - 1] as number));
  }

  quantile(q: number): number {
    const n = this.count;
    const target = q * n;
    if (this.zeros > 0 && target <= this.zeros) return 0;
    if (this.interior === 0 || target > this.zeros + this.interior) return 1;
    return this.td.percentile((target - this.zeros) / this.interior);
  }

  private at(x: number, inclusive: boolean): number {
    const n = this.count;
    let w = 0;
    if (x > 0 || (inclusive && x === 0)) w += this.zeros;
    if (x > 1 || (inclusive && x === 1)) w += this.ones;
    if (this.interior > 0 && x > 0) w += x >= 1 ? this.interior : this.interior * this.td.p_rank(x);
    return w / n;
  }
}
