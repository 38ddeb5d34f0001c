import { describe, expect, it } from 'vitest';
import { ksStatistic, ksTest } from '../../../src/compare/index.js';
import { isHeadroomError } from '../../../src/errors.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { fixture } from './fixture.js';
import { piecewise, pointMass, uniform } from './piecewise.js';

const empirical = (xs: readonly number[]) => EmpiricalDistribution.fromSamples(xs);

describe('ksTest against scipy.stats.ks_2samp(a, b, method="asymp")', () => {
  for (const pair of fixture.pairs) {
    it(pair.name, () => {
      const a = empirical(pair.a);
      const b = empirical(pair.b);
      const got = ksTest(a, b);
      const want = pair.ks_asymp;
      expect(Math.abs(got.statistic - want.statistic)).toBeLessThanOrEqual(1e-12);
      expect(got.sign).toBe(want.sign);
      // SciPy breaks ties between equal gaps by array order, we by the smallest margin; both places
      // must show the gap D, and ours must be the first.
      const gapAt = (x: number) => want.sign * (a.cdf(x) - b.cdf(x));
      expect(Math.abs(gapAt(want.location) - want.statistic)).toBeLessThanOrEqual(1e-12);
      expect(Math.abs(gapAt(got.location) - got.statistic)).toBeLessThanOrEqual(1e-12);
      expect(got.location).toBeLessThanOrEqual(want.location);
      // p-value: same tolerance as kstwo itself (kolmogorov.test.ts), since ks_2samp's asymp branch is
      // kstwo.sf(D, round(en)).
      if (want.pvalue === null) {
        expect(got.pValue).toBeNull();
      } else {
        expect(got.pValue).not.toBeNull();
        expect(Math.abs((got.pValue as number) - want.pvalue)).toBeLessThanOrEqual(1e-14 + 2e-11 * want.pvalue);
      }
    });
  }

  it('rounds the effective n half to even like NumPy (5 vs 5: en = 2.5 → 2)', () => {
    const pair = fixture.pairs.find((p) => p.a.length === 5 && p.b.length === 5);
    expect(pair).toBeDefined();
    const got = ksTest(empirical(pair!.a), empirical(pair!.b));
    expect(got.effectiveN).toBe(2.5);
    // At n = 2 and D = 0.6 kstwo's closed form 2(1 − D)² applies: 0.32; n = 3 would give 2·0.4³ = 0.128.
    expect(got.statistic).toBeCloseTo(0.6, 12);
    expect(got.pValue).toBeCloseTo(0.32, 12);
  });

  it('on data with ties equals the D of the step CDFs counted by hand', () => {
    // a: 0, 0, 1, 1 ; b: 0, 1, 1, 1, 1, 1. F_a jumps to 1/2 at 0, F_b to 1/6 at 0: D = 1/3 at 0.
    const got = ksTest(empirical([0, 0, 1, 1]), empirical([0, 1, 1, 1, 1, 1]));
    expect(got.statistic).toBeCloseTo(1 / 3, 15);
    expect(got.location).toBe(0);
    expect(got.sign).toBe(1);
    expect(got.effectiveN).toBeCloseTo(2.4, 15);
  });

  it('gives null p-value where SciPy gives NaN: one observation on each side (en = 0.5 rounds to 0)', () => {
    const got = ksTest(empirical([0.2]), empirical([0.7]));
    expect(got.statistic).toBe(1);
    expect(got.pValue).toBeNull();
  });
});

describe('ksStatistic on piecewise-linear CDFs (what a sketch hands over)', () => {
  it('uniform(0,1) vs uniform(0,2): gap x/2 peaks at the breakpoint 1 with D = 1/2', () => {
    const got = ksStatistic(uniform(0, 1), uniform(0, 2));
    expect(got).toEqual({ statistic: 0.5, location: 1, sign: 1 });
  });

  it('finds a gap that exists only as a left limit', () => {
    // F = uniform(0,1); G = point mass at 0.5. Just below 0.5: F − G → 0.5; at 0.5: F − G = −0.5.
    // Equal sizes: SciPy's rule picks the positive side; the location is 0.5 approached from below.
    expect(ksStatistic(uniform(0, 1), pointMass(0.5))).toEqual({ statistic: 0.5, location: 0.5, sign: 1 });
    // Shrink the atom to 0.8 of the mass (0.2 spread below it): the negative side is now larger.
    const g = piecewise(10, [
      [0, 0, 0],
      [0.5, 0.2, 1],
    ]);
    // Below 0.5: F − G = x − 0.4x = 0.6x → 0.3; at 0.5: 0.5 − 1 = −0.5.
    expect(ksStatistic(uniform(0, 1), g)).toEqual({ statistic: 0.5, location: 0.5, sign: -1 });
  });

  it('is symmetric in size and flips the sign when the arguments swap', () => {
    const a = empirical([0.1, 0.4, 0.4, 0.9]);
    const b = empirical([0.3, 0.5, 0.6]);
    const ab = ksStatistic(a, b);
    const ba = ksStatistic(b, a);
    expect(ba.statistic).toBe(ab.statistic);
    expect(ba.sign).toBe(-ab.sign);
  });

  it('refuses an empty distribution with HR_ERR_COMPARE_ARGUMENT', () => {
    try {
      ksTest(empirical([]), empirical([0.5]));
      expect.unreachable();
    } catch (error) {
      expect(isHeadroomError(error) && error.code).toBe('HR_ERR_COMPARE_ARGUMENT');
    }
  });
});
