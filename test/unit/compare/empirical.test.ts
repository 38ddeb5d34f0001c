import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { fixture } from './fixture.js';

describe('EmpiricalDistribution', () => {
  const d = EmpiricalDistribution.fromSamples([0.5, 1, 0.2, 1, 1, 0.5, 0]);

  it('keeps each distinct value once, ascending, as breakpoints', () => {
    expect(d.count).toBe(7);
    expect(d.breakpoints()).toEqual([0, 0.2, 0.5, 1]);
  });

  it('jumps at each value by its share of ties: cdf includes the atom, cdfBelow excludes it', () => {
    expect(d.cdfBelow(1)).toBe(4 / 7);
    expect(d.cdf(1)).toBe(1);
    expect(d.cdfBelow(0.5)).toBe(2 / 7);
    expect(d.cdf(0.5)).toBe(4 / 7);
    expect(d.cdf(0.3)).toBe(2 / 7);
    expect(d.cdfBelow(0.3)).toBe(2 / 7);
    expect(d.cdf(-1)).toBe(0);
    expect(d.cdfBelow(0)).toBe(0);
    expect(d.cdf(0)).toBe(1 / 7);
    expect(d.cdf(2)).toBe(1);
  });

  it('answers the smallest x with cdf(x) >= q, including at the exact jump levels', () => {
    expect(d.quantile(4 / 7)).toBe(0.5);
    expect(d.quantile(4 / 7 + 1e-12)).toBe(1);
    expect(d.quantile(1)).toBe(1);
    expect(d.quantile(1e-9)).toBe(0);
    expect(d.quantile(0)).toBe(0);
    for (const x of d.breakpoints()) expect(d.quantile(d.cdf(x))).toBe(x);
  });

  it('matches numpy.quantile(method="inverted_cdf") on every fixture sample', () => {
    for (const pair of fixture.pairs) {
      const a = EmpiricalDistribution.fromSamples(pair.a);
      const b = EmpiricalDistribution.fromSamples(pair.b);
      expect(pair.quantiles.map((q) => a.quantile(q)), pair.name).toEqual(pair.quantiles_a);
      expect(pair.quantiles.map((q) => b.quantile(q)), pair.name).toEqual(pair.quantiles_b);
    }
  });

  it('treats -0 and 0 as one value', () => {
    const z = EmpiricalDistribution.fromSamples([0, -0, 0.5]);
    expect(z.breakpoints()).toEqual([0, 0.5]);
    expect(Object.is(z.breakpoints()[0], 0)).toBe(true);
    expect(z.cdf(0)).toBe(2 / 3);
  });

  it('is empty-safe: no breakpoints, CDF 0, quantile NaN', () => {
    const e = EmpiricalDistribution.fromSamples([]);
    expect(e.count).toBe(0);
    expect(e.breakpoints()).toEqual([]);
    expect(e.cdf(0.5)).toBe(0);
    expect(e.cdfBelow(0.5)).toBe(0);
    expect(e.quantile(0.5)).toBeNaN();
  });

  it('rejects non-finite samples and out-of-range quantile levels with HR_ERR_SKETCH_ARGUMENT', () => {
    for (const bad of [[0.1, Number.NaN], [Number.POSITIVE_INFINITY]]) {
      try {
        EmpiricalDistribution.fromSamples(bad);
        expect.unreachable();
      } catch (error) {
        expect(isHeadroomError(error) && error.code).toBe('HR_ERR_SKETCH_ARGUMENT');
      }
    }
    expect(() => d.quantile(1.5)).toThrow(/quantile level/);
    expect(() => d.quantile(Number.NaN)).toThrow(/quantile level/);
  });

  it('does not share state with the array it was built from', () => {
    const samples = [0.3, 0.1];
    const e = EmpiricalDistribution.fromSamples(samples);
    samples.push(0.9);
    samples[0] = 0.7;
    expect(e.breakpoints()).toEqual([0.1, 0.3]);
    expect(Object.isFrozen(e.breakpoints())).toBe(true);
  });
});
