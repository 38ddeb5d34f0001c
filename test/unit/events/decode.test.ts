import { describe, expect, it } from 'vitest';
import { HeadroomError } from '../../../src/errors.js';
import {
  DEFAULT_DECODE_LIMITS,
  REJECTION_REASONS,
  REJECTION_REASON_CODES,
  decodeOutcomeEvent,
  decodeScoredEvent,
  resolveDecodeLimits,
} from '../../../src/events/index.js';
import type { DecodeLimits, DecodeResult, RejectionReason, ScoredEvent } from '../../../src/events/index.js';
import { formatPath } from '../../../src/events/slow.js';
import { signedMargin } from '../../../src/margin/index.js';

const utf8 = new TextEncoder();
const bytes = (value: unknown): Uint8Array => utf8.encode(typeof value === 'string' ? value : JSON.stringify(value));

const T0 = '2026-12-01T10:00:00.123Z';
const T0_MS = Date.UTC(2026, 11, 1, 10, 0, 0, 123);

function base(overrides: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    id: 'p-000123',
    model: 'parcel-damage',
    version: '2026.11.3',
    time: T0,
    score: { kind: 'probability', p: 0.91 },
    label: 1,
    segment: { line: '2', site: 'north' },
    ...overrides,
  };
}

function without(key: string, event = base()): Record<string, unknown> {
  const copy = { ...event };
  delete copy[key];
  return copy;
}

function accepted(result: DecodeResult<ScoredEvent>): ScoredEvent {
  if (!result.ok) throw new Error(`expected acceptance, got ${result.reason} at ${result.field}: ${result.detail}`);
  return result.event;
}

describe('decodeScoredEvent accepts the wire format', () => {
  it('decodes the example of DESIGN.md', () => {
    const event = accepted(decodeScoredEvent(bytes(base())));
    expect(event).toStrictEqual({
      id: 'p-000123',
      model: 'parcel-damage',
      version: '2026.11.3',
      timeMs: T0_MS,
      score: { kind: 'probability', p: 0.91 },
      label: 1,
      segment: { line: '2', site: 'north' },
    });
  });

  it.each([
    [{ kind: 'probability', p: 0 }],
    [{ kind: 'probability', p: 1 }],
    [{ kind: 'logit', z: -2.3 }],
    [{ kind: 'logit', z: 800 }],
    [{ kind: 'votes', sum: 1.7, total: 3.2 }],
    [{ kind: 'votes', sum: -3.2, total: 3.2 }],
    [{ kind: 'classes', values: { a: 0.7, b: 0.2, c: 0.1 } }],
    [{ kind: 'classes', values: { cat: 0.5, dog: 0.5 } }],
    [{ kind: 'margin', value: 0 }],
    [{ kind: 'margin', value: 0.42 }],
    [{ kind: 'margin', value: 1 }],
  ])('score %j', (score) => {
    expect(accepted(decodeScoredEvent(bytes(base({ score })))).score).toStrictEqual(score);
  });

  it('drops unknown fields, at the top and inside the score', () => {
    const event = accepted(decodeScoredEvent(bytes(base({ extra: [1, 2], score: { kind: 'logit', z: 1, p: 7 } }))));
    expect(event).not.toHaveProperty('extra');
    expect(event.score).toStrictEqual({ kind: 'logit', z: 1 });
  });

  it('grants the float slack of votes (relative 1e-12) and classes (1e-6)', () => {
    expect(decodeScoredEvent(bytes(base({ score: { kind: 'votes', sum: 3.2 * (1 + 5e-13), total: 3.2 } }))).ok).toBe(true);
    expect(decodeScoredEvent(bytes(base({ score: { kind: 'classes', values: { a: 0.5, b: 0.5 + 9e-7 } } }))).ok).toBe(true);
  });

  it('takes epoch ms, zone offsets and sub-millisecond digits', () => {
    expect(accepted(decodeScoredEvent(bytes(base({ time: T0_MS })))).timeMs).toBe(T0_MS);
    expect(accepted(decodeScoredEvent(bytes(base({ time: T0_MS + 0.75 })))).timeMs).toBe(T0_MS);
    expect(accepted(decodeScoredEvent(bytes(base({ time: '2026-12-01T12:00:00.123+02:00' })))).timeMs).toBe(T0_MS);
    expect(accepted(decodeScoredEvent(bytes(base({ time: '2026-12-01T05:30:00.123456-04:30' })))).timeMs).toBe(T0_MS);
    expect(accepted(decodeScoredEvent(bytes(base({ time: '2026-12-01T10:00:00Z' })))).timeMs).toBe(T0_MS - 123);
  });

  it('uses the fallback time only when time is absent or null', () => {
    expect(accepted(decodeScoredEvent(bytes(without('time')), DEFAULT_DECODE_LIMITS, 42)).timeMs).toBe(42);
    expect(accepted(decodeScoredEvent(bytes(base({ time: null })), DEFAULT_DECODE_LIMITS, 42)).timeMs).toBe(42);
    expect(accepted(decodeScoredEvent(bytes(base()), DEFAULT_DECODE_LIMITS, 42)).timeMs).toBe(T0_MS);
  });

  it('reads null label and segment as absent, and every label type', () => {
    const noLabel = accepted(decodeScoredEvent(bytes(base({ label: null, segment: null }))));
    expect(noLabel.label).toBeUndefined();
    expect(noLabel.segment).toStrictEqual({});
    expect('label' in accepted(decodeScoredEvent(bytes(without('label'))))).toBe(true);
    for (const label of [1, 0, -1, true, false, 'benign']) {
      expect(accepted(decodeScoredEvent(bytes(base({ label })))).label).toBe(label);
    }
  });

  it('allows the segment key "all", values with "=", and non-ASCII text', () => {
    const segment = { all: 'x', query: 'a=b', région: 'Île-de-France', emoji: '\u{1F600}' };
    expect(accepted(decodeScoredEvent(bytes(base({ segment })))).segment).toStrictEqual(segment);
  });

  it('accepts names exactly at the limits', () => {
    const limits = resolveDecodeLimits({ maxTextLength: 5, maxIdLength: 3, maxSegmentKeys: 2 });
    const event = base({ id: 'abc', model: 'abcde', version: '1.2.3', label: 'benig', segment: { a: '12345', b: 'x' } });
    expect(decodeScoredEvent(bytes(event), limits).ok).toBe(true);
  });
});

