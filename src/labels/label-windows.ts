/**
 * One series' labelled predictions in event-time buckets, keyed by the time of the *prediction* (a label
 * that arrives a day late still belongs to the minute the model spoke), in the same fine and coarse
 * layout as the series' margin windows (src/sketch/windows.ts) and against the same watermark, which the
 * caller passes in: a view of the last hour is "the predictions of the last hour, and the labels they
 * have so far". Pure.
 *
 * A label whose prediction is older than the retention has no bucket left: it still counts in the
 * series' all-time labelled/wrong figures and is counted here as `beyondRetention`.
 */
import type { WindowConfig } from '../sketch/index.js';
import { badState } from './fail.js';
import { LabelSummary } from './label-summary.js';
import type { LabelSummaryState } from './label-summary.js';

export interface LabelWindowsState {
  readonly fine: readonly { readonly startMs: number; readonly summary: LabelSummaryState }[];
  readonly coarse: readonly { readonly startMs: number; readonly summary: LabelSummaryState }[];
  readonly beyondRetention: number;
}

export interface LabelView {
  readonly durationMs: number;
  readonly summary: LabelSummary;
}

type Timing = Pick<WindowConfig, 'bucketMs' | 'fineSpanMs' | 'coarseBucketMs' | 'retentionMs' | 'compression'>;

function alignDown(t: number, width: number): number {
  return Math.floor(t / width) * width;
}

function sorted(m: Map<number, LabelSummary>): [number, LabelSummary][] {
  return [...m.entries()].sort((a, b) => a[0] - b[0]);
}

export class LabelWindows {
  private readonly fine = new Map<number, LabelSummary>();
  private readonly coarse = new Map<number, LabelSummary>();
  private rotatedAt: number | null = null;
  beyondRetention = 0;

  constructor(readonly config: Timing) {}

  /** False (and counted) when the prediction is older than the retention before `watermarkMs`. */
  add(signed: number, p: number | undefined, positive: boolean, predictionTimeMs: number, watermarkMs: number): boolean {
    const c = this.config;
    this.rotate(watermarkMs);
    if (predictionTimeMs < watermarkMs - c.retentionMs) {
      this.beyondRetention += 1;
      return false;
    }
    const fineStart = this.fineStart(watermarkMs);
    const coarse = predictionTimeMs < fineStart;
    const start = coarse ? alignDown(predictionTimeMs, c.coarseBucketMs) : alignDown(predictionTimeMs, c.bucketMs);
    const into = coarse ? this.coarse : this.fine;
    let bucket = into.get(start);
    if (bucket === undefined) into.set(start, (bucket = new LabelSummary(c.compression)));
    bucket.add(signed, p, positive);
    return true;
  }

  /** The buckets overlapping (watermarkMs − durationMs, watermarkMs], merged into a fresh summary. */
  view(durationMs: number, watermarkMs: number | null): LabelView {
    const out = new LabelSummary(this.config.compression);
    if (watermarkMs === null) return { durationMs, summary: out };
    const from = watermarkMs - durationMs;
    for (const [start, s] of this.coarse) if (start + this.config.coarseBucketMs > from && start <= watermarkMs) out.merge(s);
    for (const [start, s] of this.fine) if (start + this.config.bucketMs > from && start <= watermarkMs) out.merge(s);
    return { durationMs, summary: out };
  }

  /** Adds `other`'s buckets (the same series in another partition); `other` is not changed. */
  merge(other: LabelWindows): void {
    const into = (mine: Map<number, LabelSummary>, theirs: Map<number, LabelSummary>): void => {
      for (const [start, s] of theirs) {
        let bucket = mine.get(start);
        if (bucket === undefined) mine.set(start, (bucket = new LabelSummary(this.config.compression)));
        bucket.merge(s);
      }
    };
    into(this.fine, other.fine);
    into(this.coarse, other.coarse);
    this.beyondRetention += other.beyondRetention;
  }

  /** Buckets held; bounded as the margin windows' are. */
  bucketCount(): number {
    return this.fine.size + this.coarse.size;
  }

  toState(): LabelWindowsState {
    const buckets = (m: Map<number, LabelSummary>) => sorted(m).map(([startMs, s]) => ({ startMs, summary: s.toState() }));
    return { fine: buckets(this.fine), coarse: buckets(this.coarse), beyondRetention: this.beyondRetention };
  }

  static fromState(value: unknown, config: Timing, path: string): LabelWindows {
    const v = value as Partial<LabelWindowsState> | null;
    if (typeof v !== 'object' || v === null) throw badState(path, 'must be an object');
    const w = new LabelWindows(config);
    for (const tier of ['fine', 'coarse'] as const) {
      const list = v[tier];
      if (!Array.isArray(list)) throw badState(`${path}.${tier}`, 'must be an array of buckets');
      list.forEach((b: { startMs?: unknown; summary?: unknown }, i) => {
        if (typeof b?.startMs !== 'number' || !Number.isSafeInteger(b.startMs)) throw badState(`${path}.${tier}[${i}].startMs`, 'must be a whole number of milliseconds');
        (tier === 'fine' ? w.fine : w.coarse).set(b.startMs, LabelSummary.fromState(b.summary, `${path}.${tier}[${i}].summary`));
      });
    }
    if (!Number.isSafeInteger(v.beyondRetention) || (v.beyondRetention as number) < 0) throw badState(`${path}.beyondRetention`, 'must be a non-negative whole number');
    w.beyondRetention = v.beyondRetention as number;
    return w;
  }

  private fineStart(watermark: number): number {
    return alignDown(watermark, this.config.bucketMs) - this.config.fineSpanMs + this.config.bucketMs;
  }

  /** Fine buckets that fell out of the fine span fold into coarse ones; coarse ones past the retention go. */
  private rotate(watermark: number): void {
    const at = alignDown(watermark, this.config.bucketMs);
    if (at === this.rotatedAt) return;
    this.rotatedAt = at;
    const c = this.config;
    const fineStartMs = this.fineStart(watermark);
    const expired = watermark - c.retentionMs;
    for (const [start, s] of this.fine) {
      if (start >= fineStartMs) continue;
      this.fine.delete(start);
      const coarseStart = alignDown(start, c.coarseBucketMs);
      if (coarseStart + c.coarseBucketMs <= expired) continue;
      let bucket = this.coarse.get(coarseStart);
      if (bucket === undefined) this.coarse.set(coarseStart, (bucket = new LabelSummary(c.compression)));
      bucket.merge(s);
    }
    for (const start of [...this.coarse.keys()]) if (start + c.coarseBucketMs <= expired) this.coarse.delete(start);
  }
}
