import { describe, expect, it } from 'vitest';
import { parseAlertsSection } from '../../../src/alerts/index.js';
import { ruleAlerts, withAlerts } from '../../../src/replay/index.js';
import type { ReportEntry } from '../../../src/replay/index.js';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 11, 1, 6);

/** One hourly report entry of line 3 with `low` of `count` margins below 0.25; the reference share is 0.2. */
function entry(hour: number, low: number, count = 1_000, psi = 0.02): ReportEntry {
  return {
    start: new Date(T0 + hour * HOUR).toISOString(),
    end: new Date(T0 + (hour + 1) * HOUR).toISOString(),
    model: 'parcel-damage',
    version: '2026.11.3',
    segment: 'line=3',
    count,
    late: 0,
    future: 0,
    reference: 'loaded',
    lowMargin: [{ threshold: 0.25, live: count === 0 ? null : low / count, reference: 0.2, interval: [0, 1] }],
    ks: { statistic: 0.05, pValue: 0.5 },
    psi,
    wasserstein: 0.01,
    quantiles: {},
    labels: null,
    alerts: [],
  };
}

const { rules } = parseAlertsSection({
  rules: [
    { name: 'line-rise', kind: 'shareRise', segmentKey: 'line', threshold: 0.25, holdFor: '1h', clearFor: '1h', cooldown: '2h', minCount: 500 },
    { name: 'whole-drift', kind: 'drift', statistic: 'psi' },
  ],
});

describe('ruleAlerts: the watch rules over replay windows', () => {
  it('brews in the first window above the level, fires once the hold has passed in event time, then eases and rests', () => {
    // Shares by hour: 0.2, 0.2, 0.4, 0.4, 0.4, 0.2, 0.2, 0.2, 0.2 (reference 0.2; fire above 0.3, clear at or below 0.25).
    const lows = [200, 200, 400, 400, 400, 200, 200, 200, 200];
    const out = withAlerts(lows.map((low, h) => entry(h, low)), ruleAlerts(rules));
    const states = out.map((e) => e.alerts.find((a) => a.rule === 'line-rise')?.state ?? 'calm');
    expect(states).toEqual(['calm', 'calm', 'brewing', 'firing', 'firing', 'easing', 'resting', 'resting', 'calm']);
    expect(out[3]?.alerts.find((a) => a.rule === 'line-rise')?.detail).toContain(`brewing → firing at ${new Date(T0 + 4 * HOUR).toISOString()}`);
    // The drift rule watches segment "all" only: a line's entries never carry it.
    expect(out.flatMap((e) => e.alerts).some((a) => a.rule === 'whole-drift')).toBe(false);
  });

  it('says nothing below minCount, nor without a live share at the rule θ', () => {
    const quiet = withAlerts([entry(0, 300, 400), entry(1, 300, 400)], ruleAlerts(rules));
    expect(quiet.flatMap((e) => e.alerts)).toEqual([]);
    const noTheta = { ...entry(0, 400), lowMargin: [] };
    const [only] = withAlerts([noTheta], ruleAlerts(rules));
    // No share at θ: the reference share reads as unknown, not as a failure.
    expect(only?.alerts).toEqual([]);
  });
});
