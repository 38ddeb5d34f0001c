/**
 * Serialised forms of digests, summaries and windows (plain JSON values), and the checks that read them
 * back. A checkpoint or a reference file may be old, truncated or hand-edited: every check names the
 * field it rejects (e.g. `window.fine[3].summary.digest.centroids[7][1]`) so the fix is obvious.
 *
 * Digest, version 1:
 *     { "v": 1, "compression": 100, "scale": "k2", "centroids": [[0, 60000], [0.0123, 41, 0.0101, 0.0150], ...] }
 * A pair [x, w] is w observations of exactly x; a quadruple [mean, w, lo, hi] (lo < hi) is w observations
 * spread over [lo, hi] with that mean. Sorted by mean. Doubles survive JSON exactly, so a round trip is exact.
 *
 * Summary: { "thresholds": [0.1, 0.2], "count", "sum", "min", "max" (null when empty), "below": [...], "digest" }.
 * Window, version 1: { "v": 1, "config": {...}, "watermarkMs": number | null, "added", "late", "future",
 *     "fine": [{ "startMs", "summary" }, ...], "coarse": [...] }, buckets in ascending start order.
 */
import { badState } from './fail.js';
import { isScaleName, MAX_COMPRESSION, MIN_COMPRESSION, type ScaleName } from './scale.js';
import { normaliseThresholds, sameThresholds } from './thresholds.js';
import { windowConfigFromState, type WindowConfig } from './window-config.js';

export type CentroidTuple = [value: number, weight: number] | [mean: number, weight: number, lo: number, hi: number];

export interface DigestState {
  readonly v: 1;
  readonly compression: number;
  readonly scale: ScaleName;
  readonly centroids: readonly CentroidTuple[];
  /** Centroids merged in and not yet folded, in the order they came; absent when none. */
  readonly merging?: readonly CentroidTuple[];
  /** Values added and not yet folded, [x, weight] in the order added; absent when none. */
  readonly points?: readonly (readonly [number, number])[];
}

export interface SummaryState {
  readonly thresholds: readonly number[];
  readonly count: number;
  readonly sum: number;
  readonly min: number | null;
  readonly max: number | null;
  readonly below: readonly number[];
  readonly digest: DigestState;
}

export interface BucketState {
  readonly startMs: number;
  readonly summary: SummaryState;
}

export interface WindowState {
  readonly v: 1;
  readonly config: WindowConfig;
  readonly watermarkMs: number | null;
  readonly added: number;
  readonly late: number;
  readonly future: number;
  readonly fine: readonly BucketState[];
  readonly coarse: readonly BucketState[];
}

function record(value: unknown, path: string): Record<string, unknown> {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) throw badState(path, 'must be an object');
  return value as Record<string, unknown>;
}

function list(value: unknown, path: string): readonly unknown[] {
  if (!Array.isArray(value)) throw badState(path, 'must be an array');
  return value;
}

function finite(value: unknown, path: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw badState(path, 'must be a finite number');
  return value;
}

function nonNegative(value: unknown, path: string): number {
  const n = finite(value, path);
  if (n < 0) throw badState(path, 'must not be negative');
  return n;
}

function version(value: Record<string, unknown>, path: string): 1 {
  if (value.v !== 1) throw badState(`${path}.v`, `is ${JSON.stringify(value.v)}; this build reads version 1`);
  return 1;
}

/** Float sums of the same weights in another order may differ in the last bits. */
function sameTotal(a: number, b: number): boolean {
  return Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a), Math.abs(b));
}

