import { describe, expect, it } from 'vitest';
import { wasserstein1 } from '../../../src/compare/index.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { fixture } from './fixture.js';
import { piecewise, pointMass, uniform } from './piecewise.js';

describe('wasserstein1 against scipy.stats.wasserstein_distance', () => {
  for (const pair of fixture.pairs) {
    it(`${pair.name}: within 1e-9`, () => {
      const got = wasserstein1(EmpiricalDistribution.fromSamples(pair.a), EmpiricalDistribution.fromSamples(pair.b));
      expect(Math.abs(got - pair.wasserstein)).toBeLessThanOrEqual(1e-9);
    });
  }
});

describe('wasserstein1 on piecewise-linear CDFs, integrated by hand', () => {
  it('uniform(0,1) vs uniform(0,2): ∫₀¹ x/2 dx + ∫₁² (1 − x/2) dx = 1/4 + 1/4', () => {
    expect(wasserstein1(uniform(0, 1), uniform(0, 2))).toBeCloseTo(0.5, 15);
  });

  it('uniform(0,1) vs a point mass at 1/2: two triangles of area 1/8', () => {
    expect(wasserstein1(uniform(0, 1), pointMass(0.5))).toBeCloseTo(0.25, 15);
  });

  it('handles a sign change inside one segment: uniform(0,1) vs uniform(1/4,3/4)', () => {
    // On [1/4, 3/4] the gap is x − 2(x − 1/4) = 1/2 − x, crossing zero at 1/2 mid-segment.
    // ∫₀^¼ x + ∫_¼^¾ |½ − x| + ∫_¾^1 (1 − x) = 1/32 + 2·(1/32) + 1/32 = 1/8.
    // A trapezoid without the split would give |1/4 + (−1/4)|/2 · 1/2 = 0 on the middle segment.
    expect(wasserstein1(uniform(0, 1), uniform(0.25, 0.75))).toBeCloseTo(0.125, 15);
  });

  it('atoms move mass across their distance: point masses at 0.2 and 0.9 are 0.7 apart', () => {
    expect(wasserstein1(pointMass(0.2), pointMass(0.9))).toBeCloseTo(0.7, 15);
    // An atom against a spread: mass 0.6 at 1.0 plus 0.4 uniform on [0,1], against uniform(0,1).
    // Gap on [0,1): 0.4x − x = −0.6x; ∫₀¹ 0.6x dx = 0.3.
    const withAtom = piecewise(10, [
      [0, 0, 0],
      [1, 0.4, 1],
    ]);
    expect(wasserstein1(withAtom, uniform(0, 1))).toBeCloseTo(0.3, 15);
  });

  it('is zero for identical inputs and symmetric', () => {
    const a = EmpiricalDistribution.fromSamples([0.1, 0.1, 0.5, 1]);
    const b = EmpiricalDistribution.fromSamples([0, 0.4, 1, 1, 1]);
    expect(wasserstein1(a, a)).toBe(0);
    expect(wasserstein1(a, b)).toBe(wasserstein1(b, a));
  });
});
