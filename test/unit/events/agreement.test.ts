/**
 * The fast validator must accept exactly what the zod schema accepts, and produce the same event. Inputs
 * are generated (seeded): valid events of every kind, then zero to three mutations drawn from values that
 * sit on or just past each rule's boundary, so both sides of every rule get exercised.
 */
import { describe, expect, it } from 'vitest';
import { DEFAULT_DECODE_LIMITS, REJECTION_REASON_CODES, resolveDecodeLimits, validateScoredEvent } from '../../../src/events/index.js';
import type { DecodeLimits } from '../../../src/events/index.js';
import { schemasFor } from '../../../src/events/decode.js';
import { fastOutcomeEvent, fastScoredEvent } from '../../../src/events/fast.js';
import { slowOutcomeEvent, slowScoredEvent } from '../../../src/events/slow.js';
import { rng } from './prng.js';
import type { Rng } from './prng.js';

type Json = Record<string, unknown>;

const STRINGS = [
  'a', 'parcel-damage', '', 'xxxx', 'xxxxx', 'x'.repeat(128), 'x'.repeat(129), 'x'.repeat(256), 'x'.repeat(257),
  'a\u0000b', 'a\u001f', 'm\u007f', 'k\u0085', 'k\u009f', '\u00a0', 'é', '\u{1F600}', '\ud800', 'x\udc00', 'a=b', '=',
  '__proto__', 'all', 'other', 'cat', 'dog', '1', '0', '-1', 'true',
];
const NUMBERS = [
  0, -0, 1, -1, 0.5, 2, 1 + 1e-9, -1e-9, 1e-300, 1e308, -1e308, Infinity, -Infinity, NaN, 3.2, -3.2,
  3.2 * (1 + 5e-13), 3.2 * (1 + 2e-12), 1796119200123, 1796119200123.75, 8.64e15, 8.640000000000002e15, -5,
];
const TIMES = [
  '2026-12-01T10:00:00.123Z', '2026-12-01T12:00:00+02:00', '2024-02-29T00:00:00Z', '2026-02-29T00:00:00Z',
  '2026-12-01T10:00:00', 'Dec 1 2026', '1969-12-31T23:59:59Z', '2026-12-31T23:59:60Z', '1796119200123',
  '2026-12-01T10:00:00.1234Z', '2026-12-01T10:00:00.Z',
];
const OTHERS: unknown[] = [null, true, false, [], [1], {}, { a: 1 }, undefined];

function anyValue(r: Rng): unknown {
  const which = r.int(10);
  if (which < 3) return r.pick(STRINGS);
  if (which < 6) return r.pick(NUMBERS);
  if (which < 7) return r.pick(TIMES);
  return r.pick(OTHERS);
}

function validScore(r: Rng): Json {
  switch (r.int(5)) {
    case 0:
      return { kind: 'probability', p: r.pick([0, 1, 0.5, r.next()]) };
    case 1:
      return { kind: 'logit', z: (r.next() - 0.5) * r.pick([1, 20, 2000]) };
    case 2: {
      const total = r.next() * 10 + 1e-3;
      return { kind: 'votes', sum: r.chance(0.1) ? total * r.pick([1, -1]) : (2 * r.next() - 1) * total, total };
    }
    case 3: {
      const n = 2 + r.int(5);
      const raw = Array.from({ length: n }, () => (r.chance(0.2) ? 0 : r.next()));
      raw[0] = (raw[0] as number) + 1e-3;
      const sum = raw.reduce((a, b) => a + b, 0);
      const names = ['a', 'b', 'c', '0', '1', '10', 'é'];
      return { kind: 'classes', values: Object.fromEntries(raw.map((v, i) => [names[i] as string, v / sum])) };
    }
    default:
      return { kind: 'margin', value: r.pick([0, 1, r.next()]) };
  }
}