interface Case {
  readonly name: string;
  readonly input: unknown;
  readonly reason: RejectionReason;
  readonly field: string;
  readonly limits?: Partial<DecodeLimits>;
  readonly fallback?: number;
}

const score = (s: unknown): Record<string, unknown> => base({ score: s });
const long = (n: number): string => 'x'.repeat(n);

const CASES: readonly Case[] = [
  { name: 'message over the byte limit', input: base(), limits: { maxBytes: 64 }, reason: 'too_large', field: '' },
  { name: 'oversize garbage is too_large, not not_json', input: `{${long(100)}`, limits: { maxBytes: 64 }, reason: 'too_large', field: '' },
  { name: 'invalid UTF-8 byte', input: new Uint8Array([0x7b, 0xff, 0x7d]), reason: 'not_utf8', field: '' },
  { name: 'overlong UTF-8 encoding', input: new Uint8Array([0x22, 0xc0, 0x80, 0x22]), reason: 'not_utf8', field: '' },
  { name: 'UTF-8 encoded surrogate', input: new Uint8Array([0x22, 0xed, 0xa0, 0x80, 0x22]), reason: 'not_utf8', field: '' },
  { name: 'lone surrogate through a \\u escape', input: JSON.stringify(base()).replace('parcel-damage', 'parcel\\ud800'), reason: 'not_utf8', field: 'model' },
  { name: 'truncated JSON', input: '{"id":', reason: 'not_json', field: '' },
  { name: 'empty message', input: '', reason: 'not_json', field: '' },
  { name: 'JSON array', input: '[1]', reason: 'not_object', field: '' },
  { name: 'JSON string', input: '"x"', reason: 'not_object', field: '' },
  { name: 'JSON null', input: 'null', reason: 'not_object', field: '' },
  { name: 'no id', input: without('id'), reason: 'missing_field', field: 'id' },
  { name: 'no model', input: without('model'), reason: 'missing_field', field: 'model' },
  { name: 'no version', input: without('version'), reason: 'missing_field', field: 'version' },
  { name: 'no score', input: without('score'), reason: 'missing_field', field: 'score' },
  { name: 'no score kind', input: score({ p: 0.5 }), reason: 'missing_field', field: 'score.kind' },
  { name: 'no p', input: score({ kind: 'probability', z: 0.5 }), reason: 'missing_field', field: 'score.p' },
  { name: 'no total', input: score({ kind: 'votes', sum: 0.5 }), reason: 'missing_field', field: 'score.total' },
  { name: 'no values', input: score({ kind: 'classes' }), reason: 'missing_field', field: 'score.values' },
  { name: 'no time and no fallback', input: without('time'), reason: 'missing_field', field: 'time' },
  { name: 'numeric id', input: base({ id: 5 }), reason: 'wrong_type', field: 'id' },
  { name: 'score not an object', input: base({ score: 'high' }), reason: 'wrong_type', field: 'score' },
  { name: 'p as a string', input: score({ kind: 'probability', p: '0.5' }), reason: 'wrong_type', field: 'score.p' },
  { name: 'values as an array', input: score({ kind: 'classes', values: [0.5, 0.5] }), reason: 'wrong_type', field: 'score.values' },
  { name: 'segment as an array', input: base({ segment: ['north'] }), reason: 'wrong_type', field: 'segment' },
  { name: 'numeric segment value', input: base({ segment: { line: 2 } }), reason: 'wrong_type', field: 'segment.line' },
  { name: 'p = 1e999', input: JSON.stringify(score({ kind: 'probability', p: 0.5 })).replace('0.5', '1e999'), reason: 'not_finite', field: 'score.p' },
  { name: 'z = -1e999', input: JSON.stringify(score({ kind: 'logit', z: 0.5 })).replace('0.5', '-1e999'), reason: 'not_finite', field: 'score.z' },
  { name: 'total = 1e999', input: JSON.stringify(score({ kind: 'votes', sum: 1, total: 0.5 })).replace('0.5', '1e999'), reason: 'not_finite', field: 'score.total' },
  { name: 'class value 1e999', input: JSON.stringify(score({ kind: 'classes', values: { a: 0.5, b: 0.25 } })).replace('0.25', '1e999'), reason: 'not_finite', field: 'score.values.b' },
  { name: 'time = 1e999', input: JSON.stringify(base({ time: 0.5 })).replace('0.5', '1e999'), reason: 'not_finite', field: 'time' },
  { name: 'label = 1e999', input: JSON.stringify(base({ label: 0.5 })).replace('0.5', '1e999'), reason: 'not_finite', field: 'label' },
  { name: 'unknown kind', input: score({ kind: 'proba', p: 0.5 }), reason: 'unknown_score_kind', field: 'score.kind' },
  { name: 'numeric kind', input: score({ kind: 5 }), reason: 'unknown_score_kind', field: 'score.kind' },
  { name: 'p above 1', input: score({ kind: 'probability', p: 1.0000001 }), reason: 'probability_out_of_range', field: 'score.p' },
  { name: 'p below 0', input: score({ kind: 'probability', p: -0.1 }), reason: 'probability_out_of_range', field: 'score.p' },
  { name: 'total 0', input: score({ kind: 'votes', sum: 0, total: 0 }), reason: 'votes_total_not_positive', field: 'score.total' },
  { name: 'total negative', input: score({ kind: 'votes', sum: -1, total: -2 }), reason: 'votes_total_not_positive', field: 'score.total' },
  { name: 'sum above total', input: score({ kind: 'votes', sum: 3.3, total: 3.2 }), reason: 'votes_sum_exceeds_total', field: 'score.sum' },
  { name: 'sum below -total beyond the slack', input: score({ kind: 'votes', sum: -3.2 * (1 + 1e-11), total: 3.2 }), reason: 'votes_sum_exceeds_total', field: 'score.sum' },
  { name: 'one class', input: score({ kind: 'classes', values: { a: 1 } }), reason: 'classes_too_few', field: 'score.values' },
  { name: 'no classes', input: score({ kind: 'classes', values: {} }), reason: 'classes_too_few', field: 'score.values' },
  { name: 'negative class value', input: score({ kind: 'classes', values: { a: 1.1, b: -0.1 } }), reason: 'class_value_negative', field: 'score.values.b' },
  { name: 'classes sum to 0.9', input: score({ kind: 'classes', values: { a: 0.5, b: 0.4 } }), reason: 'classes_not_normalised', field: 'score.values' },
  { name: 'classes just beyond the tolerance', input: score({ kind: 'classes', values: { a: 0.5, b: 0.5 + 2e-6 } }), reason: 'classes_not_normalised', field: 'score.values' },
  { name: 'class named __proto__', input: '{"id":"a","model":"m","version":"v","time":0,"score":{"kind":"classes","values":{"__proto__":0.5,"b":0.5}}}', reason: 'bad_class_name', field: 'score.values.__proto__' },
  { name: 'empty class name', input: score({ kind: 'classes', values: { '': 0.5, b: 0.5 } }), reason: 'empty_value', field: 'score.values[""]' },
  { name: 'margin above 1', input: score({ kind: 'margin', value: 1.5 }), reason: 'margin_out_of_range', field: 'score.value' },
  { name: 'margin negative', input: score({ kind: 'margin', value: -0.01 }), reason: 'margin_out_of_range', field: 'score.value' },
  { name: '30 February', input: base({ time: '2026-02-30T00:00:00Z' }), reason: 'bad_time', field: 'time' },
  { name: '29 February of a common year', input: base({ time: '2026-02-29T00:00:00Z' }), reason: 'bad_time', field: 'time' },
  { name: 'time without a zone', input: base({ time: '2026-12-01T10:00:00' }), reason: 'bad_time', field: 'time' },
  { name: 'leap second', input: base({ time: '2026-12-31T23:59:60Z' }), reason: 'bad_time', field: 'time' },
  { name: 'a date Date.parse would take', input: base({ time: 'Dec 1 2026' }), reason: 'bad_time', field: 'time' },
  { name: 'epoch ms as a string', input: base({ time: String(T0_MS) }), reason: 'bad_time', field: 'time' },
  { name: 'time before 1970', input: base({ time: '1969-12-31T23:59:59Z' }), reason: 'bad_time', field: 'time' },
  { name: 'negative epoch ms', input: base({ time: -5 }), reason: 'bad_time', field: 'time' },
  { name: 'epoch ms past the Date range', input: base({ time: 8.64e15 + 2 }), reason: 'bad_time', field: 'time' },
  { name: 'boolean time', input: base({ time: true }), reason: 'bad_time', field: 'time' },
  { name: 'absent time, unusable fallback', input: without('time'), fallback: Number.NaN, reason: 'bad_time', field: 'time' },
  { name: 'empty id', input: base({ id: '' }), reason: 'empty_value', field: 'id' },
  { name: 'empty model', input: base({ model: '' }), reason: 'empty_value', field: 'model' },
  { name: 'empty segment value', input: base({ segment: { line: '' } }), reason: 'empty_value', field: 'segment.line' },
  { name: 'empty segment key', input: base({ segment: { '': 'x' } }), reason: 'empty_value', field: 'segment[""]' },
  { name: 'empty string label', input: base({ label: '' }), reason: 'empty_value', field: 'label' },
  { name: 'model of 129 characters', input: base({ model: long(129) }), reason: 'value_too_long', field: 'model' },
  { name: 'id of 257 characters', input: base({ id: long(257) }), reason: 'value_too_long', field: 'id' },
  { name: 'segment value over a custom limit', input: base({ model: 'm', version: 'v' }), limits: { maxTextLength: 4 }, reason: 'value_too_long', field: 'segment.site' },
  { name: 'NUL in version', input: base({ version: 'v\u00001' }), reason: 'control_character', field: 'version' },
  { name: 'DEL in model', input: base({ model: 'm\u007f' }), reason: 'control_character', field: 'model' },
  { name: 'C1 control (NEL) in a segment value', input: base({ segment: { line: 'x\u0085' } }), reason: 'control_character', field: 'segment.line' },
  { name: 'newline in a segment key', input: base({ segment: { 'a\nb': 'x' } }), reason: 'control_character', field: 'segment["a\\nb"]' },
  { name: 'nine segment keys', input: base({ segment: Object.fromEntries(Array.from({ length: 9 }, (_, i) => [`k${i}`, 'v'])) }), reason: 'too_many_segment_keys', field: 'segment' },
  { name: 'segments forbidden by the limit', input: base(), limits: { maxSegmentKeys: 0 }, reason: 'too_many_segment_keys', field: 'segment' },
  { name: 'segment key with "="', input: base({ segment: { 'a=b': 'x' } }), reason: 'bad_segment_key', field: 'segment["a=b"]' },
  { name: 'segment key __proto__', input: '{"id":"a","model":"m","version":"v","time":0,"score":{"kind":"logit","z":0},"segment":{"__proto__":"x"}}', reason: 'bad_segment_key', field: 'segment.__proto__' },
  { name: 'object label', input: base({ label: { y: 1 } }), reason: 'bad_label', field: 'label' },
  { name: 'array label', input: base({ label: [1] }), reason: 'bad_label', field: 'label' },
];

