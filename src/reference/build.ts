/**
 * Decoded reference events in, one `headroom-reference/1` object out. Margins are kept as plain doubles
 * until the end (8 bytes an event per series) because decile edges are computed exactly, and because
 * which segment values get their own segment is only known once every event has been seen.
 */
import { wilsonInterval } from '../compare/index.js';
import { HeadroomError } from '../errors.js';
import type { Rejection, ScoredEvent } from '../events/index.js';
import { binaryLabelSign, measureMargins } from '../margin/index.js';
import type { Margins } from '../margin/index.js';
import { MarginSummary } from '../sketch/index.js';
import { CalibrationCounts, Float64List, invertedCdfQuantiles } from './exact.js';
import { ALL_SEGMENT, DECILE_LEVELS, REFERENCE_FORMAT } from './format.js';
import type { ReferenceFile, SegmentRecord } from './format.js';
import { OTHER_SEGMENT_VALUE, resolveReferenceOptions } from './options.js';
import type { ReferenceOptions, ResolvedReferenceOptions } from './options.js';

class Series {
  readonly confidence = new Float64List();
  readonly signed = new Float64List();
  errors = 0;
  readonly calibration = new CalibrationCounts();

  add(event: ScoredEvent, margins: Margins): void {
    // `+ 0` folds a margin of -0 into 0, so that JSON and the digest see one value.
    this.confidence.push(margins.confidence + 0);
    if (margins.signed === undefined || event.label === undefined) return;
    this.signed.push(margins.signed + 0);
    if (margins.signed <= 0) this.errors++;
    const p = positiveProbability(event.score);
    if (p !== undefined) this.calibration.add(p, binaryLabelSign(event.label) === 1);
  }

  merge(other: Series): void {
    this.confidence.append(other.confidence);
    this.signed.append(other.signed);
    this.errors += other.errors;
    this.calibration.merge(other.calibration);
  }
}

/**
 * Probability and logit scores state a probability of the positive class (a logit on the log-odds
 * scale); votes and class weights do not, so they are left out of calibration.
 */
function positiveProbability(score: ScoredEvent['score']): number | undefined {
  if (score.kind === 'probability') return score.p;
  if (score.kind === 'logit') return 1 / (1 + Math.exp(-score.z));
  return undefined;
}

/** Wilson bounds are clamped: rounding must not put them a hair outside [0, 1], which the loader refuses. */
function shareOf(successes: number, trials: number): { count: number; share: number; lower: number; upper: number } {
  const w = wilsonInterval(successes, trials);
  return { count: successes, share: successes / trials, lower: Math.max(0, w.lower), upper: Math.min(1, w.upper) };
}

export class ReferenceBuilder {
  readonly options: ResolvedReferenceOptions;
  private identity: { readonly model: string; readonly version: string } | undefined;
  private readonly all = new Series();
  private readonly byKey = new Map<string, Map<string, Series>>();
  private fromMs = Infinity;
  private toMs = -Infinity;

  constructor(options: ReferenceOptions) {
    this.options = resolveReferenceOptions(options);
    for (const key of this.options.segmentKeys) this.byKey.set(key, new Map());
  }

  /** Events taken so far (rejected ones not included). */
  get count(): number {
    return this.all.confidence.length;
  }

  /**
   * A label that does not fit its score (src/margin's `bad_label`) comes back as a rejection for the
   * caller to count, and the event is left out, exactly as the live path would leave it out.
   */
  add(event: ScoredEvent): Rejection | undefined {
    if (this.identity === undefined) this.identity = { model: event.model, version: event.version };
    else if (event.model !== this.identity.model || event.version !== this.identity.version) {
      const found = [`${this.identity.model}@${this.identity.version}`, `${event.model}@${event.version}`];
      throw new HeadroomError('HR_ERR_INPUT_AMBIGUOUS', `one reference holds one model version; found ${found.join(' and ')}`, {
        context: { found },
      });
    }
    const margins = measureMargins(event.score, event.label);
    if (!margins.ok) return margins;
    this.all.add(event, margins);
    for (const [key, values] of this.byKey) {
      if (!Object.hasOwn(event.segment, key)) continue;
      const value = event.segment[key] as string;
      let series = values.get(value);
      if (series === undefined) values.set(value, (series = new Series()));
      series.add(event, margins);
    }
    if (event.timeMs < this.fromMs) this.fromMs = event.timeMs;
    if (event.timeMs > this.toMs) this.toMs = event.timeMs;
    return undefined;
  }