function validEvent(r: Rng, short: boolean): Json {
  const event: Json = short
    ? { id: `p${r.int(1e5)}`, model: r.pick(['m', 'fraud']), version: r.pick(['v1', '2.0.1']), score: validScore(r) }
    : { id: `p-${r.int(1e6)}`, model: 'parcel-damage', version: '2026.11.3', score: validScore(r) };
  if (r.chance(0.8)) event.time = r.chance(0.5) ? r.pick(TIMES.slice(0, 3)) : r.int(2e12);
  if (r.chance(0.6)) event.label = r.pick<unknown>([1, 0, -1, true, false, 'a', 'cat', null]);
  if (r.chance(0.7)) {
    const n = r.int(4);
    event.segment = Object.fromEntries(Array.from({ length: n }, (_, i) => [`k${i}`, r.pick(['north', '2', 'a=b', 'all'])]));
  }
  return event;
}

const UNIT_EDGES = [0, -0, 1, 1 + 2 ** -52, 1 + 1e-9, -Number.MIN_VALUE, 0.999999, -1e-9];

/** A value on or just past the boundary of the rule that governs `key` in this score. */
function edgeFor(r: Rng, score: Json, key: string): unknown {
  const total = typeof score.total === 'number' ? score.total : 1;
  const sum = typeof score.sum === 'number' ? score.sum : 0.5;
  switch (key) {
    case 'p':
    case 'value':
      return r.pick(UNIT_EDGES);
    case 'z':
      return r.pick([0, -0, 1e308, -1e308, Infinity, 'x']);
    case 'sum':
      return r.pick([total, -total, total * (1 + 5e-13), -total * (1 + 5e-13), total * (1 + 2e-12), -total * (1 + 2e-12)]);
    case 'total':
      return r.pick([0, -0, -1, Number.MIN_VALUE, Math.abs(sum) * (1 - 1e-13), Math.abs(sum) * (1 + 1e-13)]);
    default:
      return anyValue(r);
  }
}

/** Nudges a classes map across its rules: the sum tolerance, non-negativity, the class count, names. */
function mutateValues(r: Rng, values: Json): void {
  const names = Object.keys(values);
  const name = r.pick(names.length > 0 ? names : ['a']);
  const current = typeof values[name] === 'number' ? (values[name] as number) : 0;
  switch (r.int(5)) {
    case 0:
      values[name] = current + r.pick([5e-7, -5e-7, 2e-6, -2e-6]);
      break;
    case 1:
      values[name] = r.pick([-1e-12, -0, -current]);
      break;
    case 2:
      for (const other of names.slice(1)) delete values[other];
      break;
    case 3:
      values[String(r.pick(STRINGS))] = r.pick([0, ...NUMBERS]);
      break;
    default:
      values[name] = anyValue(r);
  }
}

/** Sets, deletes or adds one field somewhere in the event. */
function mutate(r: Rng, event: Json, limits: DecodeLimits): void {
  const score = event.score as Json | undefined;
  const target = r.int(10);
  if (target < 3) {
    const key = r.pick(['id', 'model', 'version', 'time', 'score', 'label', 'segment', 'extra']);
    if (r.chance(0.2)) delete event[key];
    else event[key] = key === 'time' && r.chance(0.5) ? r.pick(TIMES) : anyValue(r);
  } else if (target < 7 && typeof score === 'object' && score !== null && !Array.isArray(score)) {
    // Most mutations go to the fields the score's own kind uses, where the boundaries are.
    const own = { probability: ['p'], logit: ['z'], votes: ['sum', 'total'], classes: ['values'], margin: ['value'] }[String(score.kind)];
    const key = own !== undefined && r.chance(0.6) ? r.pick(own) : r.pick(['kind', 'p', 'z', 'sum', 'total', 'values', 'value']);
    const values = score.values;
    if (r.chance(0.1)) delete score[key];
    else if (key === 'kind') score.kind = r.pick(['probability', 'logit', 'votes', 'classes', 'margin', 'proba', 5]);
    else if (key === 'values' && typeof values === 'object' && values !== null && !Array.isArray(values) && r.chance(0.8)) {
      mutateValues(r, values as Json);
    } else score[key] = r.chance(0.7) ? edgeFor(r, score, key) : anyValue(r);
  } else {
    const segment = (typeof event.segment === 'object' && event.segment !== null ? event.segment : (event.segment = {})) as Json;
    if (r.chance(0.3)) {
      // Exactly at the key limit, or one past it.
      const n = limits.maxSegmentKeys + r.int(2) - Object.keys(segment).length;
      for (let i = 0; i < n; i++) segment[`n${i}`] = 'v';
    } else {
      segment[r.chance(0.5) ? 's' : String(r.pick(STRINGS))] = r.chance(0.8) ? r.pick(STRINGS) : anyValue(r);
    }
  }
}

