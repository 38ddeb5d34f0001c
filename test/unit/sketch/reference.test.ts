/**
 * Outside check of the digest against NumPy and SciPy (fixture: test/reference/sketch_reference.json,
 * made by test/reference/gen_sketch.py). The samples are regenerated here from the shared generator;
 * the fixture pins NumPy's view of them.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { MarginDigest } from '../../../src/sketch/digest.js';
import { distributionKs, exactKs, ExactSample, makeSamples, type Shape } from './samples.js';

interface StreamFixture {
  readonly shape: Shape;
  readonly key: number;
  readonly head: readonly number[];
  readonly quantiles: readonly number[];
  readonly rankBelow: readonly number[];
  readonly rankAtOrBelow: readonly number[];
}

interface Fixture {
  readonly n: number;
  readonly q: readonly number[];
  readonly streams: readonly StreamFixture[];
  readonly ks: readonly { readonly a: string; readonly b: string; readonly statistic: number }[];
}

const fixture = JSON.parse(readFileSync(new URL('../../reference/sketch_reference.json', import.meta.url), 'utf8')) as Fixture;

/** Rank-error bound for q in [0.01, 0.99] on 1e5 samples, and KS bound, from the project's targets. */
const RANK_ERROR = 0.002;
const KS_ERROR = 0.005;

interface Made {
  readonly exact: ExactSample;
  readonly digest: MarginDigest;
  readonly values: Float64Array;
}

const made = new Map<string, Made>();
function stream(shape: Shape, key: number): Made {
  const id = `${shape}/${key}`;
  let m = made.get(id);
  if (m === undefined) {
    const values = makeSamples(shape, key, fixture.n);
    const digest = new MarginDigest();
    for (const x of values) digest.add(x);
    m = { exact: new ExactSample(values), digest, values };
    made.set(id, m);
  }
  return m;
}

function byId(id: string): Made {
  const [shape, key] = id.split('/');
  return stream(shape as Shape, Number(key));
}

describe.each(fixture.streams.map((s) => [`${s.shape}/${s.key}`, s] as const))('sketch vs NumPy: %s', (_id, s) => {
  it('regenerates the same samples as the generator script', () => {
    const { values, exact } = stream(s.shape, s.key);
    expect(Array.from(values.subarray(0, s.head.length))).toEqual(s.head);
    // numpy.quantile(method='inverted_cdf') and numpy.searchsorted give the exact quantiles and their ranks.
    fixture.q.forEach((q, i) => {
      expect(exact.invertedCdf(q)).toBe(s.quantiles[i]);
      expect(exact.countBelow(s.quantiles[i] as number) / fixture.n).toBe(s.rankBelow[i]);
      expect(exact.countAtOrBelow(s.quantiles[i] as number) / fixture.n).toBe(s.rankAtOrBelow[i]);
    });
  });

  it(`quantile rank error against numpy.quantile(method='inverted_cdf') ranks is at most ${RANK_ERROR}`, () => {
    const { digest, exact } = stream(s.shape, s.key);
    fixture.q.forEach((q) => {
      // Rank error = distance from q to the exact rank interval [F(x-), F(x)] of the sketch's quantile x.
      expect(exact.rankError(digest.quantile(q), q), `q = ${q}`).toBeLessThanOrEqual(RANK_ERROR);
    });
  });

  it(`quantile rank error is at most ${RANK_ERROR} on a fine grid of q in [0.01, 0.99]`, () => {
    const { digest, exact } = stream(s.shape, s.key);
    let worst = 0;
    for (let k = 10; k <= 990; k += 1) worst = Math.max(worst, exact.rankError(digest.quantile(k / 1000), k / 1000));
    expect(worst).toBeLessThanOrEqual(RANK_ERROR);
  });

  it('the sketch CDF is within the rank bound of the exact CDF, atoms included', () => {
    const { digest, exact, values } = stream(s.shape, s.key);
    for (let i = 0; i < values.length; i += 97) {
      const x = values[i] as number;
      expect(Math.abs(digest.cdf(x) - exact.countAtOrBelow(x) / fixture.n)).toBeLessThanOrEqual(RANK_ERROR);
      expect(Math.abs(digest.cdfBelow(x) - exact.countBelow(x) / fixture.n)).toBeLessThanOrEqual(RANK_ERROR);
    }
  });
});

describe.each(fixture.ks.map((p) => [`${p.a} vs ${p.b}`, p] as const))('KS between sketches: %s', (_name, p) => {
  it('the exact D here equals scipy.stats.ks_2samp(...).statistic', () => {
    expect(exactKs(byId(p.a).exact, byId(p.b).exact)).toBeCloseTo(p.statistic, 12);
  });

  it(`the D of two sketches is within ${KS_ERROR} of the exact D`, () => {
    const d = distributionKs(byId(p.a).digest, byId(p.b).digest);
    expect(Math.abs(d - p.statistic)).toBeLessThanOrEqual(KS_ERROR);
  });
});
