/**
 * The cluster view (every partition of the group: owned ones live, the others as last saved) and the
 * headroom_cluster_ metrics over it, on the in-memory checkpoint store (the Kafka store is exercised by
 * test/integration/watch-scale.test.ts).
 */
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.js';
import { DEFAULT_DECODE_LIMITS } from '../../../src/events/index.js';
import { createClusterMetrics } from '../../../src/serve/index.js';
import { MemoryCheckpointStore, PartitionState } from '../../../src/state/index.js';
import type { PartitionStateJson } from '../../../src/state/index.js';
import { createClusterView } from '../../../src/stream/cluster-view.js';
import { ingestScored } from '../../../src/stream/ingest.js';
import { ReferenceIndex } from '../../../src/stream/reference-index.js';
import { createSeriesSource } from '../../../src/stream/source.js';
import { parseExposition, value } from '../serve/exposition.js';
import { checkMetrics, havePromtool, mustRunPromtool } from '../serve/promtool.js';

const GROUP = 'g';
const TOPIC = 'scores';
const NOW = Date.parse('2026-12-02T10:00:00Z');
const { config } = parseConfig({ kafka: { brokers: ['127.0.0.1:9092'], topics: [TOPIC] }, windows: ['5m'] }, 'cluster-view.test.ts', {});
const options = (topic: string, partition: number) => ({ topic, partition, models: config.models });

/** A state of `partition` holding `n` events, `low` of them with margin below 0.1 (p = 0.52). */
function stateWith(partition: number, n: number, low: number, topic = TOPIC): PartitionState {
  const state = new PartitionState(options(topic, partition));
  for (let i = 0; i < n; i += 1) {
    const p = i < low ? 0.52 : 0.95;
    const wire = JSON.stringify({ id: `${partition}-${i}`, model: 'm', version: 'v1', time: NOW - 60_000 + i, score: { kind: 'probability', p } });
    expect(ingestScored(state, Buffer.from(wire), String(i), DEFAULT_DECODE_LIMITS, NOW, NOW)).toBeUndefined();
  }
  return state;
}

const json = (s: PartitionState): PartitionStateJson => s.toState() as PartitionStateJson;
const events = (states: readonly PartitionState[]): number => states.reduce((n, s) => n + s.counts().events, 0);

describe('createClusterView', () => {
  it('merges owned states live and every other partition as last saved, each once', async () => {
    const store = new MemoryCheckpointStore();
    await store.save(GROUP, TOPIC, 0, json(stateWith(0, 10, 1)));
    await store.save(GROUP, TOPIC, 1, json(stateWith(1, 20, 2)));
    await store.save(GROUP, TOPIC, 2, json(stateWith(2, 30, 3)));
    await store.save(GROUP, 'not-ours', 0, json(stateWith(0, 1000, 0, 'not-ours')));
    const live = new Map([[`${TOPIC}\u00001`, stateWith(1, 25, 2)]]);
    const view = createClusterView({ store, group: GROUP, topics: new Set([TOPIC]), stateOptions: options, live: () => live, log: pino({ level: 'silent' }), nowMs: () => 7 });
    expect(view.info()).toEqual({ partitions: 1, refreshedAtMs: null });
    await view.refresh();
    expect(view.info()).toEqual({ partitions: 3, refreshedAtMs: 7 });
    // Partition 1 from memory (25), not its older save (20); the other topic's save is left out.
    expect(events(view.states())).toBe(10 + 25 + 30);

    const before = view.states().find((s) => s.partition === 0);
    await store.save(GROUP, TOPIC, 2, json(stateWith(2, 40, 3)));
    live.clear(); // partition 1 moved away: its save stands in
    await view.refresh();
    expect(events(view.states())).toBe(10 + 20 + 40);
    // An unchanged save is not rebuilt.
    expect(view.states().find((s) => s.partition === 0)).toBe(before);
  });
});

describe('createClusterMetrics', () => {
  it('exports the cluster figures on the elected watcher only, exact, and promtool finds nothing to report', async () => {
    const store = new MemoryCheckpointStore();
    await store.save(GROUP, TOPIC, 0, json(stateWith(0, 100, 10)));
    await store.save(GROUP, TOPIC, 1, json(stateWith(1, 300, 90)));
    const view = createClusterView({ store, group: GROUP, topics: new Set([TOPIC]), stateOptions: options, live: () => new Map(), log: pino({ level: 'silent' }), nowMs: () => NOW });
    await view.refresh();
    const source = createSeriesSource({ states: () => view.states(), readiness: () => ({ ready: true, reasons: [] }), partitions: () => [] }, () => ReferenceIndex.configured([]));
    let exporting = false;
    const registry = new Registry();
    createClusterMetrics({ registry, source, views: config.windows, exporting: () => exporting, partitions: () => view.states().length });

    const idle = parseExposition(await registry.metrics()).samples;
    expect(value(idle, 'headroom_cluster_exporter', {})).toBe(0);
    expect(value(idle, 'headroom_cluster_partitions', {})).toBe(2);
    expect(idle.filter((s) => s.name !== 'headroom_cluster_exporter' && s.name !== 'headroom_cluster_partitions')).toEqual([]);

    exporting = true;
    const text = await registry.metrics();
    const samples = parseExposition(text).samples;
    const labels = { model: 'm', version: 'v1', segment: 'all' };
    expect(value(samples, 'headroom_cluster_exporter', {})).toBe(1);
    expect(value(samples, 'headroom_cluster_events_total', labels)).toBe(400);
    expect(value(samples, 'headroom_cluster_window_events', { ...labels, window: '5m' })).toBe(400);
    expect(value(samples, 'headroom_cluster_low_margin_ratio', { ...labels, window: '5m', threshold: '0.1' })).toBeCloseTo(100 / 400, 12);
    if (havePromtool || mustRunPromtool) {
      const check = checkMetrics(text);
      expect(check.status, `${check.stdout}${check.stderr}`).toBe(0);
      expect(`${check.stdout}${check.stderr}`.trim()).toBe('');
    }
  });
});
