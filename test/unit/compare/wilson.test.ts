import { describe, expect, it } from 'vitest';
import { Z_95, wilsonInterval } from '../../../src/compare/index.js';
import { isHeadroomError } from '../../../src/errors.js';
import { fixture } from './fixture.js';

describe('wilsonInterval against scipy.stats.binomtest(k, n).proportion_ci(method="wilson")', () => {
  it.each(fixture.wilson.map((r) => [r.k, r.n, r.low, r.high] as const))('k = %i, n = %i within 1e-9', (k, n, low, high) => {
    const got = wilsonInterval(k, n);
    expect(Math.abs(got.lower - low)).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(got.upper - high)).toBeLessThanOrEqual(1e-9);
    expect(got.share).toBe(k / n);
  });

  it('the fixture covers k = 0, k = n and n = 1', () => {
    expect(fixture.wilson.some((r) => r.k === 0 && r.n > 1)).toBe(true);
    expect(fixture.wilson.some((r) => r.k === r.n && r.n > 1)).toBe(true);
    expect(fixture.wilson.some((r) => r.n === 1)).toBe(true);
  });
});

describe('wilsonInterval edges', () => {
  it('k = 0 has lower bound exactly 0 and a positive upper bound; k = n the mirror image', () => {
    const none = wilsonInterval(0, 20);
    expect(none.lower).toBe(0);
    // By hand: z²/(n + z²) = 3.841459/23.841459 = 0.161125.
    expect(none.upper).toBeCloseTo(Z_95 ** 2 / (20 + Z_95 ** 2), 15);
    expect(none.upper).toBeCloseTo(0.161125, 6);
    const all = wilsonInterval(20, 20);
    expect(all.upper).toBe(1);
    expect(all.lower).toBeCloseTo(1 - none.upper, 15);
  });

  it('n = 0 gives no share (null) and the vacuous interval [0, 1]', () => {
    expect(wilsonInterval(0, 0)).toEqual({ successes: 0, trials: 0, share: null, lower: 0, upper: 1 });
  });

  it('narrows as n grows at a fixed share', () => {
    const w = (n: number) => {
      const i = wilsonInterval(n / 10, n);
      return i.upper - i.lower;
    };
    expect(w(100)).toBeLessThan(w(10));
    expect(w(10_000)).toBeLessThan(w(100));
  });

  it.each([
    [-1, 10],
    [11, 10],
    [1.5, 10],
    [0, -1],
    [0, Number.NaN],
  ])('rejects k = %s of n = %s with HR_ERR_COMPARE_ARGUMENT', (k, n) => {
    try {
      wilsonInterval(k, n);
      expect.unreachable();
    } catch (error) {
      expect(isHeadroomError(error) && error.code).toBe('HR_ERR_COMPARE_ARGUMENT');
    }
  });
});
