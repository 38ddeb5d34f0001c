/**
 * The slow path: run the zod schema and turn its first issue into a stable reason code and field path.
 * Only rejected messages (and any the fast path wrongly refused) come here, so clarity wins over speed.
 */
import type { z } from 'zod';
import { EMPTY_SEGMENT, makeScoredEvent, timeOf } from './fast.js';
import { isRejectionReason, rejection } from './reasons.js';
import type { Rejection, RejectionReason } from './reasons.js';
import { UNION_REASONS } from './schema.js';
import type { EventSchemas, OutcomeEvent, ScoredEvent } from './schema.js';

export type DecodeResult<T> = { readonly ok: true; readonly event: T } | Rejection;

const PLAIN_KEY = /^[\p{L}\p{N}_-]+$/u;
const MAX_KEY_IN_PATH = 64;

/**
 * `score.values["a=b"]`: plain keys joined with dots, anything else quoted and cut short, so a hostile
 * key (a megabyte long, or full of control characters) cannot flood a log line or a Kafka header.
 */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else if (typeof key === 'string' && PLAIN_KEY.test(key) && key.length <= MAX_KEY_IN_PATH) out += out === '' ? key : `.${key}`;
    else {
      const text = String(key);
      const cut = text.length > MAX_KEY_IN_PATH ? `${text.slice(0, MAX_KEY_IN_PATH)}...` : text;
      // JSON.stringify escapes C0 controls and lone surrogates; the rest of the unprintables are ours to escape.
      const quoted = JSON.stringify(cut).replace(/[\u007f-\u009f\u2028\u2029]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
      out += `[${quoted}]`;
    }
  }
  return out;
}

function isNonFiniteNumber(value: unknown): boolean {
  return typeof value === 'number' && !Number.isFinite(value);
}

function typeReason(input: unknown, path: readonly PropertyKey[]): RejectionReason {
  if (input === undefined) return 'missing_field';
  if (isNonFiniteNumber(input)) return 'not_finite';
  return path.length === 0 ? 'not_object' : 'wrong_type';
}

function fromIssue(issue: z.core.$ZodIssue, prefix: readonly PropertyKey[]): Rejection {
  const path = [...prefix, ...issue.path];
  const field = formatPath(path);
  switch (issue.code) {
    case 'custom': {
      const reason: unknown = issue.params?.reason;
      return rejection(isRejectionReason(reason) ? reason : 'wrong_type', field, issue.message);
    }
    case 'invalid_type':
      return rejection(typeReason(issue.input, path), field, issue.message);
    case 'invalid_key': {
      const inner = issue.issues[0];
      return inner === undefined ? rejection('wrong_type', field, issue.message) : fromIssue(inner, path);
    }
    case 'invalid_union': {
      if (issue.discriminator !== undefined) {
        // The issue sits on the discriminator (`score.kind`); its input is the enclosing object.
        const holder = issue.input as Record<string, unknown> | undefined;
        const absent = holder?.[issue.discriminator] === undefined;
        return rejection(absent ? 'missing_field' : 'unknown_score_kind', field, absent ? 'required field is absent' : issue.message);
      }
      if (issue.input === undefined) return rejection('missing_field', field, 'required field is absent');
      if (isNonFiniteNumber(issue.input)) return rejection('not_finite', field, 'number is not finite');
      // A branch that got past the type check (a string label that is empty, say) says what is wrong.
      for (const branch of issue.errors) {
        const first = branch[0];
        if (first !== undefined && first.code !== 'invalid_type') return fromIssue(first, path);
      }
      const last = path[path.length - 1];
      const reason = (typeof last === 'string' ? UNION_REASONS[last] : undefined) ?? 'wrong_type';
      return rejection(reason, field, issue.message);
    }
    default:
      return rejection('wrong_type', field, issue.message);
  }
}

export function rejectionFromZod(error: z.core.$ZodError): Rejection {
  const first = error.issues[0];
  return first === undefined ? rejection('wrong_type', '', 'schema rejected the message') : fromIssue(first, []);
}

function noTime(fallbackTimeMs: number | undefined): Rejection {
  return fallbackTimeMs === undefined
    ? rejection('missing_field', 'time', 'time is absent and the source gave no timestamp')
    : rejection('bad_time', 'time', `time is absent and the source timestamp ${fallbackTimeMs} is not valid epoch ms`);
}

export function slowScoredEvent(value: unknown, schemas: EventSchemas, fallbackTimeMs: number | undefined): DecodeResult<ScoredEvent> {
  const parsed = schemas.scoredEvent.safeParse(value, { reportInput: true });
  if (!parsed.success) return rejectionFromZod(parsed.error);
  const { id, model, version, time, score, label, segment } = parsed.data;
  const timeMs = timeOf(time, fallbackTimeMs);
  if (timeMs === undefined) return noTime(fallbackTimeMs);
  return { ok: true, event: makeScoredEvent(id, model, version, timeMs, score, label ?? undefined, segment ?? EMPTY_SEGMENT) };
}

export function slowOutcomeEvent(value: unknown, schemas: EventSchemas, fallbackTimeMs: number | undefined): DecodeResult<OutcomeEvent> {
  const parsed = schemas.outcomeEvent.safeParse(value, { reportInput: true });
  if (!parsed.success) return rejectionFromZod(parsed.error);
  const { id, time, label } = parsed.data;
  const timeMs = timeOf(time, fallbackTimeMs);
  if (timeMs === undefined) return noTime(fallbackTimeMs);
  return { ok: true, event: { id, label, timeMs } };
}
