import { describe, expect, it } from 'vitest';
import { ALERT_STATE_FORMAT, AlertBook, parseAlertsSection } from '../../../src/alerts/index.js';
import type { AlertInput, AlertTransition, ClosedBucket } from '../../../src/alerts/index.js';
import { caught } from '../caught.js';
import { seededRandom } from '../compare/prng.js';

const MIN = 60_000;
const { rules } = parseAlertsSection({
  rules: [
    { name: 'rise', kind: 'shareRise', threshold: 0.1, model: 'parcel-damage', minCount: 100, holdFor: '3m', clearFor: '2m', cooldown: '5m' },
    { name: 'early', kind: 'earlyWarning', threshold: 0.1, segmentKey: 'line', inControlEvents: 5000, clearFor: '1m', cooldown: '3m' },
    { name: 'psi', kind: 'drift', statistic: 'psi', holdFor: '2m', clearFor: '2m', cooldown: '4m', minCount: 50 },
  ],
});
const all = { model: 'parcel-damage', version: 'v1', segment: 'all' };
const line2 = { model: 'parcel-damage', version: 'v1', segment: 'line=2' };
// A fixed h keeps these tests fast and exact; cusumThreshold itself is checked in early-warning.test.ts.
const options = { thresholdFor: () => 4 };

interface Tick {
  readonly rise: AlertInput;
  readonly early: AlertInput;
  readonly psi: AlertInput;
}

/** Minute-by-minute inputs: quiet, then a rise in the low-margin share and a PSI shift, then quiet again. */
function ticks(count: number, seed: number): Tick[] {
  const random = seededRandom(seed);
  const out: Tick[] = [];
  for (let m = 0; m < count; m++) {
    const high = m >= 10 && m < 30;
    const n = 200;
    let low = 0;
    for (let i = 0; i < n; i++) if (random() < (high ? 0.2 : 0.05)) low++;
    const bucket: ClosedBucket = { startMs: m * MIN, endMs: (m + 1) * MIN, count: n, low };
    out.push({
      rise: { low: low * 5, count: n * 5, referenceShare: 0.05 },
      early: { referenceShare: 0.05, buckets: [bucket] },
      psi: { count: n, ks: 0.05, psi: high ? 0.3 + random() * 0.1 : random() * 0.08 },
    });
  }
  return out;
}

function evaluateTick(book: AlertBook, tick: Tick, minute: number): AlertTransition[] {
  const at = minute * MIN;
  return [...book.evaluate('rise', all, tick.rise, at), ...book.evaluate('early', line2, tick.early, at), ...book.evaluate('psi', all, tick.psi, at)];
}

