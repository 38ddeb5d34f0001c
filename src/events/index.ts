export { decodeOutcomeEvent, decodeScoredEvent, validateOutcomeEvent, validateScoredEvent } from './decode.js';
export type { DecodeResult } from './decode.js';
export { DEFAULT_DECODE_LIMITS, resolveDecodeLimits } from './limits.js';
export type { DecodeLimits } from './limits.js';
export { REJECTION_REASONS, REJECTION_REASON_CODES, isRejectionReason, rejection } from './reasons.js';
export type { Rejection, RejectionReason } from './reasons.js';
export { makeEventSchemas } from './schema.js';
export type { EventSchemas, Label, OutcomeEvent, Score, ScoreKind, ScoredEvent, WireOutcomeEvent, WireScoredEvent } from './schema.js';
export { CLASSES_SUM_TOLERANCE, MAX_TIME_MS, VOTES_RELATIVE_SLACK } from './checks.js';
