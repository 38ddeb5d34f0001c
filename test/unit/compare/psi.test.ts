import { describe, expect, it } from 'vitest';
import { DEFAULT_PSI_EPSILON, psi, psiBand, referenceDecileEdges } from '../../../src/compare/index.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';

const repeat = (value: number, times: number): number[] => Array.from({ length: times }, () => value);
const sample = (parts: readonly (readonly [value: number, times: number])[]) =>
  EmpiricalDistribution.fromSamples(parts.flatMap(([v, t]) => repeat(v, t)));

describe('psi worked by hand on four bins', () => {
  // Edges 0.25, 0.5, 0.75 → bins (−∞, .25), [.25, .5), [.5, .75), [.75, ∞).
  // Reference: 25 events in each bin → q = (0.25, 0.25, 0.25, 0.25).
  // Live:      10, 20, 30, 40 of 100 → p = (0.10, 0.20, 0.30, 0.40).
  // Terms (p − q)·ln(p/q):
  //   (0.10 − 0.25)·ln(0.4)  = −0.15 · −0.916290732 = 0.137443610
  //   (0.20 − 0.25)·ln(0.8)  = −0.05 · −0.223143551 = 0.011157178
  //   (0.30 − 0.25)·ln(1.2)  =  0.05 ·  0.182321557 = 0.009116078
  //   (0.40 − 0.25)·ln(1.6)  =  0.15 ·  0.470003629 = 0.070500544
  //   sum                                            = 0.228217410
  const reference = sample([
    [0.1, 25],
    [0.3, 25],
    [0.6, 25],
    [0.9, 25],
  ]);
  const live = sample([
    [0.1, 10],
    [0.3, 20],
    [0.6, 30],
    [0.9, 40],
  ]);
  const edges = [0.25, 0.5, 0.75];

  it('with ε = 0 gives the sum of the four terms', () => {
    const got = psi(live, reference, { edges, epsilon: 0 });
    expect(got.value).toBeCloseTo(0.22821741, 8);
    expect(got.band).toBe('moderate');
    // Bin shares are differences of cdfBelow values, so equal up to rounding (0.3 − 0.1 ≠ 0.2 in binary).
    got.bins.forEach((b, i) => {
      expect(b.live).toBeCloseTo([0.1, 0.2, 0.3, 0.4][i] as number, 15);
      expect(b.reference).toBeCloseTo(0.25, 15);
    });
    expect(got.bins.map((b) => b.contribution.toFixed(9))).toEqual(['0.137443610', '0.011157178', '0.009116078', '0.070500544']);
    expect(got.bins[0]?.lower).toBe(Number.NEGATIVE_INFINITY);
    expect(got.bins[3]?.upper).toBe(Number.POSITIVE_INFINITY);
  });

  it('with the default ε moves it only slightly', () => {
    // p' = (p + ε)/(1 + 4ε): each proportion moves by < 4ε, so the PSI moves by well under 1e-3.
    const got = psi(live, reference, { edges });
    expect(got.epsilon).toBe(DEFAULT_PSI_EPSILON);
    expect(Math.abs(got.value - 0.22821741)).toBeLessThan(1e-3);
    expect(got.value).not.toBe(0.22821741);
  });

  it('prices an empty live bin through ε instead of returning infinity', () => {
    // Live: 0, 30, 30, 40. Bin 1 with ε = 1e-4: p' = 1e-4/1.0004, q' = 0.2501/1.0004;
    // (p' − q')·ln(p'/q') = (−0.25/1.0004)·ln(1/2501) = 0.2499·7.824446 = 1.955330 (4 d.p. below).
    const sparse = sample([
      [0.3, 30],
      [0.6, 30],
      [0.9, 40],
    ]);
    const got = psi(sparse, reference, { edges, epsilon: 1e-4 });
    expect(got.bins[0]?.contribution).toBeCloseTo((-0.25 / 1.0004) * Math.log(1 / 2501), 12);
    expect(got.bins[0]?.contribution).toBeCloseTo(1.95533, 4);
    expect(Number.isFinite(got.value)).toBe(true);
    expect(psi(sparse, reference, { edges, epsilon: 0 }).value).toBe(Number.POSITIVE_INFINITY);
  });

  it('is zero for identical distributions', () => {
    expect(psi(reference, reference, { edges }).value).toBe(0);
  });
});

describe('psi on atoms', () => {
  // Reference: 60 % spread over 0.05 … 0.55 and 40 % exactly at 1.0. Its 70 %, 80 % and 90 % quantiles
  // are all 1.0, so the ten deciles collapse to seven cuts and the atom is a bin of its own.
  const spread = Array.from({ length: 60 }, (_, i) => 0.05 + i / 120);
  const reference = EmpiricalDistribution.fromSamples([...spread, ...repeat(1, 40)]);

  it('merges the repeated decile edges and puts the whole atom in one bin on both sides', () => {
    const edges = referenceDecileEdges(reference);
    expect(edges.filter((e) => e === 1)).toHaveLength(3);
    const got = psi(reference, reference);
    expect(got.bins.length).toBe(8); // 7 distinct cuts → 8 bins
    const atomBin = got.bins[got.bins.length - 1];
    expect(atomBin?.lower).toBe(1);
    expect(atomBin?.reference).toBeCloseTo(0.4, 15);
    // No reference mass sits between the 60 % edge and 1.0, so that bin is empty on the reference side.
    expect(got.value).toBe(0);
  });

  it('sees a growing atom at 1.0 (live 70 % at 1.0) and only that', () => {
    const live = EmpiricalDistribution.fromSamples([...spread.filter((_, i) => i % 2 === 0), ...repeat(1, 70)]);
    const got = psi(live, reference);
    const atomBin = got.bins[got.bins.length - 1];
    expect(atomBin?.live).toBeCloseTo(0.7, 15);
    expect(atomBin?.reference).toBeCloseTo(0.4, 15);
    // The atom bin's term dominates: (0.7 − 0.4)·ln(0.7/0.4) ≈ 0.168 (before ε).
    expect(atomBin?.contribution).toBeCloseTo(0.3 * Math.log(0.7 / 0.4), 3);
    expect(got.value).toBeGreaterThan(0.25);
    expect(got.band).toBe('major');
  });

  it('puts live mass sitting exactly on a cut into the bin that starts there', () => {
    const cuts = [...new Set(referenceDecileEdges(reference))];
    const onCut = cuts[2] as number;
    const live = EmpiricalDistribution.fromSamples(repeat(onCut, 10));
    const got = psi(live, reference);
    const holding = got.bins.filter((b) => b.live > 0);
    expect(holding).toHaveLength(1);
    expect(holding[0]?.lower).toBe(onCut);
    expect(holding[0]?.live).toBe(1);
  });

  it('rejects edges that are not ascending or not finite', () => {
    expect(() => psi(reference, reference, { edges: [0.5, 0.2] })).toThrow(/ascending/);
    expect(() => psi(reference, reference, { edges: [Number.NaN] })).toThrow(/finite/);
    expect(() => psi(reference, reference, { epsilon: -1 })).toThrow(/epsilon/);
  });
});

describe('psiBand', () => {
  it('uses the 0.1 / 0.25 rule of thumb, inclusive at the lower edge of each band', () => {
    expect(psiBand(0.0999)).toBe('stable');
    expect(psiBand(0.1)).toBe('moderate');
    expect(psiBand(0.2499)).toBe('moderate');
    expect(psiBand(0.25)).toBe('major');
  });
});
