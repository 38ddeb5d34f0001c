/**
 * The rules a scored event must satisfy, as small pure predicates. The zod schema (schema.ts) and the
 * fast validator (fast.ts) both call these, so a rule is written once; what the two paths must agree on
 * beyond that is structure, which test/unit/events/agreement.test.ts checks over generated inputs.
 */
import type { RejectionReason } from './reasons.js';

/** Vote sums are accumulated in floating point; |sum| may exceed total by this relative amount. */
export const VOTES_RELATIVE_SLACK = 1e-12;
/** Class values must sum to 1 within this; producers round, softmax does not sum to exactly 1. */
export const CLASSES_SUM_TOLERANCE = 1e-6;
/** The largest time a JavaScript Date can hold (ECMA-262 TimeClip), in epoch milliseconds. */
export const MAX_TIME_MS = 8.64e15;

export type TextProblem = 'empty_value' | 'value_too_long' | 'control_character' | 'not_utf8';

/**
 * Names end up as Prometheus label values, page text and log fields. Control characters break or spoof
 * all three; a lone surrogate (reachable through a JSON `\ud800` escape even from valid UTF-8 bytes)
 * cannot be written back out as UTF-8 at all.
 */
export function textProblem(text: string, maxLength: number): TextProblem | undefined {
  const n = text.length;
  if (n === 0) return 'empty_value';
  if (n > maxLength) return 'value_too_long';
  // A charCode loop, not a regex: names are short, and eslint's no-control-regex is right to dislike
  // control characters in patterns. Printable ASCII, nearly every name, takes one comparison a unit.
  for (let i = 0; i < n; i++) {
    const c = text.charCodeAt(i);
    if (c < 0x20 || c >= 0x7f) return unusualTextProblem(text, i);
  }
  return undefined;
}

function unusualTextProblem(text: string, from: number): TextProblem | undefined {
  const n = text.length;
  for (let i = from; i < n; i++) {
    const c = text.charCodeAt(i);
    if (c < 0x20 || (c >= 0x7f && c <= 0x9f)) return 'control_character';
    if (c >= 0xd800 && c <= 0xdfff) {
      const next = i + 1 < n ? text.charCodeAt(i + 1) : 0;
      if (c > 0xdbff || next < 0xdc00 || next > 0xdfff) return 'not_utf8';
      i++;
    }
  }
  return undefined;
}

/**
 * Series are named `key=value`, so a key must not contain `=` (a value may: the first `=` splits).
 * `__proto__` cannot survive being copied into a plain object. The key `all` is allowed: `all=x` cannot
 * be mistaken for the whole-version series `all`.
 */
export function segmentKeyProblem(key: string, maxLength: number): TextProblem | 'bad_segment_key' | undefined {
  const problem = textProblem(key, maxLength);
  if (problem !== undefined) return problem;
  return key.includes('=') || key === '__proto__' ? 'bad_segment_key' : undefined;
}

export function classNameProblem(name: string, maxLength: number): TextProblem | 'bad_class_name' | undefined {
  const problem = textProblem(name, maxLength);
  if (problem !== undefined) return problem;
  return name === '__proto__' ? 'bad_class_name' : undefined;
}

export function votesProblem(sum: number, total: number): { reason: RejectionReason; field: 'sum' | 'total' } | undefined {
  if (!(total > 0)) return { reason: 'votes_total_not_positive', field: 'total' };
  if (Math.abs(sum) > total * (1 + VOTES_RELATIVE_SLACK)) return { reason: 'votes_sum_exceeds_total', field: 'sum' };
  return undefined;
}

/** Values are already known to be finite and non-negative; this checks the map as a whole. */
export function classesProblem(values: Readonly<Record<string, number>>): 'classes_too_few' | 'classes_not_normalised' | undefined {
  let count = 0;
  let sum = 0;
  for (const key in values) {
    count++;
    sum += values[key] as number;
  }
  if (count < 2) return 'classes_too_few';
  return Math.abs(sum - 1) > CLASSES_SUM_TOLERANCE ? 'classes_not_normalised' : undefined;
}

const DAYS_IN_MONTH = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];

/** The two-digit number at `at`, or -1. */
function twoDigits(text: string, at: number): number {
  const a = text.charCodeAt(at) - 48;
  const b = text.charCodeAt(at + 1) - 48;
  return a >= 0 && a <= 9 && b >= 0 && b <= 9 ? a * 10 + b : -1;
}

