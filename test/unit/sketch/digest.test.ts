import { describe, expect, it } from 'vitest';
import { MarginDigest } from '../../../src/sketch/digest.js';
import type { MarginDistribution } from '../../../src/sketch/distribution.js';
import { distributionKs, ExactSample, makeSamples, uniform } from './samples.js';
import { codeOf } from '../caught.js';

function digestOf(values: ArrayLike<number>, options = {}): MarginDigest {
  const d = new MarginDigest(options);
  for (let i = 0; i < values.length; i += 1) d.add(values[i] as number);
  return d;
}

/** Checks everything MarginDistribution's doc promises, on any distribution. */
function expectDistributionContract(d: MarginDistribution): void {
  const bps = d.breakpoints();
  expect(bps.length).toBeGreaterThan(0);
  for (let i = 1; i < bps.length; i += 1) expect(bps[i] as number).toBeGreaterThan(bps[i - 1] as number);
  const first = bps[0] as number;
  const last = bps[bps.length - 1] as number;
  expect(d.cdf(first - 1)).toBe(0);
  expect(d.cdfBelow(first)).toBe(0);
  expect(d.cdf(last)).toBe(1);
  expect(d.cdf(last + 1)).toBe(1);
  let previous = 0;
  for (let i = 0; i < bps.length; i += 1) {
    const x = bps[i] as number;
    expect(d.cdfBelow(x)).toBeGreaterThanOrEqual(previous - 1e-15);
    expect(d.cdf(x)).toBeGreaterThanOrEqual(d.cdfBelow(x));
    previous = d.cdf(x);
    if (i + 1 < bps.length) {
      // Linear between breakpoints: the midpoint sits halfway from cdf(a) to cdfBelow(b).
      const next = bps[i + 1] as number;
      const mid = (x + next) / 2;
      expect(d.cdf(mid)).toBeCloseTo((d.cdf(x) + d.cdfBelow(next)) / 2, 12);
      expect(d.cdfBelow(mid)).toBe(d.cdf(mid));
    }
  }
  // quantile is the smallest x with cdf(x) >= q.
  for (const q of [0, 0.001, 0.1, 0.25, 0.5, 0.75, 0.9, 0.999, 1]) {
    const x = d.quantile(q);
    expect(d.cdf(x)).toBeGreaterThanOrEqual(q - 1e-12);
    expect(d.cdfBelow(x)).toBeLessThanOrEqual(q + 1e-12);
  }
  expect(d.quantile(0)).toBe(first);
  expect(d.quantile(1)).toBe(last);
}

describe('MarginDigest: empty', () => {
  it('has no breakpoints, CDF 0 and NaN quantiles', () => {
    const d = new MarginDigest();
    expect(d.count).toBe(0);
    expect(d.breakpoints()).toEqual([]);
    expect(d.cdf(0.5)).toBe(0);
    expect(d.cdfBelow(0.5)).toBe(0);
    expect(d.quantile(0.5)).toBeNaN();
  });
});

