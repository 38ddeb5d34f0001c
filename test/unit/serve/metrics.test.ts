/**
 * /metrics figures against figures computed here from the same margins: exact low-margin ratios from the
 * raw numbers, drift from src/compare on the very distributions the windows hold, and the whole
 * exposition through the real `promtool check metrics`.
 */
import { Registry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { ksTest, psi, wasserstein1 } from '../../../src/compare/index.js';
import { isHeadroomError } from '../../../src/errors.js';
import { EmpiricalDistribution } from '../../../src/sketch/empirical.js';
import { createMetrics, decimalLabel, METRIC_QUANTILE_LEVELS } from '../../../src/serve/index.js';
import type { WatchedSeriesSource } from '../../../src/serve/index.js';
import { validateScoredEvent } from '../../../src/events/index.js';
import { LabelWindows, emptyJoinCounts } from '../../../src/labels/index.js';
import { buildReference, formatReference, parseReferenceText } from '../../../src/reference/index.js';
import { find, parseExposition, value } from './exposition.js';
import { checkMetrics, havePromtool, mustRunPromtool, promtool } from './promtool.js';
import { MINUTE, MODEL, ORIGIN, REFERENCE_MARGINS, T0, THRESHOLDS, VERSION, VIEWS, lowShare, world } from './fixture.js';

const MAIN = { model: MODEL, version: VERSION, segment: 'all' };
const PLAIN = { model: 'doc-router', version: '7', segment: 'all' };
const QUIET = { model: MODEL, version: VERSION, segment: 'line=9' };

async function scrape(source: WatchedSeriesSource, nowMs: number) {
  const registry = new Registry();
  createMetrics({ registry, source, views: VIEWS, nowMs: () => nowMs });
  const text = await registry.metrics();
  return { registry, text, ...parseExposition(text) };
}

describe('createMetrics', () => {
  it('exports the exact low-margin ratio of each window at each threshold, from the counters', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    const all = [...w.older, ...w.recent];
    for (const t of THRESHOLDS) {
      const label = decimalLabel(t);
      expect(value(samples, 'headroom_low_margin_ratio', { ...MAIN, window: '5m', threshold: label })).toBe(lowShare(w.recent, t));
      expect(value(samples, 'headroom_low_margin_ratio', { ...MAIN, window: '1h', threshold: label })).toBe(lowShare(all, t));
      expect(value(samples, 'headroom_low_margin_ratio', { ...MAIN, window: '24h', threshold: label })).toBe(lowShare(all, t));
    }
    // The live stream is less sure than before: the recent share must really differ from the older one.
    expect(lowShare(w.recent, 0.1)).toBeGreaterThan(lowShare(w.older, 0.1) + 0.1);
    expect(find(samples, 'headroom_low_margin_ratio', MAIN).map((s) => s.labels.threshold).sort()).toEqual(['0.1', '0.1', '0.1', '0.25', '0.25', '0.25']);
    expect(value(samples, 'headroom_window_events', { ...MAIN, window: '5m' })).toBe(300);
    expect(value(samples, 'headroom_window_events', { ...MAIN, window: '1h' })).toBe(700);
  });

  it('exports the reference shares the file stores, per live series and threshold', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    for (const t of THRESHOLDS) {
      const expected = lowShare(REFERENCE_MARGINS, t);
      expect(value(samples, 'headroom_reference_low_margin_ratio', { ...MAIN, threshold: decimalLabel(t) })).toBeCloseTo(expected, 12);
      // line=9 has no reference segment of its own and faces the version's `all`.
      expect(value(samples, 'headroom_reference_low_margin_ratio', { ...QUIET, threshold: decimalLabel(t) })).toBeCloseTo(expected, 12);
    }
  });

  it('exports KS, PSI and Wasserstein of each window against the reference, as src/compare computes them', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    const ref = w.ref.segmentFor('all');
    const ks: number[] = [];
    for (const view of VIEWS) {
      const live = w.main.windows.view(view.durationMs).summary.distribution;
      const labels = { ...MAIN, window: view.name };
      const d = value(samples, 'headroom_drift_ks', labels);
      expect(d).toBe(ksTest(live, ref.confidence).statistic);
      expect(value(samples, 'headroom_drift_psi', labels)).toBe(psi(live, ref.confidence, { edges: ref.decileEdges }).value);
      expect(value(samples, 'headroom_drift_wasserstein', labels)).toBe(wasserstein1(live, ref.confidence));
      ks.push(d);
    }
    // The sketches must tell the same story as the raw numbers: the recent minute drifted, clearly.
    const exact = ksTest(EmpiricalDistribution.fromSamples(w.recent), EmpiricalDistribution.fromSamples(REFERENCE_MARGINS)).statistic;
    expect(exact).toBeGreaterThan(0.15);
    expect(Math.abs((ks[0] as number) - exact)).toBeLessThan(0.02);
    expect(ks[0]).toBeGreaterThan((ks[1] as number) + 0.05);
  });

  it('exports no drift or reference samples for a series without a reference, and says so in headroom_reference_loaded', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    for (const name of ['headroom_drift_ks', 'headroom_drift_psi', 'headroom_drift_wasserstein', 'headroom_reference_low_margin_ratio']) {
      expect(find(samples, name, PLAIN)).toEqual([]);
    }
    expect(find(samples, 'headroom_low_margin_ratio', PLAIN)).toHaveLength(VIEWS.length * THRESHOLDS.length);
    expect(value(samples, 'headroom_reference_loaded', { model: 'doc-router', version: '7' })).toBe(0);
    expect(value(samples, 'headroom_reference_loaded', { model: MODEL, version: VERSION })).toBe(1);
    expect(value(samples, 'headroom_series', { model: MODEL })).toBe(2);
    expect(value(samples, 'headroom_series', { model: 'doc-router' })).toBe(1);
  });

  it('exports when each reference was loaded, and per configured file its failed reloads and whether the latest failed', async () => {
    const w = world();
    const { samples, types } = await scrape(w.source, w.nowMs);
    expect(types.get('headroom_reference_reload_errors_total')).toBe('counter');
    expect(value(samples, 'headroom_reference_loaded_timestamp_seconds', { model: MODEL, version: VERSION })).toBe(ORIGIN.loadedAtMs / 1000);
    expect(find(samples, 'headroom_reference_loaded_timestamp_seconds')).toHaveLength(1);
    expect(value(samples, 'headroom_reference_reload_errors_total', { model: MODEL })).toBe(0);
    expect(value(samples, 'headroom_reference_reload_errors_total', { model: 'cutter-jam' })).toBe(3);
    expect(value(samples, 'headroom_reference_reload_failing', { model: MODEL })).toBe(0);
    expect(value(samples, 'headroom_reference_reload_failing', { model: 'cutter-jam' })).toBe(1);
    // A source that reports no reference files gets the families without samples, not an error.
    const bare: WatchedSeriesSource = { series: () => w.source.series(), rejections: () => new Map(), readiness: () => w.source.readiness(), partitions: () => [] };
    const none = await scrape(bare, w.nowMs);
    expect(find(none.samples, 'headroom_reference_reload_errors_total')).toEqual([]);
    expect(value(none.samples, 'headroom_reference_loaded', { model: MODEL, version: VERSION })).toBe(1);
  });

  it('exports no ratio, quantile or drift sample for an empty window, but does for the windows that hold events', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    expect(value(samples, 'headroom_window_events', { ...QUIET, window: '5m' })).toBe(0);
    for (const name of ['headroom_low_margin_ratio', 'headroom_margin_quantile', 'headroom_drift_ks', 'headroom_drift_psi', 'headroom_drift_wasserstein']) {
      expect(find(samples, name, { ...QUIET, window: '5m' })).toEqual([]);
      expect(find(samples, name, { ...QUIET, window: '24h' }).length).toBeGreaterThan(0);
    }
    expect(samples.some((s) => Number.isNaN(s.value))).toBe(false);
  });

  it('exports margin quantiles per window at plain-decimal levels', async () => {
    const w = world();
    const { samples } = await scrape(w.source, w.nowMs);
    const live = w.main.windows.view(5 * MINUTE).summary.distribution;
    for (const q of METRIC_QUANTILE_LEVELS) {
      expect(value(samples, 'headroom_margin_quantile', { ...MAIN, window: '5m', level: decimalLabel(q) })).toBe(live.quantile(q));
    }
    expect(find(samples, 'headroom_margin_quantile', { ...MAIN, window: '5m' }).map((s) => s.labels.level)).toEqual(['0.1', '0.5', '0.9']);
  });

  it('exports the exact event and rejection counts as counters', async () => {
    const w = world();
    const { samples, types } = await scrape(w.source, w.nowMs);
    expect(types.get('headroom_events_total')).toBe('counter');
    expect(types.get('headroom_events_rejected_total')).toBe('counter');
    expect(value(samples, 'headroom_events_total', MAIN)).toBe(705);
    expect(value(samples, 'headroom_events_total', PLAIN)).toBe(120);
    expect(value(samples, 'headroom_events_rejected_total', { reason: 'not_json' })).toBe(3);
    expect(value(samples, 'headroom_events_rejected_total', { reason: 'bad_time' })).toBe(1);
  });

  it('exports consumer lag and checkpoint age against the clock it is given, and nothing for a partition that has not said', async () => {
    const w = world();
    const { samples } = await scrape(w.source, T0 + 60 * MINUTE + 42_500);
    expect(value(samples, 'headroom_consumer_lag_messages', { topic: 'scores', partition: '0' })).toBe(12);
    expect(value(samples, 'headroom_checkpoint_age_seconds', { topic: 'scores', partition: '0' })).toBe(42.5);
    expect(find(samples, 'headroom_consumer_lag_messages', { partition: '1' })).toEqual([]);
    expect(find(samples, 'headroom_checkpoint_age_seconds', { partition: '1' })).toEqual([]);
  });

  it('reads the source once per scrape, and a later scrape sees what changed since', async () => {
    const w = world();
    const registry = new Registry();
    createMetrics({ registry, source: w.source, views: VIEWS, nowMs: () => w.nowMs });
    await registry.metrics();
    expect(w.source.seriesCalls).toBe(1);
    w.source.snapshots = w.source.snapshots.filter((s) => s.model !== 'doc-router');
    const second = parseExposition(await registry.metrics()).samples;
    expect(w.source.seriesCalls).toBe(2);
    expect(find(second, 'headroom_events_total', PLAIN)).toEqual([]);
    expect(find(second, 'headroom_low_margin_ratio', PLAIN)).toEqual([]);
    expect(value(second, 'headroom_events_total', MAIN)).toBe(705);
  });

  it('writes label values from events escaped, so odd names cannot break the exposition', async () => {
    const w = world();
    const odd = 'a"b\\c</script>{x="y"}';
    const first = w.source.snapshots[0];
    if (first === undefined) throw new Error('fixture has no series');
    w.source.snapshots.push({ ...first, model: odd });
    const { samples } = await scrape(w.source, w.nowMs);
    expect(value(samples, 'headroom_events_total', { ...MAIN, model: odd })).toBe(705);
  });

  it('writes thresholds and levels as plain decimals', () => {
    expect(decimalLabel(0.1)).toBe('0.1');
    expect(decimalLabel(0.25)).toBe('0.25');
    expect(decimalLabel(1e-7)).toBe('0.0000001');
    expect(decimalLabel(1.5e-7)).toBe('0.00000015');
    expect(decimalLabel(1e21)).toBe('1000000000000000000000');
    expect(decimalLabel(2.5e21)).toBe('2500000000000000000000');
  });

  it('refuses a repeated window name, naming the option', () => {
    const w = world();
    try {
      createMetrics({ registry: new Registry(), source: w.source, views: [...VIEWS, { name: '5m', durationMs: 1000 }], nowMs: () => 0 });
      expect.unreachable('createMetrics accepted two windows named 5m');
    } catch (error) {
      expect(isHeadroomError(error) && error.code).toBe('HR_ERR_SERVE_ARGUMENT');
      expect((error as Error).message).toContain('views[3].name');
    }
  });
});

