/**
 * MarginWindows: one series' margins in event-time buckets, and views (5m, 1h, 24h...) merged from them on
 * demand. Pure: the caller passes every time in, and nothing here reads a clock.
 *
 * Time. The watermark is the newest event time accepted (or passed to advance()); everything is relative
 * to it, never to the consumer's clock. A view of duration D ends at the watermark and covers every
 * bucket that overlaps (watermark − D, watermark], so it spans at least D and less than D plus one bucket
 * of the resolution at its old end (1 minute for views that fit in the fine span, 1 hour beyond). A series
 * that has gone quiet keeps answering for its last active stretch; whether that is stale is the caller's
 * call (compare nowMs with the view's endMs), or the caller may advance() it to the partition's watermark.
 *
 * Lateness. An event older than watermark − latenessMs is counted as late and not added; an event newer
 * than nowMs + maxFutureMs (nowMs: the caller's clock, e.g. wall time, or the end of a replayed range) is
 * counted as future and not added, so that one bad timestamp cannot drag the watermark a year ahead and
 * turn everything after it late. Both counts are kept beside the added count, so nothing is dropped unseen.
 *
 * Buckets. Fine buckets (default 1 min) cover the newest fineSpanMs; as the watermark moves on, older fine
 * buckets are folded into coarse ones (default 1 h), which are dropped once they end retentionMs before the
 * watermark. So a series holds at most fineSpanMs/bucketMs fine and retentionMs/coarseBucketMs + 1 coarse
 * buckets (120 and 25 by default), each a MarginSummary; test/bench/sketch-memory.ts measures the bytes.
 *
 * Partitions. Each Kafka partition keeps its own windows and checkpoints them with toState(); merge()
 * combines the windows of one series from several partitions. Its counts are exactly the sum of the two;
 * its late/future split can differ from one window fed both streams, since each partition judged lateness
 * against its own watermark.
 */
import { badArgument } from './fail.js';
import { parseWindowState, type BucketState, type WindowState } from './serialise.js';
import { MarginSummary, type SummaryOptions } from './summary.js';
import { sameWindowConfig, windowConfig, type WindowConfig, type WindowOptions } from './window-config.js';

export type AddOutcome = 'added' | 'late' | 'future';

export interface WindowCounters {
  /** Events added to a bucket. */
  readonly added: number;
  /** Events refused as older than watermark − latenessMs. */
  readonly late: number;
  /** Events refused as newer than nowMs + maxFutureMs. */
  readonly future: number;
}

export interface WindowView {
  readonly durationMs: number;
  /** Start of the oldest bucket the view covers; null before the first event. */
  readonly startMs: number | null;
  /** The watermark, where the view ends; null before the first event. */
  readonly endMs: number | null;
  /** A fresh summary: changing the windows later does not change it, nor the other way round. */
  readonly summary: MarginSummary;
}

function alignDown(t: number, width: number): number {
  return Math.floor(t / width) * width;
}

function finiteArgument(name: string, value: number): void {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw badArgument(name, 'must be a finite number', value);
}

/** One bucket of bucketHistory(). */
export interface BucketCounts {
  readonly startMs: number;
  readonly endMs: number;
  readonly count: number;
  /** Exact counts of margins below each of config.thresholds, in its order. */
  readonly below: readonly number[];
}

export class MarginWindows {
  readonly config: WindowConfig;
  private readonly summaryOptions: SummaryOptions;
  private watermark: number | null = null;
  /** Start of the fine bucket holding the watermark when the buckets were last rotated. */
  private rotatedAt: number | null = null;
  private readonly fine = new Map<number, MarginSummary>();
  private readonly coarse = new Map<number, MarginSummary>();
  private added = 0;
  private late = 0;
  private future = 0;
  /**
   * The fine bucket the last add() landed in. Event times mostly arrive in order, so nearly every add
   * hits the same bucket again and skips the Map lookup. rotate() is the only place that removes fine
   * buckets, and it forgets this.
   */
  private lastStart = Number.NaN;
  private lastBucket: MarginSummary | undefined;

  constructor(options: WindowOptions = {}) {
    this.config = windowConfig(options);
    this.summaryOptions = { thresholds: this.config.thresholds, compression: this.config.compression, scale: this.config.scale };
  }