describe('MarginDigest: atoms', () => {
  it('60% exact zeros, 30% exact ones, 10% uniform: the jumps at 0 and 1 are exact', () => {
    const values = zerosOnesAndUniform();
    const d = digestOf(values);
    const exact = new ExactSample(values);
    expect(d.cdf(0)).toBe(exact.countAtOrBelow(0) / 100_000);
    expect(d.cdfBelow(0)).toBe(0);
    expect(d.cdfBelow(1)).toBe(exact.countBelow(1) / 100_000);
    expect(d.cdf(1)).toBe(1);
    // The shares themselves are near what the mix asks for (the draw is random).
    expect(d.cdf(0)).toBeCloseTo(0.6, 2);
    expect(d.cdfBelow(1)).toBeCloseTo(0.7, 2);
    // A quantile inside an atom is the atom's value.
    expect(d.quantile(0.3)).toBe(0);
    expect(d.quantile(0.95)).toBe(1);
    expectDistributionContract(d);
  });

  it('exactly 60/30/10 gives cdf(0) = 0.6, cdfBelow(1) = 0.7 to the last bit', () => {
    const d = new MarginDigest();
    for (let i = 0; i < 10_000; i += 1) {
      const k = i % 10;
      d.add(k < 6 ? 0 : k < 9 ? 1 : uniform(9, i));
    }
    expect(d.cdfBelow(0)).toBe(0);
    expect(d.cdf(0)).toBe(0.6);
    expect(d.cdfBelow(1)).toBe(0.7);
    expect(d.cdf(1)).toBe(1);
  });

  it('a producer sending a handful of distinct values gets the exact step CDF back', () => {
    const values = [0.25, 0.5, 0.5, 0.75, 0.75, 0.75, 1];
    const d = new MarginDigest();
    for (let i = 0; i < 70_000; i += 1) d.add(values[i % values.length] as number);
    expect(d.breakpoints()).toEqual([0.25, 0.5, 0.75, 1]);
    expect(d.cdf(0.3)).toBe(1 / 7);
    expect(d.cdfBelow(0.5)).toBe(1 / 7);
    expect(d.cdf(0.5)).toBe(3 / 7);
    expect(d.cdf(0.74)).toBe(3 / 7);
    expect(d.cdf(0.75)).toBe(6 / 7);
    expect(d.quantile(0.5)).toBe(0.75);
    expect(d.quantile(0.4)).toBe(0.5);
    expectDistributionContract(d);
  });

  it('a small sample is held exactly, like the sample itself', () => {
    const values = [0.9, 0.1, 0.4, 0.4, 0.7];
    const d = digestOf(values);
    const exact = new ExactSample(Float64Array.from(values));
    for (const x of [0, 0.1, 0.2, 0.4, 0.5, 0.7, 0.9, 1]) {
      expect(d.cdf(x)).toBe(exact.countAtOrBelow(x) / 5);
      expect(d.cdfBelow(x)).toBe(exact.countBelow(x) / 5);
    }
    for (const q of [0.2, 0.4, 0.6, 0.8, 1]) expect(d.quantile(q)).toBe(exact.invertedCdf(q));
  });
});

function zerosOnesAndUniform(): Float64Array {
  const out = new Float64Array(100_000);
  for (let i = 0; i < out.length; i += 1) {
    const u = uniform(7, i);
    out[i] = u < 0.6 ? 0 : u < 0.9 ? 1 : uniform(8, i);
  }
  return out;
}

describe('MarginDigest: continuous data', () => {
  it('keeps the MarginDistribution contract and tracks the exact CDF', () => {
    const xs = makeSamples('beta82', 11, 50_000);
    const d = digestOf(xs);
    expectDistributionContract(d);
    const exact = new ExactSample(xs);
    for (let i = 0; i < xs.length; i += 499) {
      const x = xs[i] as number;
      expect(Math.abs(d.cdf(x) - exact.countAtOrBelow(x) / xs.length)).toBeLessThan(0.003);
    }
    expect(d.centroidCount()).toBeLessThan(400);
  });

  it('weights count as repeated observations', () => {
    const weighted = new MarginDigest();
    const repeated = new MarginDigest();
    for (let i = 0; i < 2000; i += 1) {
      const x = uniform(12, i);
      const w = 1 + (i % 3);
      weighted.add(x, w);
      for (let k = 0; k < w; k += 1) repeated.add(x);
    }
    expect(weighted.count).toBe(repeated.count);
    expect(distributionKs(weighted, repeated)).toBeLessThan(0.005);
    for (const q of [0.1, 0.5, 0.9]) expect(Math.abs(weighted.quantile(q) - repeated.quantile(q))).toBeLessThan(0.01);
  });

  it('is deterministic: the same input gives the same state', () => {
    const xs = makeSamples('uniform', 13, 20_000);
    expect(digestOf(xs).toState()).toEqual(digestOf(xs).toState());
  });
});

describe('MarginDigest: merge', () => {
  const a = makeSamples('uniform', 21, 30_000);
  const b = makeSamples('discrete', 22, 30_000);

  it('equals one digest fed both streams: count exactly, the CDF closely', () => {
    const merged = digestOf(a);
    const other = digestOf(b);
    const otherBefore = other.toState();
    merged.merge(other);
    const both = digestOf([...a, ...b]);
    expect(merged.count).toBe(60_000);
    // Each is within 0.002 of the exact CDF (see reference.test.ts), so they are within twice that of each other.
    expect(distributionKs(merged, both)).toBeLessThan(0.004);
    const exact = new ExactSample(Float64Array.from([...a, ...b]));
    for (const q of [0.01, 0.1, 0.3, 0.5, 0.7, 0.9, 0.99]) expect(exact.rankError(merged.quantile(q), q)).toBeLessThan(0.002);
    expect(other.toState()).toEqual(otherBefore);
  });

  it('does not depend on the order: merged(a, b) and merged(b, a) agree exactly', () => {
    const da = digestOf(a);
    const db = digestOf(b);
    expect(MarginDigest.merged([da, db]).toState()).toEqual(MarginDigest.merged([db, da]).toState());
  });

  it('merging a digest into itself doubles it', () => {
    const d = digestOf(a.subarray(0, 1000));
    const median = d.quantile(0.5);
    d.merge(d);
    expect(d.count).toBe(2000);
    expect(Math.abs(d.quantile(0.5) - median)).toBeLessThan(0.02);
  });
});

