/**
 * A series' low-margin share over time, bucket by bucket, against its reference's share: what the page
 * draws and `GET /api/series/:model/:version/:segment/history` answers. The windows' own buckets are the
 * history (1-minute ones for the fine span, hour ones before it), so it survives a reload of the page and
 * a restart of the watcher alike. Pure: no clock, no I/O.
 */
import { wilsonInterval } from '../compare/index.js';
import type { ReferenceSegment } from '../reference/index.js';
import type { BucketCounts, MarginWindows } from '../sketch/index.js';

export interface HistoryShare {
  readonly threshold: number;
  readonly low: number;
  /** low / count; null for an empty bucket. */
  readonly share: number | null;
  /** Wilson 95% interval; [0, 1] for an empty bucket. */
  readonly lower: number;
  readonly upper: number;
}

export interface HistoryBucket {
  readonly startMs: number;
  readonly endMs: number;
  readonly count: number;
  readonly lowMargin: readonly HistoryShare[];
}

export interface ReferenceShare {
  readonly threshold: number;
  /** null when the reference file has no share at this θ. */
  readonly share: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
}

export interface SeriesHistory {
  readonly bucketMs: number;
  readonly thresholds: readonly number[];
  readonly buckets: readonly HistoryBucket[];
  readonly reference: { readonly state: 'none' } | { readonly state: 'loaded'; readonly n: number; readonly lowMargin: readonly ReferenceShare[] };
}

/**
 * `bucketMs` must be a whole multiple of the windows' fine bucket (the caller checks). Buckets are added
 * up in groups aligned to the Unix epoch, `bucketMs` wide; a bucket that does not fit in one group (an
 * hour bucket of older history, with `bucketMs` under an hour) is given as it is, wider than asked, since
 * a folded bucket cannot be split. Each entry's span is that of the buckets it holds, so the newest one
 * ends where its bucket will, not at the watermark. `thresholds` must be some of the windows' own.
 */
export function seriesHistory(windows: MarginWindows, reference: ReferenceSegment | undefined, thresholds: readonly number[], bucketMs: number): SeriesHistory {
  const config = windows.config;
  const at = thresholds.map((t) => config.thresholds.indexOf(t));
  const groups: { key: number; whole: boolean; startMs: number; endMs: number; count: number; below: number[] }[] = [];
  for (const b of windows.bucketHistory()) {
    const aligned = Math.floor(b.startMs / bucketMs) * bucketMs;
    const whole = b.endMs <= aligned + bucketMs;
    const key = whole ? aligned : b.startMs;
    const last = groups[groups.length - 1];
    if (last !== undefined && whole && last.whole && last.key === key) add(last, b);
    else groups.push({ key, whole, startMs: b.startMs, endMs: b.endMs, count: b.count, below: [...b.below] });
  }
  return {
    bucketMs,
    thresholds: [...thresholds],
    buckets: groups.map((g) => ({
      startMs: g.startMs,
      endMs: g.endMs,
      count: g.count,
      lowMargin: thresholds.map((threshold, i) => {
        const low = g.below[at[i] as number] as number;
        const w = wilsonInterval(low, g.count);
        return { threshold, low, share: w.share, lower: w.lower, upper: w.upper };
      }),
    })),
    reference:
      reference === undefined
        ? { state: 'none' }
        : {
            state: 'loaded',
            n: reference.n,
            lowMargin: thresholds.map((threshold) => {
              const e = reference.lowMargin.find((l) => l.threshold === threshold);
              return { threshold, share: e?.share ?? null, lower: e?.lower ?? null, upper: e?.upper ?? null };
            }),
          },
  };
}

function add(group: { endMs: number; count: number; below: number[] }, b: BucketCounts): void {
  group.endMs = b.endMs;
  group.count += b.count;
  b.below.forEach((n, i) => {
    group.below[i] = (group.below[i] as number) + n;
  });
}
