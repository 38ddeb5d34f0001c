import { describe, expect, it } from 'vitest';
import { caught } from '../caught.js';
import { ReplayEngine, parseReplayWindow, TOTAL_WINDOW, windowStartOf, windowEntries, referenceLookup } from '../../../src/replay/index.js';
import type { ClosedWindow } from '../../../src/replay/index.js';
import { mergeView, PartitionState } from '../../../src/state/index.js';
import type { ModelSettings } from '../../../src/state/index.js';
import { viewReports } from '../../../src/serve/index.js';
import { marginsOf, MIN, scored, stream, T0 } from '../state/events.js';

const HOUR = 60 * MIN;
const NOW = T0 + 365 * 24 * HOUR;
const MODELS: ModelSettings[] = [{ name: '*', segmentKeys: ['line', 'shift'], maxSeries: 12, window: { thresholds: [0.1, 0.2] } }];

function collect(): { windows: ClosedWindow[]; onWindow: (w: ClosedWindow) => void } {
  const windows: ClosedWindow[] = [];
  return { windows, onWindow: (w) => windows.push(w) };
}

describe('replay windows', () => {
  it('are aligned to the epoch, and `total` is one window', () => {
    const hour = parseReplayWindow('1h');
    expect(hour).toEqual({ name: '1h', lengthMs: HOUR });
    expect(parseReplayWindow('60m').name).toBe('1h');
    expect(windowStartOf(hour, Date.UTC(2026, 11, 1, 10, 59, 59, 999))).toBe(Date.UTC(2026, 11, 1, 10));
    expect(windowStartOf(parseReplayWindow('1d'), Date.UTC(2026, 11, 1, 23, 59))).toBe(Date.UTC(2026, 11, 1));
    expect(parseReplayWindow('total')).toBe(TOTAL_WINDOW);
  });

  it('refuses lengths that are not whole minutes, out of range, or not durations, naming --window', () => {
    for (const bad of ['90s', '30s', '400d', '1', 'hour', '']) {
      const error = caught(() => parseReplayWindow(bad));
      expect(error?.code, bad).toBe('HR_ERR_CLI_USAGE');
      expect(error?.message, bad).toContain('--window');
    }
  });
});

