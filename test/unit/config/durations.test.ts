import { describe, expect, it } from 'vitest';
import { formatDuration, parseDuration } from '../../../src/config/index.js';

describe('durations', () => {
  it('reads each unit into milliseconds', () => {
    expect(parseDuration('500ms')).toEqual({ ok: true, ms: 500 });
    expect(parseDuration('5s')).toEqual({ ok: true, ms: 5_000 });
    expect(parseDuration('2m')).toEqual({ ok: true, ms: 120_000 });
    expect(parseDuration('1h')).toEqual({ ok: true, ms: 3_600_000 });
    expect(parseDuration('1d')).toEqual({ ok: true, ms: 86_400_000 });
    expect(parseDuration('1.5h')).toEqual({ ok: true, ms: 5_400_000 });
  });

  it('refuses a bare number and says which spellings it could have meant', () => {
    const r = parseDuration(5000);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.detail).toContain('"5000ms" or "5000s"');
  });

  it('refuses unknown units, zero, fractions of a millisecond and non-strings', () => {
    for (const bad of ['5 minutes', '5', '-5s', '0s', '1.0005s', '', null, true]) expect(parseDuration(bad).ok, String(bad)).toBe(false);
  });

  it('formats with the largest unit that divides exactly', () => {
    expect(formatDuration(86_400_000)).toBe('1d');
    expect(formatDuration(5_400_000)).toBe('90m');
    expect(formatDuration(90_000)).toBe('90s');
    expect(formatDuration(1_500)).toBe('1500ms');
  });
});
