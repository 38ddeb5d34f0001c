/**
 * The wire format of scored and outcome events (DESIGN.md, "Wire format") as zod schemas: the one
 * statement of the format. Types derive from it; the slow path uses it to explain a rejection.
 * Every rule beyond JSON types is a check that names its reason code in `params.reason`, so the
 * mapping from zod issues to reasons (slow.ts) needs no guessing from messages.
 *
 * `null` on an optional field (time, label, segment) means absent: many serialisers write it for an
 * empty optional. Unknown fields are ignored, so producers may add fields without breaking consumers.
 */
import { z } from 'zod';
import {
  classNameProblem,
  classesProblem,
  epochMs,
  parseIsoTime,
  segmentKeyProblem,
  textProblem,
  votesProblem,
} from './checks.js';
import type { DecodeLimits } from './limits.js';
import type { RejectionReason } from './reasons.js';

type Check<T> = (payload: z.core.ParsePayload<T>) => void;

function fail<T>(payload: z.core.ParsePayload<T>, reason: RejectionReason, message: string, path: PropertyKey[] = []): void {
  payload.issues.push({ code: 'custom', message, input: payload.value, path, params: { reason } });
}

const TEXT_MESSAGES: Record<string, string> = {
  empty_value: 'must not be empty',
  value_too_long: 'is longer than the limit',
  control_character: 'holds a control character',
  not_utf8: 'holds a lone surrogate, which has no UTF-8 form',
  bad_segment_key: 'must not contain "=" or be __proto__',
  bad_class_name: 'must not be __proto__',
};

function textCheck(problemOf: (text: string) => RejectionReason | undefined, max: number): Check<string> {
  return (payload) => {
    const problem = problemOf(payload.value);
    if (problem !== undefined) {
      const limit = problem === 'value_too_long' ? ` of ${max} (got ${payload.value.length})` : '';
      fail(payload, problem, `${TEXT_MESSAGES[problem] ?? problem}${limit}`);
    }
  };
}

function unitInterval(reason: RejectionReason): Check<number> {
  return (payload) => {
    if (!(payload.value >= 0 && payload.value <= 1)) fail(payload, reason, `must be in [0, 1], got ${payload.value}`);
  };
}

const votesCheck: Check<{ sum: number; total: number }> = (payload) => {
  const { sum, total } = payload.value;
  const problem = votesProblem(sum, total);
  if (problem === undefined) return;
  const message =
    problem.reason === 'votes_total_not_positive' ? `must be > 0, got ${total}` : `|sum| = ${Math.abs(sum)} exceeds total = ${total}`;
  fail(payload, problem.reason, message, [problem.field]);
};

const classesCheck: Check<Record<string, number>> = (payload) => {
  const problem = classesProblem(payload.value);
  if (problem === 'classes_too_few') fail(payload, problem, `needs at least 2 classes, got ${Object.keys(payload.value).length}`);
  else if (problem === 'classes_not_normalised') {
    const sum = Object.values(payload.value).reduce((a, b) => a + b, 0);
    fail(payload, problem, `class values must sum to 1, got ${sum}`);
  }
};

const nonNegative: Check<number> = (payload) => {
  if (payload.value < 0) fail(payload, 'class_value_negative', `must be >= 0, got ${payload.value}`);
};

/**
 * zod's records skip an own `__proto__` key without a word (it cannot be copied into a plain object).
 * We refuse it instead, so a producer learns of it: this check sees the raw input, before the record.
 */
function noProtoKey(reason: RejectionReason): Check<unknown> {
  return (payload) => {
    const value = payload.value;
    if (typeof value === 'object' && value !== null && Object.hasOwn(value, '__proto__')) {
      fail(payload, reason, 'the key __proto__ is reserved', ['__proto__']);
    }
  };
}

const isoCheck: Check<string> = (payload) => {
  if (parseIsoTime(payload.value) === undefined) {
    fail(payload, 'bad_time', 'must be an RFC 3339 date-time with a zone (e.g. 2026-12-01T10:00:00.123Z), from 1970 on');
  }
};

const epochCheck: Check<number> = (payload) => {
  if (epochMs(payload.value) === undefined) fail(payload, 'bad_time', `epoch milliseconds must be in [0, 8.64e15], got ${payload.value}`);
};

export function makeEventSchemas(limits: DecodeLimits) {
  const max = limits.maxTextLength;
  const name = z.string().check(textCheck((t) => textProblem(t, max), max));
  const id = z.string().check(textCheck((t) => textProblem(t, limits.maxIdLength), limits.maxIdLength));
  const className = z.string().check(textCheck((t) => classNameProblem(t, max), max));
  const segmentKey = z.string().check(textCheck((t) => segmentKeyProblem(t, max), max));

  // z.number() refuses NaN and ±Infinity (zod 4), which is the not_finite rule.
  const score = z.discriminatedUnion('kind', [
    z.object({ kind: z.literal('probability'), p: z.number().check(unitInterval('probability_out_of_range')) }),
    z.object({ kind: z.literal('logit'), z: z.number() }),
    z.object({ kind: z.literal('votes'), sum: z.number(), total: z.number() }).check(votesCheck),
    z.object({
      kind: z.literal('classes'),
      values: z
        .unknown()
        .check(noProtoKey('bad_class_name'))
        .pipe(z.record(className, z.number().check(nonNegative)).check(classesCheck)),
    }),
    z.object({ kind: z.literal('margin'), value: z.number().check(unitInterval('margin_out_of_range')) }),
  ]);

  const label = z.union([name, z.number(), z.boolean()]);
  const time = z.union([z.string().check(isoCheck), z.number().check(epochCheck)]);
  const segment = z
    .unknown()
    .check(noProtoKey('bad_segment_key'))
    .pipe(
      z.record(segmentKey, name).check((payload) => {
        const n = Object.keys(payload.value).length;
        if (n > limits.maxSegmentKeys) fail(payload, 'too_many_segment_keys', `has ${n} keys, the limit is ${limits.maxSegmentKeys}`);
      }),
    );

  const scoredEvent = z.object({
    id,
    model: name,
    version: name,
    time: time.nullish(),
    score,
    label: label.nullish(),
    segment: segment.nullish(),
  });
  const outcomeEvent = z.object({ id, time: time.nullish(), label });

  return { score, label, time, segment, scoredEvent, outcomeEvent };
}

export type EventSchemas = ReturnType<typeof makeEventSchemas>;

/** What `union` issues mean when no branch came close, by the field they sit on. */
export const UNION_REASONS: Readonly<Record<string, RejectionReason>> = { time: 'bad_time', label: 'bad_label' };

export type Score = z.infer<EventSchemas['score']>;
export type ScoreKind = Score['kind'];
export type Label = z.infer<EventSchemas['label']>;
export type WireScoredEvent = z.infer<EventSchemas['scoredEvent']>;
export type WireOutcomeEvent = z.infer<EventSchemas['outcomeEvent']>;

/**
 * A decoded scored event. The decoder always sets the `label` key (undefined when the event has none),
 * so decoded events share one object shape. The event may share `segment` and `score.values` with the
 * parsed input; treat it as read-only.
 */
export type ScoredEvent = Readonly<Pick<WireScoredEvent, 'id' | 'model' | 'version' | 'score'>> & {
  readonly timeMs: number;
  readonly label?: Label | undefined;
  readonly segment: Readonly<Record<string, string>>;
};

/** A decoded outcome event: the delayed true label of the scored event with the same id. */
export type OutcomeEvent = Readonly<Pick<WireOutcomeEvent, 'id' | 'label'>> & { readonly timeMs: number };