const DASH = 45;
const COLON = 58;
const DOT = 46;
const PLUS = 43;

/** Days from 1970-01-01 to a proleptic Gregorian date (year >= 0), by H. Hinnant's days_from_civil. */
function daysFromCivil(year: number, month: number, day: number): number {
  const y = month <= 2 ? year - 1 : year;
  const era = Math.floor(y / 400);
  const yearOfEra = y - era * 400;
  const dayOfYear = Math.floor((153 * (month > 2 ? month - 3 : month + 9) + 2) / 5) + day - 1;
  const dayOfEra = yearOfEra * 365 + Math.floor(yearOfEra / 4) - Math.floor(yearOfEra / 100) + dayOfYear;
  return era * 146097 + dayOfEra - 719468;
}

/**
 * RFC 3339 date-time (`2026-12-01T10:00:00.123Z`, `...+02:00`; the ISO-8601 profile producer libraries
 * write), zone required: a time without one would be read in the consumer's local zone, and two
 * consumers could disagree. Not Date.parse, which also takes `Dec 1 2026` and rolls `Feb 31` into
 * March. Leap seconds (`:60`) are refused; digits beyond milliseconds are truncated. Read by hand
 * because a regex plus Date.UTC cost as much as parsing the whole message. Returns epoch ms, or
 * undefined when the text is not such a time or falls outside [0, MAX_TIME_MS].
 */
export function parseIsoTime(text: string): number | undefined {
  const n = text.length;
  if (n < 20 || text.charCodeAt(4) !== DASH || text.charCodeAt(7) !== DASH || text[10] !== 'T') return undefined;
  if (text.charCodeAt(13) !== COLON || text.charCodeAt(16) !== COLON) return undefined;
  const century = twoDigits(text, 0);
  const yy = twoDigits(text, 2);
  const month = twoDigits(text, 5);
  const day = twoDigits(text, 8);
  const hour = twoDigits(text, 11);
  const minute = twoDigits(text, 14);
  const second = twoDigits(text, 17);
  if (century < 0 || yy < 0 || month < 1 || month > 12 || day < 1 || hour < 0 || hour > 23) return undefined;
  if (minute < 0 || minute > 59 || second < 0 || second > 59) return undefined;
  const year = century * 100 + yy;
  const leap = month === 2 && year % 4 === 0 && (year % 100 !== 0 || year % 400 === 0);
  if (day > (DAYS_IN_MONTH[month - 1] as number) + (leap ? 1 : 0)) return undefined;
  let at = 19;
  let millis = 0;
  if (text.charCodeAt(at) === DOT) {
    let digits = 0;
    for (at++; at < n; at++, digits++) {
      const d = text.charCodeAt(at) - 48;
      if (!(d >= 0 && d <= 9)) break;
      if (digits < 3) millis = millis * 10 + d;
    }
    if (digits === 0 || digits > 9) return undefined;
    if (digits < 3) millis *= digits === 1 ? 100 : 10;
  }
  let offsetMinutes = 0;
  const zone = text.charCodeAt(at);
  if (text[at] === 'Z') {
    if (at + 1 !== n) return undefined;
  } else {
    if ((zone !== PLUS && zone !== DASH) || at + 6 !== n || text.charCodeAt(at + 3) !== COLON) return undefined;
    const offsetHour = twoDigits(text, at + 1);
    const offsetMinute = twoDigits(text, at + 4);
    if (offsetHour < 0 || offsetHour > 23 || offsetMinute < 0 || offsetMinute > 59) return undefined;
    offsetMinutes = (zone === DASH ? -1 : 1) * (offsetHour * 60 + offsetMinute);
  }
  const ms = ((daysFromCivil(year, month, day) * 24 + hour) * 60 + minute - offsetMinutes) * 60_000 + second * 1000 + millis;
  return ms >= 0 && ms <= MAX_TIME_MS ? ms : undefined;
}

/** Epoch ms as a number: finite, in [0, MAX_TIME_MS]; fractions are floored to whole milliseconds. */
export function epochMs(value: number): number | undefined {
  // `+ 0` turns -0 into 0, so equal times compare equal under Object.is.
  return value >= 0 && value <= MAX_TIME_MS ? Math.floor(value) + 0 : undefined;
}