describe('MarginDigest: state', () => {
  it('round-trips exactly through JSON and answers the same', () => {
    const xs = makeSamples('discrete', 31, 40_000);
    const d = digestOf(xs);
    const state = d.toState();
    const back = MarginDigest.fromState(JSON.parse(JSON.stringify(state)));
    expect(back.toState()).toEqual(state);
    expect(back.count).toBe(d.count);
    expect(back.breakpoints()).toEqual(d.breakpoints());
    for (const q of [0, 0.05, 0.31, 0.5, 0.77, 1]) expect(back.quantile(q)).toBe(d.quantile(q));
    for (const x of [0, 0.01, 0.2, 0.33, 0.5, 0.99, 1]) {
      expect(back.cdf(x)).toBe(d.cdf(x));
      expect(back.cdfBelow(x)).toBe(d.cdfBelow(x));
    }
  });

  it('writes single values as pairs and spread centroids as quadruples', () => {
    const d = digestOf([0, 0, 0, 0.5]);
    d.compact();
    expect(d.toState()).toEqual({ v: 1, compression: 200, scale: 'k1', centroids: [[0, 3], [0.5, 1]] });
  });

  it('keeps values not yet folded as they are, in the order added, and toState() folds nothing', () => {
    const d = digestOf([0.5, 0, 0.25]);
    expect(d.toState()).toEqual({ v: 1, compression: 200, scale: 'k1', centroids: [], points: [[0.5, 1], [0, 1], [0.25, 1]] });
    expect(d.toState()).toEqual(d.toState());
    // Merged-in centroids wait apart from the points, in the order merged.
    const other = digestOf([0.1, 0.2]);
    other.compact();
    d.merge(other);
    expect(d.toState().merging).toEqual([[0.1, 1], [0.2, 1]]);
  });

  it('answers alike, checkpointed or not: the figures depend on what was added, not on when a state was taken', () => {
    const xs = makeSamples('discrete', 7, 20_000);
    const plain = digestOf(xs);
    const checkpointed = new MarginDigest();
    let restored = new MarginDigest();
    xs.forEach((x, i) => {
      checkpointed.add(x);
      restored.add(x);
      if (i % 997 === 0) {
        checkpointed.toState();
        restored = MarginDigest.fromState(JSON.parse(JSON.stringify(restored.toState())));
      }
    });
    for (const q of [0.01, 0.1, 0.5, 0.9, 0.99]) {
      expect(checkpointed.quantile(q)).toBe(plain.quantile(q));
      expect(restored.quantile(q)).toBe(plain.quantile(q));
    }
  });

  it('keeps adding after a restore as the original does', () => {
    const xs = makeSamples('uniform', 32, 10_000);
    const d = digestOf(xs.subarray(0, 5000));
    const back = MarginDigest.fromState(d.toState());
    for (const x of xs.subarray(5000)) {
      d.add(x);
      back.add(x);
    }
    expect(back.toState()).toEqual(d.toState());
  });
});

describe('MarginDigest: arguments', () => {
  it('refuses non-finite values and bad weights with HR_ERR_SKETCH_ARGUMENT, and counts nothing', () => {
    const d = new MarginDigest();
    expect(codeOf(() => d.add(Number.NaN))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => d.add(Infinity))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => d.add(0.5, 0))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => d.add(0.5, -1))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => d.add(0.5, Number.NaN))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(d.count).toBe(0);
  });

  it('refuses q outside [0, 1] and NaN x in the CDF', () => {
    const d = digestOf([0.5]);
    for (const q of [-0.01, 1.01, Number.NaN]) expect(codeOf(() => d.quantile(q))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => d.cdf(Number.NaN))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(d.cdf(-Infinity)).toBe(0);
    expect(d.cdf(Infinity)).toBe(1);
  });

  it('refuses a compression or scale it does not know', () => {
    expect(codeOf(() => new MarginDigest({ compression: 5 }))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => new MarginDigest({ scale: 'k9' as never }))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });
});