describe.skipIf(!havePromtool && !mustRunPromtool)('promtool check metrics', () => {
  it('is on PATH (under CI=true a missing promtool fails here instead of skipping)', () => {
    expect(promtool.error).toBeUndefined();
  });

  it('finds something to say about a bad exposition, so its silence below means something', () => {
    const result = checkMetrics('# HELP headroom_x_total x\n# TYPE headroom_x_total gauge\nheadroom_x_total 1\n');
    expect(result.status).not.toBe(0);
    expect(result.stdout + result.stderr).toContain('non-counter metrics should not have "_total" suffix');
  });

  it('finds nothing to complain about in a populated registry', async () => {
    const w = world();
    const first = w.source.snapshots[0];
    if (first === undefined) throw new Error('fixture has no series');
    w.source.snapshots.push({ ...first, model: 'odd "name" \\ with\nnewline' });
    // A series with labels (live and in its reference) and a join, so the label families have samples too.
    const events = Array.from({ length: 200 }, (_, i) => {
      const r = validateScoredEvent({ id: `l-${i}`, model: 'labelled', version: '1', time: T0 + i, score: { kind: 'probability', p: (i % 10) / 10 + 0.05 }, label: i % 3 === 0 ? 0 : 1 });
      if (!r.ok) throw new Error(r.reason);
      return r.event;
    });
    const ref = parseReferenceText(formatReference(buildReference(events, { createdAt: '2026-11-19T00:00:00.000Z', source: 'labels', thresholds: THRESHOLDS })), 'ref.json');
    const labels = new LabelWindows(first.windows.config);
    for (const e of events) {
      const p = (e.score as { p: number }).p;
      const y = e.label === 1 ? 1 : -1;
      labels.add(y * (2 * p - 1), p, y === 1, T0 + 60 * MINUTE, T0 + 60 * MINUTE);
    }
    w.source.snapshots.push({ ...first, model: 'labelled', version: '1', reference: ref.segmentFor('all'), labels, labelled: 200, probabilistic: true });
    const withJoin = { ...w.source, series: () => w.source.series(), labelJoin: () => ({ outcomes: 3, labelledInline: 1, join: { ...emptyJoinCounts(), matched: 2 }, waiting: { predictions: 4, outcomes: 1 } }) };
    const { text, samples, types } = await scrape(withJoin, w.nowMs);
    // Every family must be there with samples, or a clean bill would prove little.
    for (const name of types.keys()) expect(find(samples, name).length, name).toBeGreaterThan(0);
    expect(types.size).toBe(28); // 16 margin families and 12 of labels
    const result = checkMetrics(text);
    expect(result.stdout + result.stderr).toBe('');
    expect(result.status).toBe(0);
  });
});