function run(c: Case): DecodeResult<ScoredEvent> {
  const input = c.input instanceof Uint8Array ? c.input : bytes(c.input);
  return decodeScoredEvent(input, resolveDecodeLimits(c.limits), c.fallback);
}

describe('decodeScoredEvent rejects with a reason and a field', () => {
  it.each(CASES.map((c) => [c.name, c] as const))('%s', (_name, c) => {
    const result = run(c);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect({ reason: result.reason, field: result.field }).toStrictEqual({ reason: c.reason, field: c.field });
    expect(result.detail.length).toBeGreaterThan(0);
  });

  it('produces every reason code from at least one input (bad_label also from the margin step)', () => {
    const seen = new Set<string>(CASES.map((c) => c.reason));
    const fromMargin = signedMargin({ kind: 'probability', p: 0.5 }, 'benign');
    if (!fromMargin.ok) seen.add(fromMargin.reason);
    // csv_* reasons come from a CSV row that never became a message; test/unit/sources produces each.
    const decoderCodes = REJECTION_REASON_CODES.filter((code) => !code.startsWith('csv_'));
    expect([...seen].sort()).toStrictEqual([...decoderCodes].sort());
  });

  it('documents every code in one line, as a snake_case Prometheus label value', () => {
    for (const code of REJECTION_REASON_CODES) {
      expect(code).toMatch(/^[a-z][a-z0-9_]*$/);
      expect(REJECTION_REASONS[code]).toMatch(/^[^\n]{10,}$/);
    }
  });

  it('keeps a hostile key short and printable in the field path', () => {
    expect(formatPath(['segment', `${long(100)}\u0000`])).toBe(`segment["${long(64)}..."]`);
    expect(formatPath(['segment', 'a\u0085'])).toBe('segment["a\\u0085"]');
    expect(formatPath(['score', 'values', 'b'])).toBe('score.values.b');
  });
});