  static fromState(state: unknown, path = 'window'): MarginWindows {
    const s = parseWindowState(state, path);
    const w = new MarginWindows(s.config);
    w.watermark = s.watermarkMs;
    w.rotatedAt = s.watermarkMs === null ? null : alignDown(s.watermarkMs, s.config.bucketMs);
    w.added = s.added;
    w.late = s.late;
    w.future = s.future;
    s.fine.forEach((b, i) => w.fine.set(b.startMs, MarginSummary.fromState(b.summary, `${path}.fine[${i}].summary`)));
    s.coarse.forEach((b, i) => w.coarse.set(b.startMs, MarginSummary.fromState(b.summary, `${path}.coarse[${i}].summary`)));
    return w;
  }

  /** Newest event time accepted (or advanced to); null before the first event. */
  get watermarkMs(): number | null {
    return this.watermark;
  }

  counters(): WindowCounters {
    return { added: this.added, late: this.late, future: this.future };
  }

  /** Buckets held now; bounded by the config (see the file comment). */
  bucketCounts(): { readonly fine: number; readonly coarse: number } {
    return { fine: this.fine.size, coarse: this.coarse.size };
  }

  /**
   * Adds one event's margin at its event time. `nowMs` is the caller's clock, used only to refuse events
   * from the future. A non-finite margin or time throws (the decoder upstream never lets one through).
   */
  add(margin: number, eventTimeMs: number, nowMs: number): AddOutcome {
    // One combined test on the hot path; the per-argument checks name the culprit only when it fails.
    if (!(Number.isFinite(margin) && Number.isFinite(eventTimeMs) && Number.isFinite(nowMs))) {
      finiteArgument('margin', margin);
      finiteArgument('eventTimeMs', eventTimeMs);
      finiteArgument('nowMs', nowMs);
    }
    if (eventTimeMs > nowMs + this.config.maxFutureMs) {
      this.future += 1;
      return 'future';
    }
    if (this.watermark !== null && eventTimeMs < this.watermark - this.config.latenessMs) {
      this.late += 1;
      return 'late';
    }
    if (this.watermark === null || eventTimeMs > this.watermark) this.moveWatermark(eventTimeMs);
    const start = alignDown(eventTimeMs, this.config.bucketMs);
    let bucket = start === this.lastStart ? this.lastBucket : this.fine.get(start);
    if (bucket === undefined) {
      bucket = new MarginSummary(this.summaryOptions);
      this.fine.set(start, bucket);
    }
    this.lastStart = start;
    this.lastBucket = bucket;
    bucket.add(margin);
    this.added += 1;
    return 'added';
  }

  /** Moves the watermark forward (never back) without an event, e.g. to the partition's watermark. */
  advance(watermarkMs: number): void {
    finiteArgument('watermarkMs', watermarkMs);
    if (this.watermark === null || watermarkMs > this.watermark) this.moveWatermark(watermarkMs);
  }

  /** The margins of the last `durationMs` of event time, merged from the buckets now. */
  view(durationMs: number): WindowView {
    if (typeof durationMs !== 'number' || !Number.isFinite(durationMs) || durationMs <= 0 || durationMs > this.config.retentionMs) {
      throw badArgument('durationMs', `must be a positive number of milliseconds up to retentionMs (${this.config.retentionMs})`, durationMs);
    }
    const w = this.watermark;
    if (w === null) return { durationMs, startMs: null, endMs: null, summary: new MarginSummary(this.summaryOptions) };
    const from = w - durationMs;
    const parts: MarginSummary[] = [];
    for (const [start, s] of sortedEntries(this.coarse)) if (start + this.config.coarseBucketMs > from) parts.push(s);
    for (const [start, s] of sortedEntries(this.fine)) if (start + this.config.bucketMs > from) parts.push(s);
    const fineStartMs = this.fineStart(w);
    const oldestFine = alignDown(from, this.config.bucketMs);
    const startMs = oldestFine >= fineStartMs ? oldestFine : alignDown(from, this.config.coarseBucketMs);
    return { durationMs, startMs, endMs: w, summary: MarginSummary.merged(parts, this.summaryOptions) };
  }

  /**
   * The fine buckets that end at or before `throughMs`, oldest first, with their exact counts below
   * `threshold` (one of config.thresholds): what an early-warning chart is fed, once per bucket. Coarse
   * buckets are left out: their spans overlap the fine ones', and a chart more than the fine span behind
   * skips that stretch rather than take it in one lump.
   */
  settledBuckets(throughMs: number, threshold: number): { startMs: number; endMs: number; count: number; low: number }[] {
    finiteArgument('throughMs', throughMs);
    const out: { startMs: number; endMs: number; count: number; low: number }[] = [];
    for (const [startMs, s] of sortedEntries(this.fine)) {
      const endMs = startMs + this.config.bucketMs;
      if (endMs > throughMs) break;
      out.push({ startMs, endMs, count: s.count, low: s.countBelow(threshold) });
    }
    return out;
  }