describe('ReplayEngine', () => {
  it('gives, for `total`, exactly what the watcher computes from the same events per partition', () => {
    // The same stream split over three partitions, fed to PartitionStates as `watch` does, and to the
    // engine with one stream per partition: the merged figures must be identical, not just close.
    const messages = stream(7, 3_000);
    const parts = [0, 1, 2].map((p) => new PartitionState({ topic: 'scores', partition: p, models: MODELS }));
    const { windows, onWindow } = collect();
    const engine = new ReplayEngine({ window: TOTAL_WINDOW, models: MODELS, nowMs: NOW, onWindow });
    for (const p of [0, 1, 2]) engine.addStream('scores', p);
    messages.forEach((m, i) => {
      const p = i % 3;
      if (m.kind === 'reject') {
        parts[p]?.reject(m.reason, String(i));
        engine.reject(m.reason);
        return;
      }
      parts[p]?.apply(m.event, marginsOf(m.event), String(i), NOW);
      engine.apply('scores', p, m.event, marginsOf(m.event), String(i));
    });
    engine.finish();
    expect(windows).toHaveLength(1);
    const live = mergeView(parts);
    const replayed = (windows[0] as ClosedWindow).view;
    expect(replayed.series.map((s) => [s.model, s.version, s.segment, s.events])).toEqual(live.series.map((s) => [s.model, s.version, s.segment, s.events]));
    expect(replayed.counts.rejected).toEqual({});
    expect(engine.counts().rejected).toEqual(live.counts.rejected);
    const spec = [{ name: 'v', durationMs: 24 * HOUR }];
    for (const [i, s] of live.series.entries()) {
      const r = replayed.series[i] as (typeof replayed.series)[number];
      const a = viewReports({ ...s, reference: undefined }, spec, [0.1, 0.5, 0.9])[0];
      const b = viewReports({ ...r, reference: undefined }, spec, [0.1, 0.5, 0.9])[0];
      expect(b?.summary.count).toBe(a?.summary.count);
      expect(b?.lowMargin).toEqual(a?.lowMargin);
      expect(b?.quantiles).toEqual(a?.quantiles);
    }
    // The stream really spans more than one series and has rejections, so the comparison covered something.
    expect(live.series.length).toBeGreaterThan(10);
    expect(Object.keys(live.counts.rejected).length).toBeGreaterThan(0);
  });

  it('reports each hour once every stream has passed its end plus the lateness, oldest first', () => {
    const { windows, onWindow } = collect();
    const engine = new ReplayEngine({ window: parseReplayWindow('1h'), models: MODELS, nowMs: NOW, onWindow });
    engine.addStream('a');
    engine.addStream('b');
    let offset = 0;
    const at = (stream: string, minutes: number, p = 0.9): void => {
      const e = scored(p, { timeMs: T0 + minutes * MIN });
      engine.apply(stream, 0, e, marginsOf(e), String(offset++));
    };
    at('a', 10);
    at('b', 20);
    at('a', 61);
    at('a', 125); // a is past 1h + 2 min lateness, but b still is in the first hour
    expect(windows).toHaveLength(0);
    at('b', 62); // now both are past 60 + 2 minutes: the first hour closes; the second is still open
    expect(windows.map((w) => w.startMs)).toEqual([T0]);
    expect(windows[0]?.endMs).toBe(T0 + HOUR);
    expect(windows[0]?.view.series.find((s) => s.segment === 'all')?.events).toBe(2);
    at('b', 30); // its window is gone: counted, added nowhere
    expect(engine.counts().afterClose).toBe(1);
    engine.finishStream('b');
    engine.finish();
    expect(windows.map((w) => w.startMs)).toEqual([T0, T0 + HOUR, T0 + 2 * HOUR]);
    expect(windows.map((w) => w.view.series.find((s) => s.segment === 'all')?.events)).toEqual([2, 2, 1]);
    expect(engine.counts()).toMatchObject({ events: 5, afterClose: 1, windowsReported: 3 });
  });

  it('counts an event older than its stream allows as late, judged per stream as watch judges per partition', () => {
    const { windows, onWindow } = collect();
    const engine = new ReplayEngine({ window: TOTAL_WINDOW, models: MODELS, nowMs: NOW, onWindow });
    engine.addStream('a');
    engine.addStream('b');
    let offset = 0;
    const at = (stream: string, minutes: number): void => {
      const e = scored(0.9, { timeMs: T0 + minutes * MIN });
      engine.apply(stream, 0, e, marginsOf(e), String(offset++));
    };
    at('a', 30);
    at('a', 10); // 20 minutes behind a's newest: late (default lateness 2 min)
    at('b', 10); // b's own first event: fine
    engine.finish();
    const all = windows[0]?.view.series.find((s) => s.segment === 'all');
    expect(all?.events).toBe(3);
    expect(all?.windows.counters()).toEqual({ added: 2, late: 1, future: 0 });
  });

  it('without a configuration, finds models and segment keys in the events and misses no event of a new key', () => {
    const { windows, onWindow } = collect();
    const engine = new ReplayEngine({ window: TOTAL_WINDOW, nowMs: NOW, onWindow });
    engine.addStream('f');
    const events = [
      scored(0.9, { segment: {} }),
      scored(0.8, { segment: { line: '1' }, timeMs: T0 + 1000 }),
      scored(0.7, { segment: { line: '2', site: 'north' }, timeMs: T0 + 2000 }),
      scored(0.6, { model: 'doc-router', segment: { site: 'south' }, timeMs: T0 + 3000 }),
      scored(0.95, { segment: { line: '1', site: 'north' }, timeMs: T0 + 4000 }),
    ];
    events.forEach((e, i) => engine.apply('f', 0, e, marginsOf(e), String(i)));
    engine.finish();
    const got = Object.fromEntries((windows[0]?.view.series ?? []).map((s) => [`${s.model}/${s.segment}`, s.events]));
    expect(got).toEqual({ 'doc-router/all': 1, 'doc-router/site=south': 1, 'fraud/all': 4, 'fraud/line=1': 2, 'fraud/line=2': 1, 'fraud/site=north': 2 });
    expect(Object.fromEntries(engine.discoveredKeys())).toEqual({ fraud: ['line', 'site'], 'doc-router': ['site'] });
  });

  it('turns the closed window into report entries with the epoch-aligned start and end', () => {
    const { windows, onWindow } = collect();
    const engine = new ReplayEngine({ window: parseReplayWindow('1h'), models: MODELS, nowMs: NOW, onWindow });
    engine.addStream('f');
    [0.95, 0.05, 0.5].forEach((p, i) => {
      const e = scored(p, { timeMs: T0 + 90 * MIN + i, segment: { line: '3' } });
      engine.apply('f', 0, e, marginsOf(e), String(i));
    });
    engine.finish();
    const entries = windowEntries(windows[0] as ClosedWindow, '1h', referenceLookup([]));
    expect(entries.map((e) => [e.segment, e.start, e.end, e.count])).toEqual([
      ['all', new Date(T0 + HOUR).toISOString(), new Date(T0 + 2 * HOUR).toISOString(), 3],
      ['line=3', new Date(T0 + HOUR).toISOString(), new Date(T0 + 2 * HOUR).toISOString(), 3],
    ]);
    // |2p − 1| = 0.9, 0.9, 0: one of three below 0.1 and below 0.2; no reference, so no drift figures.
    expect(entries[0]?.lowMargin.map((l) => [l.threshold, l.live, l.reference])).toEqual([
      [0.1, 1 / 3, null],
      [0.2, 1 / 3, null],
    ]);
    expect(entries[0]).toMatchObject({ reference: 'none', ks: null, psi: null, wasserstein: null, alerts: [] });
  });

  it('refuses a window that is not a whole number of the model\'s buckets, and unknown streams', () => {
    const five = [{ name: '*', window: { bucketMs: 5 * MIN, fineSpanMs: 120 * MIN } }];
    expect(caught(() => new ReplayEngine({ window: parseReplayWindow('7m'), models: five, nowMs: NOW, onWindow: () => {} }))?.code).toBe('HR_ERR_REPLAY_ARGUMENT');
    const engine = new ReplayEngine({ window: TOTAL_WINDOW, models: MODELS, nowMs: NOW, onWindow: () => {} });
    const e = scored(0.5);
    expect(caught(() => engine.apply('nope', 0, e, marginsOf(e), '0'))?.code).toBe('HR_ERR_REPLAY_ARGUMENT');
  });
});
