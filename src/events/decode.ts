/**
 * Bytes in, event or rejection out. Runs on every Kafka message, so the common valid message never
 * touches zod: size check, strict UTF-8, JSON.parse, the fast validator. Anything the fast validator
 * refuses goes through the zod schema, which names the reason (and has the last word if the two ever
 * disagree, so a fast-path bug costs speed, never a wrongly rejected event).
 */
import { fastOutcomeEvent, fastScoredEvent } from './fast.js';
import { DEFAULT_DECODE_LIMITS } from './limits.js';
import type { DecodeLimits } from './limits.js';
import { rejection } from './reasons.js';
import type { Rejection } from './reasons.js';
import { makeEventSchemas } from './schema.js';
import type { EventSchemas, OutcomeEvent, ScoredEvent } from './schema.js';
import { slowOutcomeEvent, slowScoredEvent } from './slow.js';
import type { DecodeResult } from './slow.js';

export type { DecodeResult } from './slow.js';

// fatal: true turns malformed UTF-8 into an exception instead of silently inserting U+FFFD, which would
// change ids and label values. Decoding without { stream } keeps no state between calls, so one decoder
// serves every caller.
const utf8 = new TextDecoder('utf-8', { fatal: true });

// Schemas close over their limits. Built on first need (a rejection) per limits object; limits are
// made once at start-up (resolveDecodeLimits), so this holds a handful of entries at most.
const schemaCache = new WeakMap<DecodeLimits, EventSchemas>();

export function schemasFor(limits: DecodeLimits): EventSchemas {
  let schemas = schemaCache.get(limits);
  if (schemas === undefined) {
    schemas = makeEventSchemas(limits);
    schemaCache.set(limits, schemas);
  }
  return schemas;
}

const MAX_DETAIL = 200;

// A failed parse is wrapped in a class instance so that the hot path returns the parsed value itself,
// not a fresh { ok, value } object per message; JSON.parse can never produce an instance of this class.
class ParseFailure {
  constructor(readonly rejection: Rejection) {}
}

function parseJson(bytes: Uint8Array, limits: DecodeLimits): unknown {
  // Before decoding: a 100 MB message must cost a length comparison, not a parse.
  if (bytes.byteLength > limits.maxBytes) {
    return new ParseFailure(rejection('too_large', '', `message is ${bytes.byteLength} bytes, the limit is ${limits.maxBytes}`));
  }
  let text: string;
  try {
    text = utf8.decode(bytes);
  } catch {
    return new ParseFailure(rejection('not_utf8', '', 'message bytes are not valid UTF-8'));
  }
  try {
    return JSON.parse(text);
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    return new ParseFailure(rejection('not_json', '', message.length > MAX_DETAIL ? `${message.slice(0, MAX_DETAIL)}...` : message));
  }
}

/** Validates an already parsed value (a replayed file line, a test fixture). */
export function validateScoredEvent(
  value: unknown,
  limits: DecodeLimits = DEFAULT_DECODE_LIMITS,
  fallbackTimeMs?: number,
): DecodeResult<ScoredEvent> {
  const event = fastScoredEvent(value, limits, fallbackTimeMs);
  return event !== undefined ? { ok: true, event } : slowScoredEvent(value, schemasFor(limits), fallbackTimeMs);
}

export function validateOutcomeEvent(
  value: unknown,
  limits: DecodeLimits = DEFAULT_DECODE_LIMITS,
  fallbackTimeMs?: number,
): DecodeResult<OutcomeEvent> {
  const event = fastOutcomeEvent(value, limits, fallbackTimeMs);
  return event !== undefined ? { ok: true, event } : slowOutcomeEvent(value, schemasFor(limits), fallbackTimeMs);
}

/**
 * `fallbackTimeMs` stands in for an absent `time`: the Kafka message timestamp, say. Without it an
 * event with no time is rejected (missing_field, field `time`).
 */
export function decodeScoredEvent(
  bytes: Uint8Array,
  limits: DecodeLimits = DEFAULT_DECODE_LIMITS,
  fallbackTimeMs?: number,
): DecodeResult<ScoredEvent> {
  const value = parseJson(bytes, limits);
  return value instanceof ParseFailure ? value.rejection : validateScoredEvent(value, limits, fallbackTimeMs);
}

export function decodeOutcomeEvent(
  bytes: Uint8Array,
  limits: DecodeLimits = DEFAULT_DECODE_LIMITS,
  fallbackTimeMs?: number,
): DecodeResult<OutcomeEvent> {
  const value = parseJson(bytes, limits);
  return value instanceof ParseFailure ? value.rejection : validateOutcomeEvent(value, limits, fallbackTimeMs);
}
