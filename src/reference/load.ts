/**
 * Reading a reference file back: validate, restore the digests, and hand out per-segment views that
 * compareToReference takes as they are. A reference is read at start-up and trusted for months, so every
 * problem is refused here with the file and the field named, never discovered later as a strange figure.
 */
import type { z } from 'zod';
import type { CompareOptions, LowMarginCounts } from '../compare/index.js';
import { HeadroomError, isHeadroomError } from '../errors.js';
import { MarginSummary } from '../sketch/index.js';
import type { MarginDistribution } from '../sketch/index.js';
import { ALL_SEGMENT, CALIBRATION_BINS, DECILE_LEVELS, REFERENCE_FORMAT, REFERENCE_FORMAT_FAMILY, referenceSchema } from './format.js';
import type { CalibrationBin, LowMarginEntry, ReferenceFile, SegmentRecord } from './format.js';
import { fieldPath } from '../field-path.js';

export interface ReferenceSegment {
  /** `all`, or `key=value`. */
  readonly name: string;
  readonly n: number;
  /** The restored confidence-margin digest. */
  readonly confidence: MarginDistribution;
  /** The digest with its exact figures (count, mean, min, max, low-margin counts). */
  readonly summary: MarginSummary;
  readonly lowMargin: readonly LowMarginEntry[];
  readonly decileEdges: readonly number[];
  readonly labels: ReferenceLabels | null;
  /** The stored exact share below θ; undefined when θ is not one of the file's thresholds. */
  lowMarginShare(threshold: number): number | undefined;
  /**
   * Options for compareToReference(live, segment.confidence, ...): the stored decile edges for PSI and,
   * for each live counter, the stored reference share at its θ (when the file has that θ).
   */
  compareOptions(live?: readonly Omit<LowMarginCounts, 'referenceShare'>[]): CompareOptions;
}

export interface ReferenceLabels {
  readonly n: number;
  readonly signed: MarginDistribution;
  readonly errors: { readonly count: number; readonly share: number; readonly lower: number; readonly upper: number };
  readonly calibration: readonly CalibrationBin[] | null;
}

export interface LoadedReference {
  /** The validated file, as read. */
  readonly file: ReferenceFile;
  readonly model: string;
  readonly version: string;
  readonly n: number;
  readonly thresholds: readonly number[];
  readonly segments: ReadonlyMap<string, ReferenceSegment>;
  /** The segment's own reference, else the whole version's (`all`): a live series always has one to face. */
  segmentFor(name: string): ReferenceSegment;
}

class Invalid extends Error {
  constructor(
    readonly field: string,
    readonly detail: string,
  ) {
    super(`${field}: ${detail}`);
  }
}



function describeInput(value: unknown): string {
  if (value === undefined) return 'nothing (the field is absent)';
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  if (typeof value === 'number' && !Number.isFinite(value)) return String(value);
  return typeof value;
}

function issueDetail(issue: z.core.$ZodIssue): string {
  if (issue.code === 'invalid_type') return `expected ${issue.expected}, got ${describeInput(issue.input)}`;
  return issue.message.replace(/^Invalid input: /, '');
}

function checkFormat(json: unknown): void {
  if (typeof json !== 'object' || json === null || Array.isArray(json)) throw new Invalid('(top level)', `expected an object, got ${describeInput(json)}`);
  const format = (json as Record<string, unknown>).format;
  if (format === REFERENCE_FORMAT) return;
  if (typeof format === 'string' && format.startsWith(REFERENCE_FORMAT_FAMILY)) {
    throw new Invalid('format', `is ${JSON.stringify(format)}, but this build of headroom reads ${REFERENCE_FORMAT} only; rebuild the reference with \`headroom reference\` or use the headroom release that wrote it`);
  }
  throw new Invalid('format', `is ${format === undefined ? 'absent' : JSON.stringify(format)}; a reference file says "format": "${REFERENCE_FORMAT}" (is this a reference file?)`);
}

function near(a: number, b: number): boolean {
  return Math.abs(a - b) <= 1e-12;
}

