/**
 * Options of a reference build, checked once up front so a bad setting fails before a long input is
 * read, with the option named. The CLI checks its own flags first (HR_ERR_CLI_USAGE); these checks
 * catch programmatic callers (replay, demo, tests).
 */
import { z } from 'zod';
import { HeadroomError } from '../errors.js';
import { MAX_COMPRESSION, MIN_COMPRESSION, normaliseThresholds } from '../sketch/index.js';

export const DEFAULT_REFERENCE_THRESHOLDS: readonly number[] = Object.freeze([0.1, 0.25]);
/** Per segment key, values beyond the most frequent this many share one `k=other` segment. */
export const DEFAULT_MAX_SEGMENT_VALUES = 50;
export const OTHER_SEGMENT_VALUE = 'other';

export interface ReferenceOptions {
  /** ISO-8601 date-time with a zone; passed in because the core never reads the clock. */
  readonly createdAt: string;
  /** Where the reference events came from, in words (files, a replayed time range). */
  readonly source?: string;
  /** Low-margin thresholds θ, each in (0, 1). */
  readonly thresholds?: readonly number[];
  /** Segment keys that get their own reference segment per value (`line` gives `line=1`, `line=2`...). */
  readonly segmentKeys?: readonly string[];
  readonly maxSegmentValues?: number;
  /** Digest compression δ (src/sketch); the default matches the live windows. */
  readonly compression?: number;
}

export interface ResolvedReferenceOptions {
  readonly createdAt: string;
  readonly source: string;
  readonly thresholds: readonly number[];
  readonly segmentKeys: readonly string[];
  readonly maxSegmentValues: number;
  readonly compression: number | undefined;
}

function bad(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_REFERENCE_ARGUMENT', `${option} ${detail}`, { context: { option, value } });
}

const isoDateTime = z.iso.datetime({ offset: true });

export function resolveReferenceOptions(options: ReferenceOptions): ResolvedReferenceOptions {
  if (!isoDateTime.safeParse(options.createdAt).success) {
    throw bad('createdAt', 'must be an ISO-8601 date-time with a zone, e.g. 2026-12-01T10:00:00.000Z', options.createdAt);
  }
  const thresholds = normaliseThresholds(options.thresholds ?? DEFAULT_REFERENCE_THRESHOLDS, 'thresholds', (field, detail) =>
    bad(field, detail, options.thresholds),
  );
  if (thresholds.length === 0) throw bad('thresholds', 'must hold at least one θ', options.thresholds);
  for (const t of thresholds) {
    // θ = 0 counts nothing and θ = 1 counts every prediction short of certainty: neither is a threshold.
    if (!(t > 0 && t < 1)) throw bad('thresholds', `must lie in (0, 1), got ${t}`, options.thresholds);
  }
  const segmentKeys = options.segmentKeys ?? [];
  segmentKeys.forEach((key, i) => {
    if (typeof key !== 'string' || key === '' || key.includes('=') || key === '__proto__') {
      throw bad(`segmentKeys[${i}]`, 'must be a non-empty name without "=" (segments are named key=value)', key);
    }
    if (segmentKeys.indexOf(key) !== i) throw bad('segmentKeys', `names ${JSON.stringify(key)} twice`, segmentKeys);
  });
  const maxSegmentValues = options.maxSegmentValues ?? DEFAULT_MAX_SEGMENT_VALUES;
  if (!(Number.isSafeInteger(maxSegmentValues) && maxSegmentValues >= 1)) {
    throw bad('maxSegmentValues', 'must be an integer >= 1', maxSegmentValues);
  }
  const compression = options.compression;
  if (compression !== undefined && !(compression >= MIN_COMPRESSION && compression <= MAX_COMPRESSION)) {
    throw bad('compression', `must be a number in [${MIN_COMPRESSION}, ${MAX_COMPRESSION}]`, compression);
  }
  return { createdAt: options.createdAt, source: options.source ?? '', thresholds, segmentKeys: [...segmentKeys], maxSegmentValues, compression };
}
