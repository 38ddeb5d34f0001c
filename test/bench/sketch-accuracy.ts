/**
 * Accuracy (and size, and speed) of the margin digest against exact ranks, side by side with the npm
 * `tdigest` package: `npx tsx test/bench/sketch-accuracy.ts`.
 *
 * Samples: the three seeded shapes of test/unit/sketch/samples.ts (1e5 each, two streams per shape;
 * NumPy agrees with their exact quantiles, see test/unit/sketch/reference.test.ts). Figures:
 * - rank error |F_exact(sketch quantile(q)) − q| (distance to the rank interval [F(x−), F(x)]) at seven q,
 *   and the worst over q = 0.010, 0.011, ..., 0.990;
 * - |D(sketch, sketch) − D(exact, exact)| for KS between streams;
 * - centroids, serialised JSON bytes, nanoseconds per add;
 * - "merged": the same 1e5 samples fed to 100 digests (buckets) and merged, as a window view does.
 * Samples are also a fourth, bench-only shape with many small atoms (atoms21, below).
 */
import { MarginDigest } from '../../src/sketch/digest.js';
import type { MarginDistribution } from '../../src/sketch/distribution.js';
import type { ScaleName } from '../../src/sketch/scale.js';
import { distributionKs, exactKs, ExactSample, makeSamples, SHAPES, uniform, type Shape } from '../unit/sketch/samples.js';
import { PackageDigest } from './sketch-package-digest.js';

const N = 100_000;
const QS = [0.001, 0.01, 0.1, 0.5, 0.9, 0.99, 0.999];
const KEYS: Record<Shape, readonly [number, number]> = { uniform: [101, 102], beta82: [201, 202], discrete: [301, 302] };
const PAIRS: readonly [string, string][] = [
  ['uniform/101', 'uniform/102'],
  ['beta82/201', 'beta82/202'],
  ['discrete/301', 'discrete/302'],
  ['uniform/101', 'beta82/201'],
  ['discrete/301', 'uniform/101'],
];

interface Candidate {
  readonly name: string;
  build(values: Float64Array): { d: MarginDistribution; centroids: number; bytes: number; nsPerAdd: number };
}

function ours(scale: ScaleName, compression: number, parts = 1): Candidate {
  return {
    name: `MarginDigest ${scale} δ=${compression}${parts > 1 ? ` merged from ${parts}` : ''}`,
    build(values) {
      const t0 = process.hrtime.bigint();
      const digests = Array.from({ length: parts }, () => new MarginDigest({ compression, scale }));
      values.forEach((x, i) => (digests[Math.floor((i * parts) / values.length)] as MarginDigest).add(x));
      const d = parts === 1 ? (digests[0] as MarginDigest) : MarginDigest.merged(digests, { compression, scale });
      const centroids = d.centroidCount();
      const ns = Number(process.hrtime.bigint() - t0) / values.length;
      return { d, centroids, bytes: JSON.stringify(d.toState()).length, nsPerAdd: ns };
    },
  };
}

function npmPackage(delta: number): Candidate {
  return {
    name: `npm tdigest δ=${delta} (wrapped)`,
    build(values) {
      const t0 = process.hrtime.bigint();
      const d = new PackageDigest(delta);
      for (const x of values) d.add(x);
      d.finish();
      const ns = Number(process.hrtime.bigint() - t0) / values.length;
      return { d, centroids: d.size(), bytes: d.serialisedBytes(), nsPerAdd: ns };
    },
  };
}

const candidates: Candidate[] = [
  npmPackage(0.01),
  npmPackage(0.005),
  ours('k1', 100),
  ours('k1', 200),
  ours('k2', 100),
  ours('k2', 200),
  ours('k3', 200),
  ours('k1', 200, 100),
];

const exact = new Map<string, ExactSample>();
const values = new Map<string, Float64Array>();
for (const shape of SHAPES) {
  for (const key of KEYS[shape]) {
    const v = makeSamples(shape, key, N);
    values.set(`${shape}/${key}`, v);
    exact.set(`${shape}/${key}`, new ExactSample(v));
  }
}

/**
 * Not in the fixture: 21 small atoms (0.05, 0.10, ..., 1 by rounding; ~0.7% each) among continuous
 * Beta(8, 1) mass, plus 30% exact ones and 5% exact zeros. The case where treating every atom as an end
 * of the scale costs centroids.
 */
values.set(
  'atoms21/1',
  Float64Array.from({ length: N }, (_, i) => {
    const u = uniform(1, i);
    if (u < 0.3) return 1;
    if (u < 0.35) return 0;
    if (u < 0.5) return Math.round(uniform(2, i) * 20) / 20;
    return uniform(3, i) ** 0.125;
  }),
);
exact.set('atoms21/1', new ExactSample(values.get('atoms21/1') as Float64Array));

const fmt = (x: number): string => x.toExponential(1);
console.log(`rank error at q = ${QS.join(', ')}; worst on [0.01, 0.99]; n = ${N} per stream\n`);
for (const c of candidates) {
  console.log(c.name);
  const built = new Map<string, MarginDistribution>();
  for (const [id, v] of values) {
    const b = c.build(v);
    built.set(id, b.d);
    if (id.endsWith('/102') || id.endsWith('/202') || id.endsWith('/302')) continue;
    const ex = exact.get(id) as ExactSample;
    let worst = 0;
    for (let k = 10; k <= 990; k += 1) worst = Math.max(worst, ex.rankError(b.d.quantile(k / 1000), k / 1000));
    const at = QS.map((q) => fmt(ex.rankError(b.d.quantile(q), q))).join(' ');
    const atoms = id.startsWith('discrete') || id.startsWith('atoms') ? ` cdf(0)−F(0) ${fmt(b.d.cdf(0) - ex.countAtOrBelow(0) / N)}` : '';
    console.log(
      `  ${id.padEnd(13)} ${at} | worst ${fmt(worst)} | ${b.centroids} centroids, ${b.bytes} B, ${b.nsPerAdd.toFixed(0)} ns/add${atoms}`,
    );
  }
  const ks = PAIRS.map(([a, b]) => {
    const delta = distributionKs(built.get(a) as MarginDistribution, built.get(b) as MarginDistribution) - exactKs(exact.get(a) as ExactSample, exact.get(b) as ExactSample);
    return `${a.split('/')[0]}~${b.split('/')[0]} ${delta >= 0 ? '+' : ''}${fmt(delta)}`;
  });
  console.log(`  KS ΔD: ${ks.join(', ')}\n`);
}
