/**
 * The early-warning rule: a Bernoulli CUSUM on the low-margin indicator at θ, p0 = the reference share,
 * p1 = riseFactor × p0, decision level h chosen so that the in-control average run length (ARL0, from
 * bernoulliCusumArl) equals the rule's inControlEvents.
 *
 * The feed. The watcher sees each partition's events separately and partitions interleave in no fixed
 * order, so a chart fed event by event would depend on that interleaving (the reflection at 0 makes
 * order matter) and could not be replayed exactly after a crash. Instead the chart is fed the merged
 * series' *closed* event-time buckets, oldest first, one batch-binomial step per bucket:
 *
 *     S ← min(h, max(0, S + k·ln(p1/p0) + (n − k)·ln((1 − p1)/(1 − p0))))
 *
 * with n events and k lows in the bucket (exact counters, summed over partitions). A bucket is closed
 * once it ends before every contributing partition's watermark − lateness: after that no event can join
 * it (later ones are counted late and refused), so its (n, k) is final. The chart keeps the end of the
 * last bucket it took (`fedThroughMs`) in its saved state and skips any bucket ending at or before it:
 * each bucket is fed exactly once across restarts, and watch and replay feed the same sequence.
 *
 * Why the batch step, and not the bucket's events as runs in some canonical order: any fixed order
 * (lows first, say) makes S peak higher than the events' own order would on average, so the chart
 * alarms more often than bernoulliCusumArl says. The batch step reflects at 0 only between buckets,
 * which can only keep S at or below the event-by-event chart's value at each bucket end, and it is
 * looked at only there; so the false-alarm rate is at most the one claimed (ARL0 is conservative), and
 * the price is detection delay: a rise is seen at the end of a bucket, and evidence banked inside it
 * before the rise is lost only at bucket ends. test/bench/alert-simulation.ts measures both.
 *
 * The cap at h. Once S reaches h it is held there: the first crossing (and so ARL0 and the delay) is
 * Page's chart's, but while the share stays high S cannot climb without bound, and after the rise ends
 * it falls from h to clearFraction·h in about (1 − clearFraction)·h / |E[step]| events (≈ 350 at a 5 %
 * reference share and the defaults), which is when the alert starts easing.
 *
 * A new reference share (a new reference file) restarts the chart at S = 0 with its own h; the bucket
 * cursor is kept, so old buckets are not fed again under the new reference.
 */
import { bernoulliCusumArl } from '../compare/cusum-arl.js';
import type { EarlyWarningRule } from './config.js';
import { alertArgument } from './fail.js';
import type { Reading } from './lifecycle.js';

/** One closed event-time bucket of the merged series: [startMs, endMs), n events, k of them below θ. */
export interface ClosedBucket {
  readonly startMs: number;
  readonly endMs: number;
  readonly count: number;
  readonly low: number;
}

export interface EarlyWarningInput {
  /** The reference's exact share at θ; null when the model has no reference. */
  readonly referenceShare: number | null;
  /** Closed buckets, any order; those at or before the chart's cursor are skipped. */
  readonly buckets: readonly ClosedBucket[];
}

export interface ChartState {
  readonly p0: number;
  readonly p1: number;
  readonly h: number;
  readonly statistic: number;
  /** End of the last bucket fed; null before the first. */
  readonly fedThroughMs: number | null;
  readonly events: number;
  readonly lows: number;
  /** Times S reached h from below. */
  readonly signals: number;
}

/** Resolution of the ARL lattice when solving for h: within 0.2 % of ARL0 at resolution 20 (cusum.test.ts). */
export const THRESHOLD_RESOLUTION = 10;

/**
 * The decision level h at which a chart for p0 → p1 alarms once per `inControlEvents` events on
 * average in control (within 1 %, as bernoulliCusumArl computes it; where the lattice moves ARL0 in
 * larger jumps, the smallest h whose ARL0 reaches the target). ln ARL0 grows about one per unit of h (Wald: ARL0 >= e^h), so a secant on ln ARL0
 * settles in three or four ARL evaluations, each a second or two at ARL0 = 10⁷; callers cache it.
 */
export function cusumThreshold(p0: number, p1: number, inControlEvents: number, resolution = THRESHOLD_RESOLUTION): number {
  if (!(p0 > 0 && p1 > p0 && p1 < 1)) throw alertArgument(`need 0 < p0 < p1 < 1, got p0 ${p0} and p1 ${p1}`, { p0, p1 });
  if (!(inControlEvents > 1)) throw alertArgument(`inControlEvents must be above 1, got ${inControlEvents}`, { inControlEvents });
  const lowStep = Math.log(p1 / p0);
  // Below one low's step every low signals: ARL0 = 1/p0 is the least any h gives.
  if (inControlEvents <= 1 / p0) return lowStep;
  const target = Math.log(inControlEvents);
  const miss = (h: number): number => Math.log(bernoulliCusumArl({ p0, p1, threshold: h }, { resolution, maxSteps: 50_000_000 })) - target;
  let a = Math.max(lowStep * 1.01, target / 2);
  let fa = miss(a);
  let b = Math.max(lowStep * 1.01, a - fa);
  for (let i = 0; i < 20; i++) {
    const fb = miss(b);
    // ARL0 on the lattice moves in steps of about 0.5 % of itself (one lattice unit of h), so 1 % is as
    // close as asking can get; closer steps of h would only chase the lattice.
    if (Math.abs(fb) < 0.01 || Math.abs(b - a) < 1e-9) return b;
    const slope = fb === fa ? 1 : (fb - fa) / (b - a);
    a = b;
    fa = fb;
    b = Math.max(lowStep * 1.01, b - fb / (slope > 0 ? slope : 1));
  }
  // With few lattice units per low's step (p0 large), ARL0 moves in jumps wider than 1 % and the
  // secant circles around one. Then take the smallest h whose ARL0 reaches the target: bracket, bisect.
  let lo = lowStep * 1.01;
  let hi = Math.max(lo * 2, target);
  for (let i = 0; i < 60 && miss(hi) < 0; i++) hi *= 2;
  if (miss(lo) < 0 && miss(hi) >= 0) {
    for (let i = 0; i < 50 && hi - lo > 1e-6 * hi; i++) {
      const mid = (lo + hi) / 2;
      if (miss(mid) >= 0) hi = mid;
      else lo = mid;
    }
    return hi;
  }
  throw alertArgument(`no CUSUM threshold found for p0 ${p0}, p1 ${p1}, inControlEvents ${inControlEvents}`, { p0, p1, inControlEvents });
}