export function parseDigestState(value: unknown, path = 'digest'): DigestState {
  const o = record(value, path);
  version(o, path);
  const compression = finite(o.compression, `${path}.compression`);
  if (compression < MIN_COMPRESSION || compression > MAX_COMPRESSION) {
    throw badState(`${path}.compression`, `must be in [${MIN_COMPRESSION}, ${MAX_COMPRESSION}]`);
  }
  if (!isScaleName(o.scale)) throw badState(`${path}.scale`, "must be 'k1', 'k2' or 'k3'");
  const centroids: CentroidTuple[] = [];
  let previousMean = -Infinity;
  list(o.centroids, `${path}.centroids`).forEach((entry, i) => {
    const at = `${path}.centroids[${i}]`;
    const t = list(entry, at);
    if (t.length !== 2 && t.length !== 4) throw badState(at, 'must be [value, weight] or [mean, weight, lo, hi]');
    const mean = finite(t[0], `${at}[0]`);
    const weight = finite(t[1], `${at}[1]`);
    if (weight <= 0) throw badState(`${at}[1]`, '(weight) must be positive');
    if (mean < previousMean) throw badState(`${at}[0]`, '(mean) is smaller than the one before; centroids must be sorted by mean');
    previousMean = mean;
    if (t.length === 2) {
      centroids.push([mean, weight]);
      return;
    }
    const lo = finite(t[2], `${at}[2]`);
    const hi = finite(t[3], `${at}[3]`);
    if (!(lo < hi)) throw badState(`${at}[2]`, '(lo) must be below hi; a single value is written [value, weight]');
    if (mean < lo || mean > hi) throw badState(`${at}[0]`, '(mean) must lie in [lo, hi]');
    centroids.push([mean, weight, lo, hi]);
  });
  const state: { -readonly [K in keyof DigestState]: DigestState[K] } = { v: 1, compression, scale: o.scale, centroids };
  if (o.merging !== undefined) {
    state.merging = list(o.merging, `${path}.merging`).map((entry, i) => {
      const at = `${path}.merging[${i}]`;
      const t = list(entry, at);
      if (t.length !== 2 && t.length !== 4) throw badState(at, 'must be [value, weight] or [mean, weight, lo, hi]');
      const mean = finite(t[0], `${at}[0]`);
      const weight = finite(t[1], `${at}[1]`);
      if (weight <= 0) throw badState(`${at}[1]`, '(weight) must be positive');
      if (t.length === 2) return [mean, weight] as CentroidTuple;
      const lo = finite(t[2], `${at}[2]`);
      const hi = finite(t[3], `${at}[3]`);
      if (!(lo <= mean && mean <= hi)) throw badState(`${at}[0]`, '(mean) must lie in [lo, hi]');
      return [mean, weight, lo, hi] as CentroidTuple;
    });
  }
  if (o.points !== undefined) {
    state.points = list(o.points, `${path}.points`).map((entry, i) => {
      const at = `${path}.points[${i}]`;
      const t = list(entry, at);
      if (t.length !== 2) throw badState(at, 'must be [value, weight]');
      const weight = finite(t[1], `${at}[1]`);
      if (weight <= 0) throw badState(`${at}[1]`, '(weight) must be positive');
      return [finite(t[0], `${at}[0]`), weight] as const;
    });
  }
  return state;
}

/** Every value range a digest state holds: its centroids, and what waits to be folded. */
function digestRanges(d: DigestState): { lo: number; hi: number; weight: number; at: string }[] {
  const of = (c: CentroidTuple, at: string) => ({ lo: c.length === 2 ? c[0] : c[2], hi: c.length === 2 ? c[0] : c[3], weight: c[1], at });
  return [
    ...d.centroids.map((c, i) => of(c, `centroids[${i}]`)),
    ...(d.merging ?? []).map((c, i) => of(c, `merging[${i}]`)),
    ...(d.points ?? []).map(([x, w], i) => ({ lo: x, hi: x, weight: w, at: `points[${i}]` })),
  ];
}

