import { describe, expect, it } from 'vitest';
import { AlertBook, evaluateAlerts, parseAlertsSection } from '../../../src/alerts/index.js';
import type { AlertSeries, AlertTransition } from '../../../src/alerts/index.js';
import { MarginWindows } from '../../../src/sketch/index.js';
import { margins, MINUTE, MODEL, reference, REFERENCE_MARGINS, T0, THRESHOLDS, VERSION } from '../serve/fixture.js';

const VIEWS = [{ name: '5m', durationMs: 5 * MINUTE }];
const THETA = 0.25;
const { rules } = parseAlertsSection({
  rules: [
    { name: 'line-rise', kind: 'shareRise', model: MODEL, segmentKey: 'line', threshold: THETA, window: '5m', minCount: 200, holdFor: '3m', clearFor: '2m', cooldown: '10m' },
    { name: 'line-early', kind: 'earlyWarning', model: MODEL, segmentKey: 'line', threshold: THETA, inControlEvents: 100_000 },
  ],
});
const MINUTES = 20;
const PER_MINUTE = 120;

/**
 * Two lines over 20 minutes of event time: line 1 keeps the reference's margins; line 2 does too for
 * 6 minutes, then its margins sink toward 0 (power 3), as a drifting camera's would.
 */
function stream(): Map<string, { margin: number; timeMs: number }[]> {
  const out = new Map<string, { margin: number; timeMs: number }[]>();
  for (const line of ['1', '2']) {
    const points: { margin: number; timeMs: number }[] = [];
    for (let m = 0; m < MINUTES; m++) {
      const sink = line === '2' && m >= 6;
      margins(PER_MINUTE, 100 * Number(line) + m, sink ? 3 : 0.7).forEach((margin, i) => points.push({ margin, timeMs: T0 + m * MINUTE + Math.floor((i * MINUTE) / PER_MINUTE) }));
    }
    out.set(line, points);
  }
  return out;
}

/** Feeds the stream minute by minute and evaluates after each minute; `restartAt` saves and restores the book there. */
function run(restartAt?: number): { transitions: AlertTransition[]; book: AlertBook; series: AlertSeries[] } {
  const ref = reference();
  const points = stream();
  const windows = new Map([...points.keys()].map((line) => [line, new MarginWindows({ thresholds: THRESHOLDS })]));
  const series = [...windows].map(([line, w]): AlertSeries => ({ model: MODEL, version: VERSION, segment: `line=${line}`, windows: w, reference: ref.segmentFor(`line=${line}`) }));
  let book = new AlertBook(rules, { thresholdFor: () => 5 });
  const transitions: AlertTransition[] = [];
  for (let m = 0; m < MINUTES; m++) {
    for (const [line, list] of points) {
      const w = windows.get(line) as MarginWindows;
      for (const p of list) if (p.timeMs >= T0 + m * MINUTE && p.timeMs < T0 + (m + 1) * MINUTE) w.add(p.margin, p.timeMs, p.timeMs);
    }
    transitions.push(...evaluateAlerts(book, series, VIEWS).transitions);
    if (m === restartAt) book = AlertBook.fromState(rules, JSON.parse(JSON.stringify(book.toState())), { thresholdFor: () => 5 }).book;
  }
  return { transitions, book, series };
}

/** Wilson score lower bound (Wilson 1927), written out here rather than taken from src/compare. */
function wilsonLower(k: number, n: number, z = 1.959963984540054): number {
  const p = k / n;
  const z2 = z * z;
  return (p + z2 / (2 * n) - z * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n))) / (1 + z2 / n);
}