function restore(state: unknown, field: string): MarginSummary {
  try {
    return MarginSummary.fromState(state, field);
  } catch (error) {
    if (isHeadroomError(error) && error.code === 'HR_ERR_SKETCH_STATE_INVALID') {
      const at = typeof error.context.field === 'string' ? error.context.field : field;
      throw new Invalid(at, error.message.slice(error.message.indexOf(at) + at.length).trim());
    }
    throw error;
  }
}

function checkSegmentName(name: string, keys: readonly string[]): void {
  if (name === ALL_SEGMENT) return;
  const cut = name.indexOf('=');
  if (cut <= 0 || !keys.includes(name.slice(0, cut))) {
    throw new Invalid(fieldPath(['segments', name]), `is not "all" nor key=value with a key from segmentKeys [${keys.join(', ')}]`);
  }
}

function segmentView(name: string, record: SegmentRecord, file: ReferenceFile): ReferenceSegment {
  const at = (...path: PropertyKey[]): string => fieldPath(['segments', name, ...path]);
  const summary = restore(record.confidence, at('confidence'));
  if (summary.count !== record.n) throw new Invalid(at('confidence', 'count'), `is ${summary.count} but the segment's n is ${record.n}`);
  if (summary.thresholds.join() !== file.thresholds.join()) throw new Invalid(at('confidence', 'thresholds'), 'differ from the file\'s thresholds');
  if (record.lowMargin.length !== file.thresholds.length) throw new Invalid(at('lowMargin'), `must hold one entry per threshold (${file.thresholds.length})`);
  record.lowMargin.forEach((entry, i) => {
    const threshold = file.thresholds[i] as number;
    if (entry.threshold !== threshold) throw new Invalid(at('lowMargin', i, 'threshold'), `is ${entry.threshold}, expected ${threshold} (thresholds[${i}])`);
    const below = summary.countBelow(threshold);
    if (entry.count !== below) throw new Invalid(at('lowMargin', i, 'count'), `is ${entry.count} but the digest summary counts ${below} below ${threshold}`);
    if (!near(entry.share, entry.count / record.n)) throw new Invalid(at('lowMargin', i, 'share'), `is ${entry.share} but count / n is ${entry.count / record.n}`);
  });
  if (record.decileEdges.length !== DECILE_LEVELS.length) throw new Invalid(at('decileEdges'), `must hold ${DECILE_LEVELS.length} edges`);
  record.decileEdges.forEach((edge, i) => {
    if (i > 0 && edge < (record.decileEdges[i - 1] as number)) throw new Invalid(at('decileEdges', i), 'is below the edge before it; edges ascend');
    if (edge < summary.min || edge > summary.max) throw new Invalid(at('decileEdges', i), `lies outside the margins' range [${summary.min}, ${summary.max}]`);
  });
  const labels = record.labels === null ? null : labelsView(record.labels, record.n, at);
  const shares = new Map(record.lowMargin.map((e) => [e.threshold, e.share]));
  return {
    name,
    n: record.n,
    confidence: summary.distribution,
    summary,
    lowMargin: record.lowMargin,
    decileEdges: record.decileEdges,
    labels,
    lowMarginShare: (threshold) => shares.get(threshold),
    compareOptions: (live = []) => ({
      psiEdges: record.decileEdges,
      lowMargin: live.map((c) => {
        const referenceShare = shares.get(c.threshold);
        return referenceShare === undefined ? { ...c } : { ...c, referenceShare };
      }),
    }),
  };
}