export function parseSummaryState(value: unknown, path = 'summary'): SummaryState {
  const o = record(value, path);
  const thresholds = normaliseThresholds(
    list(o.thresholds, `${path}.thresholds`) as number[],
    `${path}.thresholds`,
    (field, detail) => badState(field, detail),
  );
  if (!sameThresholds(thresholds, o.thresholds as number[])) throw badState(`${path}.thresholds`, 'must be in ascending order');
  const count = nonNegative(o.count, `${path}.count`);
  const sum = finite(o.sum, `${path}.sum`);
  const below = list(o.below, `${path}.below`).map((b, i) => nonNegative(b, `${path}.below[${i}]`));
  if (below.length !== thresholds.length) throw badState(`${path}.below`, `must hold one count per threshold (${thresholds.length})`);
  below.forEach((b, i) => {
    if (b > count || (i > 0 && b < (below[i - 1] as number))) {
      throw badState(`${path}.below[${i}]`, 'must not exceed count nor the count at a larger threshold');
    }
  });
  const digest = parseDigestState(o.digest, `${path}.digest`);
  const ranges = digestRanges(digest);
  let weight = 0;
  for (const r of ranges) weight += r.weight;
  if (!sameTotal(weight, count)) throw badState(`${path}.count`, `is ${count} but the digest holds ${weight}`);
  if (count === 0) {
    if (o.min !== null) throw badState(`${path}.min`, 'must be null when count is 0');
    if (o.max !== null) throw badState(`${path}.max`, 'must be null when count is 0');
    return { thresholds, count, sum, min: null, max: null, below, digest };
  }
  const min = finite(o.min, `${path}.min`);
  const max = finite(o.max, `${path}.max`);
  if (min > max) throw badState(`${path}.min`, 'must not exceed max');
  for (const r of ranges) if (r.lo < min || r.hi > max) throw badState(`${path}.digest.${r.at}`, `lies outside [min, max] = [${min}, ${max}]`);
  return { thresholds, count, sum, min, max, below, digest };
}

function parseBuckets(value: unknown, path: string, widthMs: number, config: WindowConfig): BucketState[] {
  let previous = -Infinity;
  return list(value, path).map((entry, i) => {
    const at = `${path}[${i}]`;
    const o = record(entry, at);
    const startMs = finite(o.startMs, `${at}.startMs`);
    if (!Number.isSafeInteger(startMs) || startMs % widthMs !== 0) throw badState(`${at}.startMs`, `must be a multiple of ${widthMs}`);
    if (startMs <= previous) throw badState(`${at}.startMs`, 'must be above the one before; buckets are kept in ascending order');
    previous = startMs;
    const summary = parseSummaryState(o.summary, `${at}.summary`);
    if (!sameThresholds(summary.thresholds, config.thresholds)) throw badState(`${at}.summary.thresholds`, 'differ from config.thresholds');
    if (summary.digest.compression !== config.compression || summary.digest.scale !== config.scale) {
      throw badState(`${at}.summary.digest`, 'compression or scale differs from the config');
    }
    return { startMs, summary };
  });
}

export function parseWindowState(value: unknown, path = 'window'): WindowState {
  const o = record(value, path);
  version(o, path);
  const config = windowConfigFromState(record(o.config, `${path}.config`), `${path}.config`);
  const watermarkMs = o.watermarkMs === null ? null : finite(o.watermarkMs, `${path}.watermarkMs`);
  const added = nonNegative(o.added, `${path}.added`);
  const late = nonNegative(o.late, `${path}.late`);
  const future = nonNegative(o.future, `${path}.future`);
  const fine = parseBuckets(o.fine, `${path}.fine`, config.bucketMs, config);
  const coarse = parseBuckets(o.coarse, `${path}.coarse`, config.coarseBucketMs, config);
  if (watermarkMs === null && fine.length + coarse.length > 0) throw badState(`${path}.watermarkMs`, 'is null but there are buckets');
  if (watermarkMs !== null) {
    const newest = Math.floor(watermarkMs / config.bucketMs) * config.bucketMs;
    const fineStart = newest - config.fineSpanMs + config.bucketMs;
    fine.forEach((b, i) => {
      if (b.startMs < fineStart || b.startMs > newest) throw badState(`${path}.fine[${i}].startMs`, 'lies outside the fine span ending at watermarkMs');
    });
    coarse.forEach((b, i) => {
      if (b.startMs + config.coarseBucketMs <= watermarkMs - config.retentionMs || b.startMs >= fineStart) {
        throw badState(`${path}.coarse[${i}].startMs`, 'lies outside the coarse span before the fine buckets');
      }
    });
  }
  return { v: 1, config, watermarkMs, added, late, future, fine, coarse };
}
