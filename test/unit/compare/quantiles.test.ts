import { describe, expect, it } from 'vitest';
import { DEFAULT_QUANTILE_LEVELS, quantileShifts } from '../../../src/compare/index.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { fixture } from './fixture.js';

describe('quantileShifts', () => {
  it('defaults to 5 %, 10 %, 25 %, 50 %, 75 %, 90 %, 95 %', () => {
    expect(DEFAULT_QUANTILE_LEVELS).toEqual([0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]);
  });

  it('is live − reference of numpy.quantile(method="inverted_cdf") on the fixture samples', () => {
    for (const pair of fixture.pairs) {
      const got = quantileShifts(EmpiricalDistribution.fromSamples(pair.a), EmpiricalDistribution.fromSamples(pair.b), pair.quantiles);
      got.forEach((row, i) => {
        expect(row.q).toBe(pair.quantiles[i]);
        expect(row.live).toBe(pair.quantiles_a[i]);
        expect(row.reference).toBe(pair.quantiles_b[i]);
        expect(row.shift).toBe((pair.quantiles_a[i] as number) - (pair.quantiles_b[i] as number));
      });
    }
  });

  it('takes its own list of levels and keeps their order', () => {
    const live = EmpiricalDistribution.fromSamples([0.1, 0.2, 0.3, 0.4]);
    const reference = EmpiricalDistribution.fromSamples([0.5, 0.6, 0.7, 0.8]);
    const got = quantileShifts(live, reference, [0.75, 0.25]);
    expect(got.map((r) => r.q)).toEqual([0.75, 0.25]);
    expect(got[0]?.shift).toBeCloseTo(0.3 - 0.7, 15);
    expect(got[1]?.shift).toBeCloseTo(0.1 - 0.5, 15);
  });

  it('reports nulls for an empty side instead of failing', () => {
    const got = quantileShifts(EmpiricalDistribution.fromSamples([]), EmpiricalDistribution.fromSamples([0.5]), [0.5]);
    expect(got).toEqual([{ q: 0.5, live: null, reference: 0.5, shift: null }]);
  });

  it('rejects levels outside [0, 1] and an empty list', () => {
    const d = EmpiricalDistribution.fromSamples([0.5]);
    expect(() => quantileShifts(d, d, [1.2])).toThrow(/quantile level/);
    expect(() => quantileShifts(d, d, [])).toThrow(/must not be empty/);
  });
});
