/**
 * The CDFs a replay keeps for report.html: a bounded set per series (first, last, largest KS D), each
 * P(margin <= x) at 0, 0.01, ..., 1, checked against counts made here from the samples themselves.
 */
import { describe, expect, it } from 'vitest';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { CDF_MARGINS, CdfPicker, cdfPoints } from '../../../src/replay/index.js';
import type { ReportEntry } from '../../../src/replay/index.js';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 11, 1);

function entry(hour: number, segment: string, ks: number | null, count = 4): ReportEntry {
  return {
    start: new Date(T0 + hour * HOUR).toISOString(),
    end: new Date(T0 + (hour + 1) * HOUR).toISOString(),
    model: 'parcel-damage',
    version: '2026.11.3',
    segment,
    count,
    late: 0,
    future: 0,
    reference: ks === null ? 'none' : 'loaded',
    lowMargin: [],
    ks: ks === null ? null : { statistic: ks, pValue: 0.5 },
    psi: null,
    wasserstein: null,
    quantiles: {},
    labels: null,
    alerts: [],
  };
}

const dist = (...xs: number[]): EmpiricalDistribution => EmpiricalDistribution.fromSamples(xs);

describe('CDF points', () => {
  it('gives P(margin <= x) at 101 margins, atoms included', () => {
    expect(CDF_MARGINS).toHaveLength(101);
    expect(CDF_MARGINS[0]).toBe(0);
    expect(CDF_MARGINS[100]).toBe(1);
    const samples = [0, 0, 0.05, 0.3, 0.3, 0.77, 1];
    const points = cdfPoints(dist(...samples));
    CDF_MARGINS.forEach((x, i) => expect(points[i], `at ${x}`).toBeCloseTo(samples.filter((s) => s <= x).length / samples.length, 5));
    expect(points[0]).toBeCloseTo(2 / 7, 5); // the atom at 0
  });
});

describe('CdfPicker', () => {
  it('keeps the first, the last and the largest KS D of each series, at most three windows, in time order', () => {
    const picker = new CdfPicker();
    const reference = dist(0.5, 0.6, 0.7, 0.8);
    // Given out of order, as several streams could close them.
    for (const [hour, ks] of [[3, 0.2], [0, 0.1], [5, 0.15], [2, 0.4], [1, 0.4], [4, 0.05]] as const) {
      picker.observe(entry(hour, 'all', ks), dist(hour / 10, 0.5, 0.9, 1), reference);
    }
    const { series } = picker.result();
    expect(series).toHaveLength(1);
    const s = series[0];
    expect(s?.windows.map((w) => [w.start, w.picked])).toEqual([
      [new Date(T0).toISOString(), ['first']],
      [new Date(T0 + HOUR).toISOString(), ['worst-ks']], // the tie at 0.4 goes to the earlier window
      [new Date(T0 + 5 * HOUR).toISOString(), ['last']],
    ]);
    expect(s?.windows[1]?.cdf).toEqual(cdfPoints(dist(0.1, 0.5, 0.9, 1)));
    expect(s?.reference).toEqual(cdfPoints(reference));
  });

  it('names one window once when it is several picks, and keeps series apart, sorted', () => {
    const picker = new CdfPicker();
    picker.observe(entry(0, 'line=2', null), dist(0.2), undefined);
    picker.observe(entry(0, 'line=1', 0.3), dist(0.1), dist(0.9));
    picker.observe(entry(1, 'line=1', 0.1), dist(0.1), dist(0.9));
    picker.observe(entry(2, 'line=1', 0, 0), dist(), dist(0.9)); // an empty window is not drawn
    const { series } = picker.result();
    expect(series.map((s) => s.segment)).toEqual(['line=1', 'line=2']);
    expect(series[0]?.windows.map((w) => w.picked)).toEqual([['first', 'worst-ks'], ['last']]);
    expect(series[1]?.reference).toBeNull();
    expect(series[1]?.windows.map((w) => w.picked)).toEqual([['first', 'last']]);
  });
});