  finish(): ReferenceFile {
    const identity = this.identity;
    if (identity === undefined || this.count === 0) {
      throw new HeadroomError('HR_ERR_INPUT_EMPTY', 'a reference needs at least one valid scored event');
    }
    const o = this.options;
    const segments: Record<string, SegmentRecord> = { [ALL_SEGMENT]: this.segmentRecord(this.all) };
    const folded: Record<string, number> = {};
    for (const [key, values] of this.byKey) {
      const { kept, foldedCount } = this.foldRareValues(values);
      if (foldedCount > 0) folded[key] = foldedCount;
      for (const [value, series] of kept) segments[`${key}=${value}`] = this.segmentRecord(series);
    }
    return {
      format: REFERENCE_FORMAT,
      model: identity.model,
      version: identity.version,
      createdAt: o.createdAt,
      source: o.source,
      n: this.count,
      thresholds: [...o.thresholds],
      segmentKeys: [...o.segmentKeys],
      folded,
      timeRange: { fromMs: this.fromMs, toMs: this.toMs },
      segments,
    };
  }

  /**
   * The most frequent values keep their own segment (ties broken by name, so the choice does not depend
   * on input order); the rest share `k=other`. Sorted by value, so two builds of the same data diff cleanly.
   */
  private foldRareValues(values: Map<string, Series>): { kept: [string, Series][]; foldedCount: number } {
    const byFrequency = [...values].sort((a, b) => b[1].confidence.length - a[1].confidence.length || compareText(a[0], b[0]));
    const max = this.options.maxSegmentValues;
    if (byFrequency.length <= max) return { kept: byFrequency.sort((a, b) => compareText(a[0], b[0])), foldedCount: 0 };
    // One place is kept for `other`, so the key still has at most `max` segments.
    const kept = byFrequency.slice(0, max - 1);
    const rest = byFrequency.slice(max - 1);
    const other = new Series();
    for (const [, series] of rest) other.merge(series);
    // A real value named `other` joins the folded ones rather than being overwritten by them.
    const keptOther = kept.findIndex(([value]) => value === OTHER_SEGMENT_VALUE);
    if (keptOther >= 0) other.merge((kept.splice(keptOther, 1)[0] as [string, Series])[1]);
    kept.push([OTHER_SEGMENT_VALUE, other]);
    const foldedCount = rest.filter(([value]) => value !== OTHER_SEGMENT_VALUE).length;
    return { kept: kept.sort((a, b) => compareText(a[0], b[0])), foldedCount };
  }

  private segmentRecord(series: Series): SegmentRecord {
    const o = this.options;
    const digestOptions = o.compression === undefined ? {} : { compression: o.compression };
    const confidence = new MarginSummary({ thresholds: o.thresholds, ...digestOptions });
    const margins = series.confidence.values();
    for (const x of margins) confidence.add(x);
    const n = margins.length;
    const sorted = Float64Array.from(margins).sort();
    let labels: SegmentRecord['labels'] = null;
    const signedValues = series.signed.values();
    if (signedValues.length > 0) {
      const signed = new MarginSummary({ thresholds: [], ...digestOptions });
      for (const x of signedValues) signed.add(x);
      signed.compact(); // a reference file holds finished digests: nothing waiting to be folded
      labels = {
        n: signedValues.length,
        signed: signed.toState(),
        errors: shareOf(series.errors, signedValues.length),
        calibration: series.calibration.count > 0 ? series.calibration.bins() : null,
      };
    }
    confidence.compact();
    return {
      n,
      confidence: confidence.toState(),
      lowMargin: o.thresholds.map((threshold) => ({ threshold, ...shareOf(confidence.countBelow(threshold), n) })),
      decileEdges: invertedCdfQuantiles(sorted, DECILE_LEVELS),
      labels,
    };
  }
}

/** By UTF-16 code units, not locale: the order must not depend on the machine that builds the file. */
function compareText(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

export interface BuildReferenceOptions extends ReferenceOptions {
  /** Called for each event left out because its label does not fit its score. */
  readonly onRejected?: (event: ScoredEvent, rejection: Rejection) => void;
}

/** All events must belong to one model version (HR_ERR_INPUT_AMBIGUOUS otherwise); at least one must be usable. */
export function buildReference(events: Iterable<ScoredEvent>, options: BuildReferenceOptions): ReferenceFile {
  const builder = new ReferenceBuilder(options);
  for (const event of events) {
    const rejected = builder.add(event);
    if (rejected !== undefined) options.onRejected?.(event, rejected);
  }
  return builder.finish();
}
