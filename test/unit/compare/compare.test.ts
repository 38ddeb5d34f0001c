import { describe, expect, it } from 'vitest';
import { BernoulliCusum, compareToReference, ksTest, psi, quantileShifts, wasserstein1 } from '../../../src/compare/index.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { fixture } from './fixture.js';

const pair = fixture.pairs.find((p) => p.name.startsWith('discrete atoms n=200'));
if (pair === undefined) throw new Error('fixture pair missing');
const live = EmpiricalDistribution.fromSamples(pair.a);
const reference = EmpiricalDistribution.fromSamples(pair.b);
const empty = EmpiricalDistribution.fromSamples([]);

describe('compareToReference', () => {
  it('returns every figure the single functions give, in one plain object', () => {
    const report = compareToReference(live, reference);
    expect(report.state).toBe('ok');
    expect(report.liveCount).toBe(200);
    expect(report.referenceCount).toBe(150);
    expect(report.ks).toEqual(ksTest(live, reference));
    expect(report.psi).toEqual(psi(live, reference));
    expect(report.wasserstein).toBe(wasserstein1(live, reference));
    expect(report.quantileShifts).toEqual(quantileShifts(live, reference));
    // And against SciPy directly, so the wiring cannot swap live and reference unnoticed.
    expect(report.ks?.statistic).toBeCloseTo(pair.ks_asymp.statistic, 12);
    expect(report.ks?.sign).toBe(pair.ks_asymp.sign);
    expect(report.wasserstein).toBeCloseTo(pair.wasserstein, 9);
    expect(report.lowMargin).toEqual([]);
    expect(report.cusum).toBeNull();
  });

  it('survives JSON: no NaN, no class instances', () => {
    const report = compareToReference(live, reference, { lowMargin: [{ threshold: 0.2, low: 0, count: 0 }] });
    const text = JSON.stringify(report, (_k, v: unknown) => {
      if (typeof v === 'number' && Number.isNaN(v)) throw new Error('NaN in report');
      return v;
    });
    // ±Infinity appears only as PSI's open outer bin edges, which JSON turns into null.
    expect(JSON.parse(text).psi.bins[0].lower).toBeNull();
  });

  it('reports low-margin shares with Wilson intervals from the exact counters', () => {
    const report = compareToReference(live, reference, {
      lowMargin: [
        { threshold: 0.2, low: 30, count: 200, referenceShare: 0.1 },
        { threshold: 0.5, low: 80, count: 200 },
      ],
    });
    const [stored, estimated] = report.lowMargin;
    expect(stored?.live.share).toBe(0.15);
    expect(stored?.live.lower).toBeLessThan(0.15);
    expect(stored?.live.upper).toBeGreaterThan(0.15);
    expect(stored?.referenceShare).toBe(0.1);
    expect(stored?.difference).toBeCloseTo(0.05, 15);
    // No stored share: taken from the reference distribution, margins strictly below θ.
    const below = pair.b.filter((m) => m < 0.5).length / pair.b.length;
    expect(estimated?.referenceShare).toBe(below);
  });

  it('copies a CUSUM chart state into the report', () => {
    const chart = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 3 });
    chart.updateMany([true, false, true]);
    const report = compareToReference(live, reference, { cusum: chart });
    expect(report.cusum).toEqual(chart.toState());
    expect(report.cusum?.events).toBe(3);
  });

  it("says state 'empty' with null figures when the live window has no events", () => {
    const report = compareToReference(empty, reference, { lowMargin: [{ threshold: 0.2, low: 0, count: 0, referenceShare: 0.1 }] });
    expect(report.state).toBe('empty');
    expect(report.ks).toBeNull();
    expect(report.psi).toBeNull();
    expect(report.wasserstein).toBeNull();
    expect(report.quantileShifts.every((q) => q.live === null && q.shift === null && q.reference !== null)).toBe(true);
    expect(report.lowMargin[0]?.live).toEqual({ successes: 0, trials: 0, share: null, lower: 0, upper: 1 });
    expect(report.lowMargin[0]?.difference).toBeNull();
  });

  it("says state 'empty' for an empty reference too", () => {
    const report = compareToReference(live, empty, { lowMargin: [{ threshold: 0.2, low: 3, count: 10 }] });
    expect(report.state).toBe('empty');
    expect(report.lowMargin[0]?.referenceShare).toBeNull();
  });

  it('passes PSI edges, ε and quantile levels through', () => {
    const report = compareToReference(live, reference, { psiEdges: [0.5], psiEpsilon: 0, quantiles: [0.5] });
    expect(report.psi?.bins).toHaveLength(2);
    expect(report.psi?.epsilon).toBe(0);
    expect(report.quantileShifts.map((q) => q.q)).toEqual([0.5]);
  });

  it('refuses bad arguments with HR_ERR_COMPARE_ARGUMENT rather than reporting nonsense', () => {
    expect(() => compareToReference(live, reference, { lowMargin: [{ threshold: 0.2, low: 5, count: 3 }] })).toThrow(
      expect.objectContaining({ code: 'HR_ERR_COMPARE_ARGUMENT' }),
    );
    expect(() => compareToReference(live, reference, { lowMargin: [{ threshold: Number.NaN, low: 0, count: 3 }] })).toThrow(
      expect.objectContaining({ code: 'HR_ERR_COMPARE_ARGUMENT' }),
    );
    expect(() =>
      compareToReference(live, reference, { lowMargin: [{ threshold: 0.2, low: 0, count: 3, referenceShare: 1.5 }] }),
    ).toThrow(expect.objectContaining({ code: 'HR_ERR_COMPARE_ARGUMENT' }));
  });
});