function generate(r: Rng, limits: DecodeLimits): Json {
  const event = validEvent(r, limits.maxTextLength < 16);
  const mutations = r.pick([0, 0, 1, 1, 1, 2, 3]);
  for (let i = 0; i < mutations; i++) mutate(r, event, limits);
  // Round-trip through JSON for most inputs, as on the wire; keep some JS-only values (NaN, ±Infinity)
  // to show the validators agree on them too.
  return r.chance(0.7) ? (JSON.parse(JSON.stringify(event)) as Json) : event;
}

function checkAgreement(limits: DecodeLimits, seed: number, count: number): { valid: number; reasons: Set<string> } {
  const r = rng(seed);
  const schemas = schemasFor(limits);
  let valid = 0;
  const reasons = new Set<string>();
  for (let i = 0; i < count; i++) {
    const input = generate(r, limits);
    const fallback = r.pick([undefined, 1796119200000, Number.NaN]);
    const fast = fastScoredEvent(input, limits, fallback);
    const slow = slowScoredEvent(input, schemas, fallback);
    const context = JSON.stringify({ input, fallback, slow: slow.ok ? 'ok' : slow });
    expect(fast !== undefined, context).toBe(slow.ok);
    if (slow.ok) {
      valid++;
      expect(fast, context).toStrictEqual(slow.event);
    } else {
      reasons.add(slow.reason);
      expect(REJECTION_REASON_CODES, context).toContain(slow.reason);
      expect(validateScoredEvent(input, limits, fallback)).toStrictEqual(slow);
    }
  }
  return { valid, reasons };
}

describe('fast validator and zod schema agree', () => {
  it('on 6000 generated inputs with the default limits', () => {
    const { valid, reasons } = checkAgreement(DEFAULT_DECODE_LIMITS, 1, 6000);
    // Enough of both sides to mean something.
    expect(valid).toBeGreaterThan(1000);
    expect(valid).toBeLessThan(4500);
    expect(reasons.size).toBeGreaterThanOrEqual(15);
  });

  it('on 2000 generated inputs with tight limits', () => {
    const limits = resolveDecodeLimits({ maxTextLength: 5, maxIdLength: 8, maxSegmentKeys: 2 });
    const { valid, reasons } = checkAgreement(limits, 2, 2000);
    expect(valid).toBeGreaterThan(100);
    expect(reasons).toContain('too_many_segment_keys');
    expect(reasons).toContain('value_too_long');
  });

  it('on generated outcome events', () => {
    const r = rng(3);
    const schemas = schemasFor(DEFAULT_DECODE_LIMITS);
    let valid = 0;
    for (let i = 0; i < 2000; i++) {
      const input: Json = { id: r.chance(0.9) ? `p-${i}` : anyValue(r), label: anyValue(r) };
      if (r.chance(0.7)) input.time = r.chance(0.5) ? r.pick(TIMES) : anyValue(r);
      const fallback = r.pick([undefined, 5]);
      const fast = fastOutcomeEvent(input, DEFAULT_DECODE_LIMITS, fallback);
      const slow = slowOutcomeEvent(input, schemas, fallback);
      expect(fast !== undefined, JSON.stringify(input)).toBe(slow.ok);
      if (slow.ok) {
        valid++;
        expect(fast).toStrictEqual(slow.event);
      }
    }
    expect(valid).toBeGreaterThan(200);
  });
});