export type ThresholdFor = (p0: number, p1: number, inControlEvents: number) => number;

/** One batch-binomial step, reflected at 0 and held at h (see the file comment). */
export function batchStep(statistic: number, count: number, low: number, p0: number, p1: number, h: number): number {
  const next = statistic + low * Math.log(p1 / p0) + (count - low) * (Math.log1p(-p1) - Math.log1p(-p0));
  return next <= 0 ? 0 : next >= h ? h : next;
}

export interface ChartResult {
  /** null while the chart cannot run (no reference, or a share of 0 or too high for riseFactor). */
  readonly state: ChartState | null;
  readonly reading: Reading;
}

/** Feeds the new closed buckets to the chart and reads it. Pure, given a pure thresholdFor. */
export function feedEarlyWarning(previous: ChartState | null, rule: EarlyWarningRule, input: EarlyWarningInput, thresholdFor: ThresholdFor): ChartResult {
  const p0 = input.referenceShare;
  const unknown = (reason: string): ChartResult => ({ state: previous, reading: { verdict: 'unknown', value: previous?.statistic ?? null, fireLevel: previous?.h ?? null, clearLevel: previous === null ? null : previous.h * rule.clearFraction, reason } });
  if (p0 === null) return unknown('no reference share');
  if (!(p0 >= 0 && p0 <= 1)) throw alertArgument(`referenceShare must be in [0, 1], got ${p0}`, { referenceShare: p0 });
  const p1 = p0 * rule.riseFactor;
  if (p0 === 0) return unknown(`the reference has no margins below ${rule.threshold}; a chart cannot be anchored at 0 (choose a larger θ)`);
  if (p1 >= 1) return unknown(`riseFactor ${rule.riseFactor} × reference share ${p0} is not below 1`);

  let chart: ChartState =
    previous !== null && previous.p0 === p0 && previous.p1 === p1
      ? previous
      : { p0, p1, h: thresholdFor(p0, p1, rule.inControlEvents), statistic: 0, fedThroughMs: previous?.fedThroughMs ?? null, events: previous?.events ?? 0, lows: previous?.lows ?? 0, signals: previous?.signals ?? 0 };
  const buckets = [...input.buckets].sort((x, y) => x.startMs - y.startMs);
  let reached = false;
  let lastEnd = chart.fedThroughMs;
  for (const [i, bucket] of buckets.entries()) {
    checkBucket(bucket, i);
    if (lastEnd !== null && bucket.endMs <= lastEnd) continue;
    if (lastEnd !== null && bucket.startMs < lastEnd) {
      throw alertArgument(`buckets[${i}] starts at ${bucket.startMs}, inside a bucket already fed (through ${lastEnd}); buckets must not overlap`, { bucket });
    }
    const before = chart.statistic;
    const statistic = batchStep(before, bucket.count, bucket.low, chart.p0, chart.p1, chart.h);
    const crossed = statistic >= chart.h && before < chart.h;
    reached ||= statistic >= chart.h;
    chart = { ...chart, statistic, fedThroughMs: bucket.endMs, events: chart.events + bucket.count, lows: chart.lows + bucket.low, signals: chart.signals + (crossed ? 1 : 0) };
    lastEnd = bucket.endMs;
  }
  const fireLevel = chart.h;
  const clearLevel = chart.h * rule.clearFraction;
  const s = chart.statistic;
  // A crossing inside this batch of buckets counts even if S fell again before its end (a catch-up).
  const verdict = reached || s >= fireLevel ? 'above' : s <= clearLevel ? 'below' : 'between';
  return { state: chart, reading: { verdict, value: reached ? fireLevel : s, fireLevel, clearLevel } };
}

function checkBucket(b: ClosedBucket, i: number): void {
  if (!(Number.isFinite(b.startMs) && Number.isFinite(b.endMs) && b.startMs < b.endMs)) {
    throw alertArgument(`buckets[${i}]: startMs must be finite and before endMs, got ${b.startMs} and ${b.endMs}`, { bucket: b });
  }
  if (!(Number.isInteger(b.count) && b.count >= 0 && Number.isInteger(b.low) && b.low >= 0 && b.low <= b.count)) {
    throw alertArgument(`buckets[${i}]: count and low must be whole numbers with 0 <= low <= count, got ${b.count} and ${b.low}`, { bucket: b });
  }
}