  /**
   * Every bucket held, oldest first, with its exact count and its counts below each of config.thresholds
   * (in that order): the low-margin share over time. A coarse bucket only holds what was folded from fine
   * buckets older than the fine span, so its span is cut where the fine span begins and no two spans
   * overlap (the hour the fine span starts in shows as a shorter coarse bucket, then its fine buckets).
   */
  bucketHistory(): BucketCounts[] {
    const w = this.watermark;
    if (w === null) return [];
    const c = this.config;
    const fineStartMs = this.fineStart(w);
    const entry = (startMs: number, endMs: number, s: MarginSummary): BucketCounts => ({ startMs, endMs, count: s.count, below: c.thresholds.map((t) => s.countBelow(t)) });
    const out: BucketCounts[] = [];
    for (const [start, s] of sortedEntries(this.coarse)) out.push(entry(start, Math.min(start + c.coarseBucketMs, fineStartMs), s));
    for (const [start, s] of sortedEntries(this.fine)) out.push(entry(start, start + c.bucketMs, s));
    return out;
  }

  /**
   * Adds the buckets and counts of `other` (the same series from another partition, same config);
   * `other` is not changed. The watermark becomes the later of the two.
   */
  merge(other: MarginWindows): void {
    if (other === this) throw badArgument('other', 'is this window; merge a copy');
    if (!sameWindowConfig(this.config, other.config)) throw badArgument('other.config', 'differs from this window’s config');
    const into = (mine: Map<number, MarginSummary>, theirs: Map<number, MarginSummary>): void => {
      for (const [start, s] of theirs) {
        let bucket = mine.get(start);
        if (bucket === undefined) {
          bucket = new MarginSummary(this.summaryOptions);
          mine.set(start, bucket);
        }
        bucket.merge(s);
      }
    };
    into(this.fine, other.fine);
    into(this.coarse, other.coarse);
    this.added += other.added;
    this.late += other.late;
    this.future += other.future;
    const w = other.watermark === null ? this.watermark : Math.max(this.watermark ?? -Infinity, other.watermark);
    if (w !== null) {
      this.watermark = w;
      this.rotate();
    }
  }

  /** Plain JSON (see serialise.ts). Changes nothing: a restored copy equals this window, pending points included. */
  toState(): WindowState {
    const buckets = (m: Map<number, MarginSummary>): BucketState[] => sortedEntries(m).map(([startMs, s]) => ({ startMs, summary: s.toState() }));
    return {
      v: 1,
      config: { ...this.config, thresholds: [...this.config.thresholds] },
      watermarkMs: this.watermark,
      added: this.added,
      late: this.late,
      future: this.future,
      fine: buckets(this.fine),
      coarse: buckets(this.coarse),
    };
  }

  private fineStart(watermark: number): number {
    return alignDown(watermark, this.config.bucketMs) - this.config.fineSpanMs + this.config.bucketMs;
  }

  private moveWatermark(t: number): void {
    this.watermark = t;
    // Buckets only change tier or expire when the watermark enters a new fine bucket.
    if (alignDown(t, this.config.bucketMs) !== this.rotatedAt) this.rotate();
  }

  private rotate(): void {
    this.lastStart = Number.NaN;
    this.lastBucket = undefined;
    const w = this.watermark as number;
    const c = this.config;
    const fineStartMs = this.fineStart(w);
    const expired = w - c.retentionMs;
    for (const [start, s] of sortedEntries(this.fine)) {
      if (start < fineStartMs) {
        this.fine.delete(start);
        const coarseStart = alignDown(start, c.coarseBucketMs);
        if (coarseStart + c.coarseBucketMs <= expired) continue;
        let bucket = this.coarse.get(coarseStart);
        if (bucket === undefined) {
          bucket = new MarginSummary(this.summaryOptions);
          this.coarse.set(coarseStart, bucket);
        }
        bucket.merge(s);
        bucket.compact();
      } else if (start + c.bucketMs <= w - c.latenessMs) {
        s.compact(); // no event can land here any more
      }
    }
    for (const start of [...this.coarse.keys()]) if (start + c.coarseBucketMs <= expired) this.coarse.delete(start);
    this.rotatedAt = alignDown(w, c.bucketMs);
  }
}

function sortedEntries(m: Map<number, MarginSummary>): [number, MarginSummary][] {
  return [...m.entries()].sort((a, b) => a[0] - b[0]);
}