describe('decodeOutcomeEvent', () => {
  it('decodes id, label and time', () => {
    expect(decodeOutcomeEvent(bytes({ id: 'p-1', label: 'benign', time: T0 }))).toStrictEqual({
      ok: true,
      event: { id: 'p-1', label: 'benign', timeMs: T0_MS },
    });
    expect(decodeOutcomeEvent(bytes({ id: 'p-1', label: 0 }), DEFAULT_DECODE_LIMITS, 7)).toStrictEqual({
      ok: true,
      event: { id: 'p-1', label: 0, timeMs: 7 },
    });
  });

  it.each([
    ['no label', { id: 'p-1', time: T0 }, 'missing_field', 'label'],
    ['null label', { id: 'p-1', label: null, time: T0 }, 'bad_label', 'label'],
    ['no id', { label: 1, time: T0 }, 'missing_field', 'id'],
    ['no time, no fallback', { id: 'p-1', label: 1 }, 'missing_field', 'time'],
    ['bad time', { id: 'p-1', label: 1, time: 'yesterday' }, 'bad_time', 'time'],
  ])('rejects %s', (_name, input, reason, field) => {
    const result = decodeOutcomeEvent(bytes(input));
    expect(result.ok ? null : [result.reason, result.field]).toStrictEqual([reason, field]);
  });

  it('shares the byte, UTF-8 and JSON checks', () => {
    const r = decodeOutcomeEvent(new Uint8Array([0xff]));
    expect(r.ok ? null : r.reason).toBe('not_utf8');
  });
});

describe('resolveDecodeLimits', () => {
  it('fills in the documented defaults', () => {
    expect(resolveDecodeLimits()).toStrictEqual({ maxBytes: 1_048_576, maxTextLength: 128, maxIdLength: 256, maxSegmentKeys: 8 });
    expect(resolveDecodeLimits({ maxSegmentKeys: 3 }).maxSegmentKeys).toBe(3);
  });

  it('refuses a limit that admits nothing, naming the field', () => {
    let thrown: unknown;
    try {
      resolveDecodeLimits({ maxBytes: 0 }, 'sources.kafka.decode');
    } catch (error) {
      thrown = error;
    }
    expect(thrown).toBeInstanceOf(HeadroomError);
    expect((thrown as HeadroomError).code).toBe('HR_ERR_CONFIG_INVALID');
    expect((thrown as HeadroomError).message).toContain('sources.kafka.decode.maxBytes');
    expect(() => resolveDecodeLimits({ maxTextLength: 1.5 })).toThrow(HeadroomError);
  });
});