function labelsView(labels: NonNullable<SegmentRecord['labels']>, n: number, at: (...path: PropertyKey[]) => string): ReferenceLabels {
  if (labels.n > n) throw new Invalid(at('labels', 'n'), `is ${labels.n}, more than the segment's n (${n})`);
  const signed = restore(labels.signed, at('labels', 'signed'));
  if (signed.count !== labels.n) throw new Invalid(at('labels', 'signed', 'count'), `is ${signed.count} but labels.n is ${labels.n}`);
  if (labels.errors.count > labels.n) throw new Invalid(at('labels', 'errors', 'count'), `exceeds labels.n (${labels.n})`);
  if (labels.n > 0 && !near(labels.errors.share, labels.errors.count / labels.n)) {
    throw new Invalid(at('labels', 'errors', 'share'), `is ${labels.errors.share} but count / n is ${labels.errors.count / labels.n}`);
  }
  if (labels.calibration !== null) {
    if (labels.calibration.length !== CALIBRATION_BINS) throw new Invalid(at('labels', 'calibration'), `must hold ${CALIBRATION_BINS} bins`);
    let total = 0;
    labels.calibration.forEach((bin, i) => {
      if (bin.positives > bin.count) throw new Invalid(at('labels', 'calibration', i, 'positives'), `exceeds the bin's count (${bin.count})`);
      if ((bin.count === 0) !== (bin.meanPredicted === null)) throw new Invalid(at('labels', 'calibration', i, 'meanPredicted'), 'must be null exactly when the bin is empty');
      total += bin.count;
    });
    if (total > labels.n) throw new Invalid(at('labels', 'calibration'), `bins hold ${total} events, more than labels.n (${labels.n})`);
  }
  return { n: labels.n, signed: signed.distribution, errors: labels.errors, calibration: labels.calibration };
}

function load(json: unknown): LoadedReference {
  checkFormat(json);
  const parsed = referenceSchema.safeParse(json, { reportInput: true });
  if (!parsed.success) {
    const issue = parsed.error.issues[0] as z.core.$ZodIssue;
    throw new Invalid(fieldPath(issue.path) || '(top level)', issueDetail(issue));
  }
  const file = parsed.data;
  const all = file.segments[ALL_SEGMENT];
  if (all === undefined) throw new Invalid(fieldPath(['segments', ALL_SEGMENT]), 'is absent; every reference has the whole-version segment');
  if (all.n !== file.n) throw new Invalid(fieldPath(['segments', ALL_SEGMENT, 'n']), `is ${all.n} but the file's n is ${file.n}`);
  file.thresholds.forEach((t, i) => {
    if (!(t > 0 && t < 1)) throw new Invalid(`thresholds[${i}]`, `must lie in (0, 1), got ${t}`);
    if (i > 0 && !(t > (file.thresholds[i - 1] as number))) throw new Invalid(`thresholds[${i}]`, 'must be above the one before; thresholds ascend');
  });
  if (file.timeRange.fromMs > file.timeRange.toMs) throw new Invalid('timeRange.fromMs', 'is after timeRange.toMs');
  const segments = new Map<string, ReferenceSegment>();
  for (const [name, record] of Object.entries(file.segments)) {
    checkSegmentName(name, file.segmentKeys);
    if (record.n > file.n) throw new Invalid(fieldPath(['segments', name, 'n']), `is ${record.n}, more than the file's n (${file.n})`);
    segments.set(name, segmentView(name, record, file));
  }
  const whole = segments.get(ALL_SEGMENT) as ReferenceSegment;
  return {
    file,
    model: file.model,
    version: file.version,
    n: file.n,
    thresholds: file.thresholds,
    segments,
    segmentFor: (name) => segments.get(name) ?? whole,
  };
}

/**
 * `sourceName` (a path, a URL) starts every error message, e.g.
 * `references/parcel.json: segments.all.lowMargin[0].share: expected number, got string`.
 */
export function parseReference(json: unknown, sourceName: string): LoadedReference {
  try {
    return load(json);
  } catch (error) {
    if (!(error instanceof Invalid)) throw error;
    throw new HeadroomError('HR_ERR_REFERENCE_INVALID', `${sourceName}: ${error.field}: ${error.detail}`, {
      context: { source: sourceName, field: error.field },
    });
  }
}

/** parseReference for text as read from a file. */
export function parseReferenceText(text: string, sourceName: string): LoadedReference {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (error) {
    throw new HeadroomError('HR_ERR_REFERENCE_INVALID', `${sourceName}: is not JSON (${error instanceof Error ? error.message : String(error)})`, {
      cause: error,
      context: { source: sourceName, field: '' },
    });
  }
  return parseReference(json, sourceName);
}
