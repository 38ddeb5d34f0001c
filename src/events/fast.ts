/**
 * The hot path: a hand-written validator for parsed events that answers only "valid, here is the
 * event" or "not valid". zod's safeParse costs about as much as JSON.parse itself on a typical message;
 * these plain property reads cost a small fraction of it. On "not valid" the caller runs the zod schema
 * to find out why (slow.ts), so this file never has to explain anything.
 *
 * The contract, checked over generated inputs by test/unit/events/agreement.test.ts: for every value,
 * this returns an event exactly when the zod schema accepts it, and then the same event.
 */
import { classNameProblem, classesProblem, epochMs, parseIsoTime, segmentKeyProblem, textProblem, votesProblem } from './checks.js';
import type { DecodeLimits } from './limits.js';
import type { Label, OutcomeEvent, Score, ScoredEvent } from './schema.js';

export const EMPTY_SEGMENT: Readonly<Record<string, string>> = Object.freeze({});

/** One constructor for both paths, so every decoded event has the same keys in the same order. */
export function makeScoredEvent(
  id: string,
  model: string,
  version: string,
  timeMs: number,
  score: Score,
  label: Label | undefined,
  segment: Readonly<Record<string, string>>,
): ScoredEvent {
  return { id, model, version, timeMs, score, label, segment };
}

/**
 * Model, version and segment names repeat on nearly every message, so the character scan is remembered
 * for the names seen last: pairs of slots picked by length and end characters, each pair holding the two
 * strings that last passed there. A hit costs one or two comparisons (pointer comparisons for the short
 * strings JSON.parse internalises); a miss scans as before and takes the pair's first slot. Only strings
 * that passed are kept, only short ones (so what is held is a few kilobytes whatever the limits), and the
 * length limit is checked on every call, so the answer is always the rule's own.
 */
class PassedTexts {
  private readonly slots: string[];
  private readonly pairMask: number;

  constructor(
    pairs: number,
    private readonly rule: (text: string, maxLength: number) => string | undefined,
  ) {
    this.slots = new Array<string>(2 * pairs).fill('');
    this.pairMask = 2 * pairs - 2;
  }

  passes(text: string, maxLength: number): boolean {
    const n = text.length;
    if (n === 0 || n > maxLength) return false;
    const slots = this.slots;
    const at = (n + 7 * text.charCodeAt(0) + 3 * text.charCodeAt(n - 1)) & this.pairMask;
    if (slots[at] === text || slots[at + 1] === text) return true;
    if (this.rule(text, maxLength) !== undefined) return false;
    if (n <= MAX_REMEMBERED_LENGTH) {
      slots[at + 1] = slots[at] as string;
      slots[at] = text;
    }
    return true;
  }
}

const MAX_REMEMBERED_LENGTH = 64;
// Powers of two, so the pair index is a mask.
const names = new PassedTexts(32, textProblem);
const segmentKeys = new PassedTexts(8, segmentKeyProblem);
const classNames = new PassedTexts(8, classNameProblem);

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/** Absent (or null) time falls back to the source's timestamp, e.g. the Kafka message timestamp. */
export function timeOf(time: unknown, fallbackTimeMs: number | undefined): number | undefined {
  if (time === undefined || time === null) return fallbackTimeMs === undefined ? undefined : epochMs(fallbackTimeMs);
  if (typeof time === 'string') return parseIsoTime(time);
  if (typeof time === 'number') return epochMs(time);
  return undefined;
}

function fastScore(value: unknown, maxText: number): Score | undefined {
  if (!isRecord(value)) return undefined;
  // New objects rather than the input: zod strips unknown keys, and so must we.
  switch (value.kind) {
    case 'probability': {
      const p = value.p;
      return typeof p === 'number' && p >= 0 && p <= 1 ? { kind: 'probability', p } : undefined;
    }
    case 'logit': {
      const z = value.z;
      return typeof z === 'number' && Number.isFinite(z) ? { kind: 'logit', z } : undefined;
    }
    case 'votes': {
      const { sum, total } = value;
      if (typeof sum !== 'number' || typeof total !== 'number' || !Number.isFinite(sum) || !Number.isFinite(total)) return undefined;
      return votesProblem(sum, total) === undefined ? { kind: 'votes', sum, total } : undefined;
    }
    case 'classes': {
      const values = value.values;
      if (!isRecord(values)) return undefined;
      for (const name in values) {
        const v = values[name];
        if (typeof v !== 'number' || !(v >= 0) || v === Infinity) return undefined;
        if (!classNames.passes(name, maxText)) return undefined;
      }
      // Checked entries are numbers, so the map can be kept as it came from JSON.parse.
      const checked = values as Record<string, number>;
      return classesProblem(checked) === undefined ? { kind: 'classes', values: checked } : undefined;
    }
    case 'margin': {
      const v = value.value;
      return typeof v === 'number' && v >= 0 && v <= 1 ? { kind: 'margin', value: v } : undefined;
    }
    default:
      return undefined;
  }
}

function isLabel(value: unknown, maxText: number): value is Label {
  switch (typeof value) {
    case 'string':
      return textProblem(value, maxText) === undefined;
    case 'number':
      return Number.isFinite(value);
    case 'boolean':
      return true;
    default:
      return false;
  }
}

function fastSegment(value: unknown, limits: DecodeLimits): Readonly<Record<string, string>> | undefined {
  if (value === undefined || value === null) return EMPTY_SEGMENT;
  if (!isRecord(value)) return undefined;
  let count = 0;
  for (const key in value) {
    if (++count > limits.maxSegmentKeys) return undefined;
    const v = value[key];
    if (typeof v !== 'string' || !names.passes(v, limits.maxTextLength)) return undefined;
    if (!segmentKeys.passes(key, limits.maxTextLength)) return undefined;
  }
  return value as Record<string, string>;
}

export function fastScoredEvent(value: unknown, limits: DecodeLimits, fallbackTimeMs: number | undefined): ScoredEvent | undefined {
  if (!isRecord(value)) return undefined;
  const { id, model, version } = value;
  if (typeof id !== 'string' || textProblem(id, limits.maxIdLength) !== undefined) return undefined;
  if (typeof model !== 'string' || !names.passes(model, limits.maxTextLength)) return undefined;
  if (typeof version !== 'string' || !names.passes(version, limits.maxTextLength)) return undefined;
  const timeMs = timeOf(value.time, fallbackTimeMs);
  if (timeMs === undefined) return undefined;
  const score = fastScore(value.score, limits.maxTextLength);
  if (score === undefined) return undefined;
  let label = value.label;
  if (label === null) label = undefined;
  else if (label !== undefined && !isLabel(label, limits.maxTextLength)) return undefined;
  const segment = fastSegment(value.segment, limits);
  if (segment === undefined) return undefined;
  return makeScoredEvent(id, model, version, timeMs, score, label as Label | undefined, segment);
}

export function fastOutcomeEvent(value: unknown, limits: DecodeLimits, fallbackTimeMs: number | undefined): OutcomeEvent | undefined {
  if (!isRecord(value)) return undefined;
  const { id, label } = value;
  if (typeof id !== 'string' || textProblem(id, limits.maxIdLength) !== undefined) return undefined;
  if (!isLabel(label, limits.maxTextLength)) return undefined;
  const timeMs = timeOf(value.time, fallbackTimeMs);
  if (timeMs === undefined) return undefined;
  return { id, label, timeMs };
}
