/**
 * Settings of a series' event-time windows, their defaults, and the rules that keep them consistent.
 *
 * Layout with the defaults: 1-minute buckets for the newest 2 hours (120 fine buckets), older history
 * folded into 1-hour buckets, which are dropped once they end 24 hours before the newest event time
 * (at most 24 coarse buckets beside the fine ones). Any view up to 2 h − 1 min is answered at 1-minute
 * resolution, longer views (the 24 h one) at 1-hour resolution at their old end.
 */
import { badArgument, badState } from './fail.js';
import { DEFAULT_COMPRESSION, DEFAULT_SCALE, isScaleName, MAX_COMPRESSION, MIN_COMPRESSION, type ScaleName } from './scale.js';
import { normaliseThresholds } from './thresholds.js';

export interface WindowConfig {
  /** Width of a fine bucket. */
  readonly bucketMs: number;
  /** Fine buckets cover this much history, ending with the bucket that holds the watermark. */
  readonly fineSpanMs: number;
  /** Width of the buckets older history is folded into; a multiple of bucketMs. */
  readonly coarseBucketMs: number;
  /** Longest view; a coarse bucket is dropped once it ends this long before the watermark. */
  readonly retentionMs: number;
  /** Events older than watermark − latenessMs are counted late and not added. */
  readonly latenessMs: number;
  /** Events newer than nowMs + maxFutureMs are counted as from the future and not added. */
  readonly maxFutureMs: number;
  /** Low-margin thresholds θ, counted exactly (x < θ). */
  readonly thresholds: readonly number[];
  /** t-digest compression δ of each bucket. */
  readonly compression: number;
  readonly scale: ScaleName;
}

export type WindowOptions = Partial<WindowConfig>;

export const DEFAULT_WINDOW_CONFIG: WindowConfig = Object.freeze({
  bucketMs: 60_000,
  fineSpanMs: 2 * 3_600_000,
  coarseBucketMs: 3_600_000,
  retentionMs: 24 * 3_600_000,
  latenessMs: 2 * 60_000,
  maxFutureMs: 5 * 60_000,
  thresholds: Object.freeze([0.1, 0.2]),
  compression: DEFAULT_COMPRESSION,
  scale: DEFAULT_SCALE,
});

/** The views the service shows by default. */
export const STANDARD_VIEWS: readonly { readonly name: string; readonly durationMs: number }[] = Object.freeze([
  { name: '5m', durationMs: 5 * 60_000 },
  { name: '1h', durationMs: 3_600_000 },
  { name: '24h', durationMs: 24 * 3_600_000 },
]);

/** Bucket counts beyond this are a configuration mistake, not a use case: each bucket holds a digest. */
const MAX_BUCKETS_PER_TIER = 10_000;

interface Problem {
  readonly field: string;
  readonly detail: string;
}

function problemOf(c: WindowConfig): Problem | undefined {
  const durations = ['bucketMs', 'fineSpanMs', 'coarseBucketMs', 'retentionMs', 'latenessMs', 'maxFutureMs'] as const;
  for (const f of durations) {
    const v = c[f];
    const positive = f !== 'latenessMs' && f !== 'maxFutureMs';
    if (typeof v !== 'number' || !Number.isSafeInteger(v) || v < 0 || (positive && v === 0)) {
      return { field: f, detail: `must be a ${positive ? 'positive' : 'non-negative'} whole number of milliseconds` };
    }
  }
  if (c.fineSpanMs % c.bucketMs !== 0) return { field: 'fineSpanMs', detail: 'must be a multiple of bucketMs' };
  if (c.coarseBucketMs % c.bucketMs !== 0) return { field: 'coarseBucketMs', detail: 'must be a multiple of bucketMs' };
  if (c.fineSpanMs / c.bucketMs > MAX_BUCKETS_PER_TIER) return { field: 'fineSpanMs', detail: `makes more than ${MAX_BUCKETS_PER_TIER} fine buckets; use wider buckets` };
  if (c.retentionMs / c.coarseBucketMs > MAX_BUCKETS_PER_TIER) return { field: 'retentionMs', detail: `makes more than ${MAX_BUCKETS_PER_TIER} coarse buckets; use wider coarse buckets` };
  if (c.retentionMs < c.fineSpanMs) return { field: 'retentionMs', detail: 'must be at least fineSpanMs' };
  // An event the lateness rule accepts must still find its fine bucket.
  if (c.latenessMs > c.fineSpanMs - c.bucketMs) return { field: 'latenessMs', detail: 'must be at most fineSpanMs - bucketMs' };
  if (typeof c.compression !== 'number' || !Number.isFinite(c.compression) || c.compression < MIN_COMPRESSION || c.compression > MAX_COMPRESSION) {
    return { field: 'compression', detail: `must be a number in [${MIN_COMPRESSION}, ${MAX_COMPRESSION}]` };
  }
  if (!isScaleName(c.scale)) return { field: 'scale', detail: "must be 'k1', 'k2' or 'k3'" };
  if (!Array.isArray(c.thresholds)) return { field: 'thresholds', detail: 'must be an array of numbers' };
  return undefined;
}

function resolve(options: WindowOptions, fail: (field: string, detail: string) => Error): WindowConfig {
  const merged = { ...DEFAULT_WINDOW_CONFIG, ...options };
  const problem = problemOf(merged);
  if (problem !== undefined) throw fail(problem.field, problem.detail);
  const thresholds = normaliseThresholds(merged.thresholds, 'thresholds', fail);
  return Object.freeze({ ...merged, thresholds });
}

/** Defaults filled in and checked; throws HR_ERR_SKETCH_ARGUMENT naming the bad field. */
export function windowConfig(options: WindowOptions = {}): WindowConfig {
  return resolve(options, (field, detail) => badArgument(field, detail));
}

/** The same checks for a config read back from a state; throws HR_ERR_SKETCH_STATE_INVALID. */
export function windowConfigFromState(value: Record<string, unknown>, path: string): WindowConfig {
  const known = Object.keys(DEFAULT_WINDOW_CONFIG);
  for (const key of known) {
    if (!(key in value)) throw badState(`${path}.${key}`, 'is missing');
  }
  const picked = Object.fromEntries(known.map((k) => [k, value[k]])) as unknown as WindowConfig;
  return resolve(picked, (field, detail) => badState(`${path}.${field}`, detail));
}

export function sameWindowConfig(a: WindowConfig, b: WindowConfig): boolean {
  return (Object.keys(DEFAULT_WINDOW_CONFIG) as (keyof WindowConfig)[]).every((k) =>
    k === 'thresholds' ? a.thresholds.length === b.thresholds.length && a.thresholds.every((t, i) => t === b.thresholds[i]) : a[k] === b[k],
  );
}