describe('evaluateAlerts over real windows and a real reference', () => {
  it('fires the share-rise alert of the sinking line only, once the rise has held for 3 minutes of event time', () => {
    const { transitions } = run();
    const rise = transitions.filter((t) => t.rule === 'line-rise');
    expect(rise.every((t) => t.series.segment === 'line=2')).toBe(true);
    expect(rise.map((t) => `${t.from}>${t.to}`)).toEqual(['calm>brewing', 'brewing>firing']);

    // Where it should start brewing, computed from the stream: the first evaluation whose 5m view
    // (the view ends at the newest event) has a Wilson lower bound above reference × 1.5.
    const referenceLine2 = REFERENCE_MARGINS.filter((_, i) => i % 3 !== 0);
    const referenceShare = referenceLine2.filter((m) => m < THETA).length / referenceLine2.length;
    const line2 = stream().get('2') as { margin: number; timeMs: number }[];
    let firstAbove: number | undefined;
    for (let m = 0; m < MINUTES && firstAbove === undefined; m++) {
      const newest = T0 + m * MINUTE + Math.floor(((PER_MINUTE - 1) * MINUTE) / PER_MINUTE);
      const inView = line2.filter((p) => p.timeMs > newest - 5 * MINUTE - ((newest - 5 * MINUTE) % MINUTE) - 1 && p.timeMs <= newest);
      const lower = wilsonLower(inView.filter((p) => p.margin < THETA).length, inView.length);
      if (inView.length >= 200 && lower > referenceShare * 1.5) firstAbove = newest;
    }
    expect(firstAbove).toBeDefined();
    const [brewing, firing] = rise as [AlertTransition, AlertTransition];
    expect(brewing.at).toBe(firstAbove);
    expect(firing.at - brewing.at).toBeGreaterThanOrEqual(3 * MINUTE);
    expect(firing.at - brewing.at).toBeLessThan(4 * MINUTE);
    expect(firing.value).toBeGreaterThan(firing.threshold as number);
    expect(firing.threshold).toBeCloseTo(referenceShare * 1.5, 12);
  });

  it('feeds each settled bucket to the early-warning chart once, however often it evaluates', () => {
    const { book, series } = run();
    const before = book.status().find((a) => a.rule === 'line-early' && a.series.segment === 'line=1');
    evaluateAlerts(book, series, VIEWS);
    evaluateAlerts(book, series, VIEWS);
    const after = book.status().find((a) => a.rule === 'line-early' && a.series.segment === 'line=1');
    expect(after?.chart).toEqual(before?.chart);
    // Settled: buckets ending at or before the newest event minus the 2-minute lateness.
    const line1 = series.find((s) => s.segment === 'line=1') as AlertSeries;
    const settledThrough = (line1.windows.watermarkMs as number) - 2 * MINUTE;
    const expected = (stream().get('1') ?? []).filter((p) => Math.floor(p.timeMs / MINUTE) * MINUTE + MINUTE <= settledThrough);
    expect(after?.chart?.events).toBe(expected.length);
    expect(after?.chart?.lows).toBe(expected.filter((p) => p.margin < THETA).length);
    // The sinking line's chart crossed its level; the steady line's did not.
    const early = book.status().filter((a) => a.rule === 'line-early');
    expect(early.find((a) => a.series.segment === 'line=2')?.phase).toBe('firing');
    expect(early.find((a) => a.series.segment === 'line=1')?.phase).toBe('calm');
  });

  it('gives the same transitions with the book saved and restored in the middle of the hold', () => {
    const plain = run().transitions;
    const brewingAt = plain.find((t) => t.rule === 'line-rise' && t.to === 'brewing')?.at as number;
    const restartMinute = Math.floor((brewingAt - T0) / MINUTE) + 1;
    expect(run(restartMinute).transitions).toEqual(plain);
  });

  it('evaluates every other alert when one cannot be evaluated, and names the one that failed', () => {
    const { book, series } = run();
    // A series whose windows lack the rule's θ: its readings throw; the other series' still count.
    const odd = new MarginWindows({ thresholds: [0.1] });
    odd.add(0.05, T0, T0);
    const broken: AlertSeries = { model: MODEL, version: VERSION, segment: 'line=0', windows: odd, reference: undefined };
    const before = book.status().find((a) => a.rule === 'line-early' && a.series.segment === 'line=2')?.chart;
    const { failures } = evaluateAlerts(book, [broken, ...series], VIEWS);
    // Its early-warning chart has no settled bucket yet (so nothing to read at 0.25), and no reference: unknown, not a failure.
    expect(failures.map((f) => `${f.rule} ${f.series.segment}`)).toEqual(['line-rise line=0']);
    expect(book.status().find((a) => a.rule === 'line-early' && a.series.segment === 'line=0')?.reading?.verdict).toBe('unknown');
    expect(String(failures[0]?.error)).toContain('0.25 is not configured');
    expect(book.status().find((a) => a.rule === 'line-early' && a.series.segment === 'line=2')?.chart).toEqual(before);
  });

  it('never evaluates an alert before its last transition, even when the watermark goes back', () => {
    const { book, series } = run();
    const line2 = series.find((s) => s.segment === 'line=2') as AlertSeries;
    // A partition moving away leaves fewer buckets and an older watermark behind.
    const older = new MarginWindows({ thresholds: THRESHOLDS });
    older.add(0.9, T0 + MINUTE, T0 + MINUTE);
    expect(() => evaluateAlerts(book, [{ ...line2, windows: older }], VIEWS)).not.toThrow();
  });
});
