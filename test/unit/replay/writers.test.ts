import { describe, expect, it } from 'vitest';
import { openMetricsLines, reportCsv, REPORT_FORMAT } from '../../../src/replay/index.js';
import type { ReplayReport, ReportEntry } from '../../../src/replay/index.js';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 11, 1);

function entry(hour: number, segment: string, count: number, over: Partial<ReportEntry> = {}): ReportEntry {
  return {
    start: new Date(T0 + hour * HOUR).toISOString(),
    end: new Date(T0 + (hour + 1) * HOUR).toISOString(),
    model: 'parcel-damage',
    version: '2026.11.3',
    segment,
    count,
    late: 1,
    future: 0,
    reference: 'loaded',
    lowMargin: [{ threshold: 0.1, live: 0.25, reference: 0.2, interval: [0.2, 0.3] }],
    ks: { statistic: 0.05, pValue: 0.5 },
    psi: 0.01,
    wasserstein: 0.02,
    quantiles: { '0.5': 0.6, '0.9': null },
    alerts: [],
    labels: null,
    ...over,
  } as ReportEntry;
}

function report(windows: ReportEntry[], window = '1h'): ReplayReport {
  return { format: REPORT_FORMAT, createdAt: '2026-12-02T00:00:00.000Z', source: 'test', window, totals: { lines: 0, events: 0, rejected: {}, afterClose: 0, unwatched: 0, skipped: [] }, windows, cdfs: { margins: [], series: [] } };
}

describe('metrics.om', () => {
  const text = [...openMetricsLines(report([entry(0, 'all', 10), entry(0, 'line="2"\\', 4), entry(1, 'all', 20)]), 30 * 60_000)].join('');
  const samples = text
    .split('\n')
    .filter((l) => l !== '' && !l.startsWith('#'))
    .map((l) => {
      const m = /^([a-z_]+)\{(.*)\} (\S+) (\S+)$/.exec(l);
      if (m === null) throw new Error(`not a sample line: ${l}`);
      return { name: m[1] as string, labels: m[2] as string, value: Number(m[3]), t: Number(m[4]) };
    });

  it('ends in # EOF, gives each family once with HELP and TYPE, and uses the watcher\'s names', () => {
    expect(text.endsWith('# EOF\n')).toBe(true);
    const types = [...text.matchAll(/^# TYPE (\S+) (\S+)$/gm)].map((m) => [m[1], m[2]]);
    expect(types).toEqual([
      ['headroom_events', 'counter'],
      ['headroom_window_events', 'gauge'],
      ['headroom_low_margin_ratio', 'gauge'],
      ['headroom_reference_low_margin_ratio', 'gauge'],
      ['headroom_margin_quantile', 'gauge'],
      ['headroom_drift_ks', 'gauge'],
      ['headroom_drift_psi', 'gauge'],
      ['headroom_drift_wasserstein', 'gauge'],
    ]);
    // Families are contiguous: once a name is left behind it never comes back.
    const order = samples.map((s) => s.name).filter((n, i, all) => i === 0 || all[i - 1] !== n);
    expect(new Set(order).size).toBe(order.length);
  });

  it('keeps each series\' samples together and in increasing time, repeated every step until the next window ends', () => {
    const bySeries = new Map<string, number[]>();
    let previous = '';
    for (const s of samples) {
      const key = `${s.name}{${s.labels}}`;
      if (key !== previous) expect(bySeries.has(key), `${key} comes back`).toBe(false);
      previous = key;
      bySeries.set(key, [...(bySeries.get(key) ?? []), s.t]);
    }
    for (const [key, times] of bySeries) for (let i = 1; i < times.length; i += 1) expect(times[i], key).toBeGreaterThan(times[i - 1] as number);
    const all = 'model="parcel-damage",version="2026.11.3",segment="all",window="1h"';
    expect(bySeries.get(`headroom_window_events{${all}}`)).toEqual([1, 1.5, 2, 2.5].map((h) => (T0 + h * HOUR) / 1000));
    expect(samples.filter((s) => s.name === 'headroom_window_events' && s.labels === all).map((s) => s.value)).toEqual([10, 10, 20, 20]);
  });

  it('counts events_total up across windows (late ones included, as the watcher counts them)', () => {
    const all = samples.filter((s) => s.name === 'headroom_events_total' && s.labels.includes('segment="all"'));
    expect(all.map((s) => s.value)).toEqual([11, 11, 32, 32]);
  });

  it('escapes label values, writes thresholds and levels as decimals, and leaves out figures that do not exist', () => {
    expect(text).toContain('segment="line=\\"2\\"\\\\"');
    expect(text).toContain('threshold="0.1"');
    expect(text).toContain('level="0.5"');
    expect(text).not.toContain('level="0.9"');
    const none = [...openMetricsLines(report([entry(0, 'all', 0, { ks: null, psi: null, wasserstein: null, lowMargin: [{ threshold: 0.1, live: null, reference: null, interval: [0, 1] }] })]), 0)].join('');
    expect(none).not.toMatch(/^headroom_(drift|low_margin|reference)/m);
    expect(none).toMatch(new RegExp(`^headroom_window_events\\{.*\\} 0 ${(T0 + HOUR) / 1000}$`, 'm'));
  });

  it('writes `total` once, at its end', () => {
    const total = [...openMetricsLines(report([entry(0, 'all', 10)], 'total'), 60_000)].join('');
    expect(total.match(/^headroom_window_events\{/gm)).toHaveLength(1);
    expect(total).toContain('window="total"');
  });
});

describe('report.csv', () => {
  it('has one row per entry, empty cells for missing figures, and guards cells a spreadsheet would run', () => {
    const csv = reportCsv(report([entry(0, 'all', 10), entry(0, 'line=a,b', 3, { model: '=cmd()', ks: null, psi: null })])).trimEnd().split('\n');
    expect(csv).toHaveLength(3);
    const header = (csv[0] as string).split(',');
    expect(header).toContain('low_margin_0.1');
    expect(header).toContain('quantile_0.95');
    expect(csv[2]).toContain(`'=cmd()`);
    expect(csv[2]).toContain('"line=a,b"');
    const ksAt = header.indexOf('ks');
    expect(((csv[1] as string).split(','))[ksAt]).toBe('0.05');
  });
});
