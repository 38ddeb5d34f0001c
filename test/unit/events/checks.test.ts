import { describe, expect, it } from 'vitest';
import { MAX_TIME_MS, epochMs, parseIsoTime, segmentKeyProblem, textProblem } from '../../../src/events/checks.js';
import { rng } from './prng.js';

describe('parseIsoTime', () => {
  // Outside reference: ECMAScript's Date (ECMA-262 Date.prototype.toISOString and Date.UTC), which our
  // hand-written reader must agree with on every time it accepts.
  it('agrees with Date.prototype.toISOString over generated times', () => {
    const r = rng(20261201);
    for (let i = 0; i < 5000; i++) {
      const ms = Math.floor(r.next() * Date.UTC(2200, 0, 1));
      expect(parseIsoTime(new Date(ms).toISOString())).toBe(ms);
    }
  });

  it('applies zone offsets the way Date.parse reads them', () => {
    const r = rng(7);
    for (let i = 0; i < 2000; i++) {
      const ms = Date.UTC(2000, 0, 1) + r.int(1e12);
      const sign = r.chance(0.5) ? '+' : '-';
      const offset = r.int(24 * 60);
      const local = new Date(ms + (sign === '+' ? 1 : -1) * offset * 60_000).toISOString().slice(0, 23);
      const zone = `${sign}${String(Math.floor(offset / 60)).padStart(2, '0')}:${String(offset % 60).padStart(2, '0')}`;
      const text = `${local}${zone}`;
      expect(parseIsoTime(text)).toBe(ms);
      expect(Date.parse(text)).toBe(ms);
    }
  });

  it('knows the length of every month, leap years included', () => {
    for (const year of [1970, 1999, 2000, 2024, 2026, 2100, 2400]) {
      for (let month = 1; month <= 12; month++) {
        for (let day = 28; day <= 32; day++) {
          const text = `${year}-${String(month).padStart(2, '0')}-${String(day).padStart(2, '0')}T00:00:00Z`;
          // A day exists when Date.UTC does not roll it over into the next month.
          const exists = day <= 31 && new Date(Date.UTC(year, month - 1, day)).getUTCDate() === day;
          expect(parseIsoTime(text) !== undefined, text).toBe(exists);
        }
      }
    }
  });

  it.each([
    '2026-12-01T10:00:00.Z',
    '2026-12-01T10:00:00.1234567890Z',
    '2026-12-01 10:00:00Z',
    '2026-12-01T10:00:00z',
    '2026-12-01T10:00:00+0200',
    '2026-12-01T10:00:00+24:00',
    '2026-12-01T24:00:00Z',
    '2026-12-01T10:60:00Z',
    '2026-13-01T10:00:00Z',
    '2026-00-01T10:00:00Z',
    '2026-12-00T10:00:00Z',
    '2026-12-01T10:00:00ZZ',
    '0070-01-01T00:00:00Z',
    '+2026-12-01T10:00:00Z',
    '2026-12-01',
    '',
  ])('refuses %j', (text) => {
    expect(parseIsoTime(text)).toBeUndefined();
  });

  it('truncates digits beyond milliseconds and pads fewer', () => {
    expect(parseIsoTime('2026-12-01T10:00:00.1Z')).toBe(Date.UTC(2026, 11, 1, 10, 0, 0, 100));
    expect(parseIsoTime('2026-12-01T10:00:00.12Z')).toBe(Date.UTC(2026, 11, 1, 10, 0, 0, 120));
    expect(parseIsoTime('2026-12-01T10:00:00.999999999Z')).toBe(Date.UTC(2026, 11, 1, 10, 0, 0, 999));
  });

  it('keeps to [0, MAX_TIME_MS]', () => {
    expect(parseIsoTime('1970-01-01T00:00:00Z')).toBe(0);
    expect(parseIsoTime('1970-01-01T00:30:00+01:00')).toBeUndefined();
    expect(parseIsoTime('1969-12-31T23:30:00-01:00')).toBe(30 * 60_000);
    expect(epochMs(MAX_TIME_MS)).toBe(MAX_TIME_MS);
    expect(epochMs(MAX_TIME_MS + 2)).toBeUndefined();
    expect(Object.is(epochMs(-0), 0)).toBe(true);
    expect(epochMs(Number.NaN)).toBeUndefined();
  });
});

describe('textProblem', () => {
  it('tells empty, too long, control characters and lone surrogates apart', () => {
    expect(textProblem('', 5)).toBe('empty_value');
    expect(textProblem('abcdef', 5)).toBe('value_too_long');
    expect(textProblem('abcde', 5)).toBeUndefined();
    for (const c of [0x00, 0x09, 0x0a, 0x1f, 0x7f, 0x80, 0x85, 0x9f]) {
      expect(textProblem(`a${String.fromCharCode(c)}`, 5), c.toString(16)).toBe('control_character');
    }
    expect(textProblem('a\u00a0é', 5)).toBeUndefined();
    expect(textProblem('\u{1F600}', 5)).toBeUndefined();
    expect(textProblem('a\ud800', 5)).toBe('not_utf8');
    expect(textProblem('\udc00a', 5)).toBe('not_utf8');
    expect(textProblem('\ud800\ud800', 5)).toBe('not_utf8');
  });

  it('agrees with String.prototype.isWellFormed on surrogates', () => {
    const r = rng(99);
    const units = [0x61, 0xd800, 0xdbff, 0xdc00, 0xdfff, 0xe9, 0x4e2d];
    for (let i = 0; i < 3000; i++) {
      const text = String.fromCharCode(...Array.from({ length: 1 + r.int(4) }, () => r.pick(units)));
      const wellFormed = (text as unknown as { isWellFormed(): boolean }).isWellFormed();
      expect(textProblem(text, 10) === 'not_utf8', JSON.stringify(text)).toBe(!wellFormed);
    }
  });

  it('keeps "=" and __proto__ out of segment keys only', () => {
    expect(segmentKeyProblem('a=b', 10)).toBe('bad_segment_key');
    expect(segmentKeyProblem('__proto__', 10)).toBe('bad_segment_key');
    expect(segmentKeyProblem('all', 10)).toBeUndefined();
    expect(textProblem('a=b', 10)).toBeUndefined();
  });
});
