import { describe, expect, it } from 'vitest';
import { MarginSummary } from '../../../src/sketch/summary.js';
import { normaliseThresholds } from '../../../src/sketch/thresholds.js';
import { makeSamples } from './samples.js';
import { codeOf } from '../caught.js';

describe('MarginSummary: exact counters', () => {
  it('counts x < θ exactly at each threshold, with θ itself not low', () => {
    const s = new MarginSummary({ thresholds: [0.2, 0.1] });
    for (const x of [0, 0.05, 0.1, 0.1, 0.15, 0.2, 0.5, 1]) s.add(x);
    expect(s.thresholds).toEqual([0.1, 0.2]);
    expect(s.countBelow(0.1)).toBe(2);
    expect(s.countBelow(0.2)).toBe(5);
    expect(s.lowMarginRatio(0.2)).toBe(5 / 8);
    expect(s.count).toBe(8);
    expect(s.min).toBe(0);
    expect(s.max).toBe(1);
    expect(s.sum).toBeCloseTo(2.1, 12);
    expect(s.mean).toBeCloseTo(2.1 / 8, 12);
  });

  it('is exact where the sketch is not: many values straddling θ', () => {
    const xs = makeSamples('uniform', 41, 50_000);
    const s = new MarginSummary({ thresholds: [0.1] });
    for (const x of xs) s.add(x);
    let below = 0;
    for (const x of xs) if (x < 0.1) below += 1;
    expect(s.countBelow(0.1)).toBe(below);
  });

  it('weights count in the counters too', () => {
    const s = new MarginSummary({ thresholds: [0.5] });
    s.add(0.2, 3);
    s.add(0.7, 1);
    expect(s.count).toBe(4);
    expect(s.countBelow(0.5)).toBe(3);
    expect(s.sum).toBeCloseTo(1.3, 12);
  });

  it('empty: NaN ratio, mean, min and max; count 0', () => {
    const s = new MarginSummary({ thresholds: [0.1] });
    expect(s.count).toBe(0);
    expect(s.lowMarginRatio(0.1)).toBeNaN();
    expect(s.mean).toBeNaN();
    expect(s.min).toBeNaN();
    expect(s.max).toBeNaN();
    expect(s.distribution.count).toBe(0);
  });

  it('asking for a threshold that is not configured is an argument error', () => {
    const s = new MarginSummary({ thresholds: [0.1] });
    expect(codeOf(() => s.countBelow(0.2))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });

  it('a refused value changes no counter', () => {
    const s = new MarginSummary({ thresholds: [0.1] });
    s.add(0.05);
    expect(codeOf(() => s.add(Number.NaN))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(s.count).toBe(1);
    expect(s.countBelow(0.1)).toBe(1);
    expect(s.distribution.count).toBe(1);
  });
});

describe('MarginSummary: merge and state', () => {
  it('merging adds every counter exactly and leaves the other unchanged', () => {
    const a = new MarginSummary({ thresholds: [0.1, 0.3] });
    const b = new MarginSummary({ thresholds: [0.1, 0.3] });
    for (const x of [0.05, 0.2, 0.9]) a.add(x);
    for (const x of [0, 0.25, 0.35, 1]) b.add(x);
    const bBefore = b.toState();
    a.merge(b);
    expect(a.count).toBe(7);
    expect(a.countBelow(0.1)).toBe(2);
    expect(a.countBelow(0.3)).toBe(4);
    expect(a.min).toBe(0);
    expect(a.max).toBe(1);
    expect(a.distribution.count).toBe(7);
    expect(b.toState()).toEqual(bBefore);
  });

  it('merged() takes its settings from the first summary', () => {
    const a = new MarginSummary({ thresholds: [0.1], compression: 50 });
    a.add(0.05);
    const m = MarginSummary.merged([a, a]);
    expect(m.thresholds).toEqual([0.1]);
    expect(m.countBelow(0.1)).toBe(2);
    expect(m.toState().digest.compression).toBe(50);
  });

  it('refuses to merge summaries with different thresholds', () => {
    const a = new MarginSummary({ thresholds: [0.1] });
    const b = new MarginSummary({ thresholds: [0.2] });
    expect(codeOf(() => a.merge(b))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });

  it('round-trips through JSON', () => {
    const s = new MarginSummary({ thresholds: [0.1, 0.2] });
    for (const x of makeSamples('discrete', 42, 20_000)) s.add(x);
    const state = s.toState();
    const back = MarginSummary.fromState(JSON.parse(JSON.stringify(state)));
    expect(back.toState()).toEqual(state);
    expect(back.countBelow(0.2)).toBe(s.countBelow(0.2));
    expect(back.distribution.quantile(0.5)).toBe(s.distribution.quantile(0.5));
  });

  it('an empty summary round-trips with null min and max', () => {
    const state = new MarginSummary({ thresholds: [0.1] }).toState();
    expect(state.min).toBeNull();
    expect(MarginSummary.fromState(JSON.parse(JSON.stringify(state))).count).toBe(0);
  });
});

describe('normaliseThresholds', () => {
  it('sorts, and refuses duplicates, non-finite values and too many', () => {
    expect(normaliseThresholds([0.3, 0.1])).toEqual([0.1, 0.3]);
    expect(codeOf(() => normaliseThresholds([0.1, 0.1]))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => normaliseThresholds([Number.NaN]))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => normaliseThresholds(Array.from({ length: 17 }, (_, i) => i / 100)))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });
});
