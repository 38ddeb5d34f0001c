import { describe, expect, it } from 'vitest';
import { kolmogorovSf, smirnovSf } from '../../../src/compare/index.js';
import { durbinCdf } from '../../../src/compare/kolmogorov-durbin.js';
import { pelzGoodCdf } from '../../../src/compare/kolmogorov-pelz-good.js';
import { fixture } from './fixture.js';

// Measured agreement with SciPy 1.17.1 on the fixture grid: at most 7.9e-15 absolute and 1.1e-11
// relative (the relative worst case is at n·d² = 4, n <= 140, where SciPy's Pomeranz recursion and our
// Durbin matrix both form 1 − CDF near a CDF of 1; an mpmath check put the true value between them).
const KSTWO_ABS = 1e-14;
const KSTWO_REL = 2e-11;

describe('kolmogorovSf against scipy.stats.kstwo.sf', () => {
  it(`agrees on every branch within ${KSTWO_ABS} + ${KSTWO_REL}·p`, () => {
    let worst = 0;
    for (const { n, d, sf } of fixture.kstwo_sf) {
      const got = kolmogorovSf(n, d);
      const allowed = KSTWO_ABS + KSTWO_REL * sf;
      worst = Math.max(worst, Math.abs(got - sf) / allowed);
      expect(Math.abs(got - sf), `n=${n} d=${d}`).toBeLessThanOrEqual(allowed);
    }
    // The grid must actually exercise the tolerance, or it says nothing about the bound.
    expect(worst).toBeGreaterThan(0.05);
  });

  it('covers the grid the generator promises: n from 1 to 10⁶, p from 1 down to 0', () => {
    const ns = new Set(fixture.kstwo_sf.map((r) => r.n));
    for (const n of [1, 140, 141, 100_000, 100_001, 1_000_000]) expect(ns.has(n)).toBe(true);
    expect(fixture.kstwo_sf.some((r) => r.sf === 0)).toBe(true);
    expect(fixture.kstwo_sf.some((r) => r.sf === 1)).toBe(true);
  });
});

describe('kolmogorovSf by hand', () => {
  it('n = 1: D₁ = max(U, 1 − U), so P(D₁ >= d) = 2(1 − d) on [1/2, 1] and 1 below', () => {
    for (const d of [0.5, 0.6, 0.75, 0.99]) expect(kolmogorovSf(1, d)).toBeCloseTo(2 * (1 - d), 14);
    expect(kolmogorovSf(1, 0.3)).toBe(1);
  });

  it('is 1 at d <= 0 and 0 at d >= 1, and falls as d grows', () => {
    expect(kolmogorovSf(50, 0)).toBe(1);
    expect(kolmogorovSf(50, 1)).toBe(0);
    let last = 1;
    for (let d = 0.01; d < 1; d += 0.01) {
      const p = kolmogorovSf(50, d);
      expect(p).toBeLessThanOrEqual(last + 1e-15);
      last = p;
    }
  });

  it('refuses a non-integer or non-positive n', () => {
    expect(() => kolmogorovSf(2.5, 0.1)).toThrow(/positive integer/);
    expect(() => kolmogorovSf(0, 0.1)).toThrow(/positive integer/);
  });
});

describe('smirnovSf against scipy.special.smirnov', () => {
  it('agrees within 2e-13 relative (measured: 6.8e-14 at n = 10⁵)', () => {
    for (const { n, d, sf } of fixture.smirnov_sf) {
      expect(Math.abs(smirnovSf(n, d) - sf), `n=${n} d=${d}`).toBeLessThanOrEqual(2e-13 * sf + 1e-300);
    }
  });

  it('n = 1: P(D⁺₁ >= d) = P(U <= 1 − d) = 1 − d', () => {
    for (const d of [0.1, 0.5, 0.9]) expect(smirnovSf(1, d)).toBeCloseTo(1 - d, 15);
  });
});

describe('Pelz–Good series against the exact Durbin matrix', () => {
  // The bounds quoted in kolmogorov.ts; the series is used only for n > 140.
  // z = d·√n from 0.3 up to √2.2 (where the series hands over to smirnov); at n = 5000 only up to 0.9,
  // where the worst case sits, because Durbin's matrix grows with z·√n and gets slow.
  const all = [0.3, 0.5, 0.7, 0.9, 1.1, 1.3, 1.48];
  it.each([
    [141, 2e-6, all],
    [1000, 5e-8, all],
    [5000, 2e-9, all.filter((z) => z <= 0.9)],
  ])('n = %i: |CDF error| <= %s where kolmogorov.ts would use it', (n, bound, zs) => {
    let worst = 0;
    for (const c of zs) {
      const d = c / Math.sqrt(n);
      if (n * d ** 1.5 <= 1.4) continue; // Durbin's own region
      worst = Math.max(worst, Math.abs(pelzGoodCdf(n, d) - durbinCdf(n, d)));
    }
    expect(worst).toBeGreaterThan(0);
    expect(worst).toBeLessThanOrEqual(bound);
  });
});