describe('AlertBook', () => {
  it('matches rules to series by model and segment key', () => {
    const book = new AlertBook(rules, options);
    expect(book.rulesFor(all).map((r) => r.name)).toEqual(['rise', 'psi']);
    expect(book.rulesFor(line2).map((r) => r.name)).toEqual(['early']);
    expect(book.rulesFor({ ...all, model: 'tyre-check' }).map((r) => r.name)).toEqual(['psi']);
    expect(caught(() => book.evaluate('rise', line2, { low: 0, count: 0, referenceShare: 0.1 }, 0)).code).toBe('HR_ERR_ALERT_ARGUMENT');
    expect(caught(() => book.evaluate('nope', all, { low: 0, count: 0, referenceShare: 0.1 }, 0)).code).toBe('HR_ERR_ALERT_ARGUMENT');
  });

  it('fires and clears every rule over a rise that comes and goes', () => {
    const book = new AlertBook(rules, options);
    const moves = ticks(60, 1).flatMap((t, m) => evaluateTick(book, t, m)).map((t) => `${t.rule}:${t.to}`);
    for (const rule of ['rise', 'early', 'psi']) {
      expect(moves).toContain(`${rule}:firing`);
      expect(moves).toContain(`${rule}:resting`);
    }
    expect(book.phaseOf('rise', all)).toBe('calm');
  });

  it('restart in the middle: saving and restoring at any tick gives the same transitions as no restart', () => {
    const input = ticks(60, 2);
    const straight = new AlertBook(rules, options);
    const expected = input.map((t, m) => evaluateTick(straight, t, m));
    expect(expected.flat().some((t) => t.to === 'brewing')).toBe(true);
    // Restart after every tick: each restart lands in whatever phase the alerts are in, mid-hold included.
    let book = new AlertBook(rules, options);
    const got: AlertTransition[][] = [];
    let midHold = 0;
    input.forEach((t, m) => {
      got.push(evaluateTick(book, t, m));
      const saved = JSON.parse(JSON.stringify(book.toState())) as unknown;
      if (book.status().some((s) => s.phase === 'brewing' || s.phase === 'easing')) midHold++;
      book = AlertBook.fromState(rules, saved, options).book;
    });
    expect(got).toEqual(expected);
    expect(midHold).toBeGreaterThan(3);
    expect(book.toState()).toEqual(straight.toState());
  });

  it('a tick repeated after a crash (evaluated, not saved) gives the same transition ids', () => {
    const input = ticks(40, 3);
    const book = new AlertBook(rules, options);
    input.slice(0, 11).forEach((t, m) => evaluateTick(book, t, m));
    const saved = book.toState();
    const first = input.slice(11, 20).flatMap((t, m) => evaluateTick(book, t, m + 11));
    const again = AlertBook.fromState(rules, saved, options).book;
    const second = input.slice(11, 20).flatMap((t, m) => evaluateTick(again, t, m + 11));
    expect(first.length).toBeGreaterThan(0);
    expect(second.map((t) => t.id)).toEqual(first.map((t) => t.id));
  });

  it('feeds each closed bucket once, even when a tick hands over buckets already fed', () => {
    const book = new AlertBook(rules, options);
    const b = (m: number, low: number): ClosedBucket => ({ startMs: m * MIN, endMs: (m + 1) * MIN, count: 100, low });
    book.evaluate('early', line2, { referenceShare: 0.05, buckets: [b(0, 5), b(1, 9)] }, MIN);
    book.evaluate('early', line2, { referenceShare: 0.05, buckets: [b(1, 9), b(2, 7), b(0, 5)] }, 2 * MIN);
    const chart = book.status()[0]?.chart;
    expect(chart).toMatchObject({ events: 300, lows: 21, fedThroughMs: 3 * MIN });
  });

  it('drops alerts of rules no longer configured and says which', () => {
    const book = new AlertBook(rules, options);
    evaluateTick(book, ticks(1, 4)[0] as Tick, 0);
    const { book: restored, dropped } = AlertBook.fromState(rules.filter((r) => r.name !== 'psi'), book.toState(), options);
    expect(dropped).toEqual(['psi parcel-damage/v1/all']);
    expect(restored.toState().alerts.map((a) => a.rule)).toEqual(['early', 'rise']);
  });

  it('refuses a bad saved state, naming the field', () => {
    const book = new AlertBook(rules, options);
    evaluateTick(book, ticks(1, 5)[0] as Tick, 0);
    const good = book.toState();
    const bad = (patch: Record<string, unknown>, index = 0) => ({ ...good, alerts: good.alerts.map((a, i) => (i === index ? { ...a, ...patch } : a)) });
    const cases: Array<[unknown, RegExp]> = [
      [{ ...good, format: 'headroom-alerts/2' }, /format/],
      [bad({ phase: 'smouldering' }), /alerts\[0\]\.phase/],
      [bad({ seq: -1 }), /alerts\[0\]\.seq/],
      [bad({ chart: { p0: 0.05 } }), /alerts\[0\]\.chart\.p1/],
      [bad({ chart: { p0: 0.05, p1: 0.1, h: 4, statistic: 0, fedThroughMs: 0, events: 1, lows: 2, signals: 0 } }), /alerts\[0\]\.chart\.lows: exceeds/],
      [bad({ sinceMs: null, phase: 'firing' }), /alerts\[0\]\.sinceMs/],
    ];
    for (const [state, field] of cases) {
      const error = caught(() => AlertBook.fromState(rules, state, options));
      expect(error.code).toBe('HR_ERR_ALERT_STATE_INVALID');
      expect(error.message).toMatch(field);
    }
    expect(good.format).toBe(ALERT_STATE_FORMAT);
  });

  it('refuses evaluation time going back', () => {
    const book = new AlertBook(rules, options);
    book.evaluate('psi', all, { count: 100, ks: 0, psi: 0.5 }, 10 * MIN);
    expect(caught(() => book.evaluate('psi', all, { count: 100, ks: 0, psi: 0.5 }, 9 * MIN)).code).toBe('HR_ERR_ALERT_ARGUMENT');
  });
});
