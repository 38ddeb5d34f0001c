/**
 * Live against replay: the same events go through `headroom watch` on the real broker and through
 * `headroom replay --topic ... --since ... --until ...` (the CLI's own option parsing and config loading),
 * and both must say the same thing: equal counts per series, equal rejections by reason, and equal
 * comparison figures (low-margin shares with their intervals, KS with its p-value, PSI, Wasserstein-1,
 * quantiles). Equal means equal, not close: both run the same routing, windows and merge of partitions.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { parseReplayOptions, runReplayCommand } from '../../src/cli/replay-command.js';
import { loadConfig } from '../../src/config/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { planRange, readRange } from '../../src/replay/index.js';
import type { ReplayReport } from '../../src/replay/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { uniqueName } from '../harness/names.js';
import { expectedSeries, makeMalformed, makeScoredEvents, PARCEL_MODELS, reasonCounts } from '../harness/scored-events.js';
import { until } from '../harness/wait.js';

const N = 4_000;
const THRESHOLDS = [0.1, 0.25];

interface ApiView {
  readonly window: string;
  readonly count: number;
  readonly lowMargin: { threshold: number; live: { share: number | null; lower: number; upper: number }; referenceShare: number | null }[];
  readonly quantiles: { q: number; live: number | null }[];
  readonly comparison: { ks: { statistic: number; pValue: number | null }; psi: { value: number }; wasserstein: number } | null;
}

describe('the same events through watch and through replay', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-replay-live-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const topic = uniqueName('replay-live-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-replay-live-'));
  let watcher: Watcher | undefined;

  afterAll(async () => {
    await watcher?.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  it('give equal counts and equal comparison figures', async () => {
    const startedMs = Date.now();
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 3, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();

    // parcel-damage has a reference with per-line and per-site segments; the other models have none.
    const held = makeScoredEvents({ n: 3_000, seed: 21, fromMs: Date.UTC(2026, 10, 1), spanMs: 3_600_000, idPrefix: 'ref', thresholds: THRESHOLDS, models: PARCEL_MODELS.slice(0, 1) });
    const decoded = held.map((e) => {
      const d = decodeScoredEvent(Buffer.from(e.wire));
      if (!d.ok) throw new Error(d.detail);
      return d.event;
    });
    const referencePath = join(dir, 'parcel-damage.json');
    writeFileSync(referencePath, formatReference(buildReference(decoded as ScoredEvent[], { createdAt: '2026-11-02T00:00:00Z', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] })));
    const configPath = join(dir, 'watch.yaml');
    // JSON is YAML: the one file both commands read.
    writeFileSync(
      configPath,
      JSON.stringify({
        kafka: { brokers, groupId: uniqueName('replay-live-group'), topics: [topic] },
        models: PARCEL_MODELS.map((m) => ({ name: m.name, thresholds: THRESHOLDS, segmentKeys: Object.keys(m.segments), ...(m.name === 'parcel-damage' ? { reference: referencePath } : {}) })),
        windows: ['1h'],
        checkpoint: { dir: join(dir, 'state'), interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
      }),
    );

    // Event times within 90 s ending 10 s ago: inside the lateness (2 min) even out of order, all in the 1h view.
    const events = makeScoredEvents({ n: N, seed: 22, fromMs: Date.now() - 100_000, spanMs: 90_000, idPrefix: 'live', thresholds: THRESHOLDS });
    const bad = makeMalformed(60, 23);
    const values: (string | Buffer | null)[] = events.map((e) => e.wire);
    bad.forEach((b, i) => values.splice(Math.floor((i * values.length) / bad.length), 0, b.value));
    for (let i = 0; i < values.length; i += 500) {
      await producer.send({ topic, messages: values.slice(i, i + 500).map((value, j) => ({ key: `k${(i + j) % 31}`, value })) });
    }

    const { config } = await loadConfig(configPath, {});
    watcher = createWatcher({ config, store: new FileCheckpointStore({ dir: config.checkpoint.dir }), logger: pino({ level: 'warn' }), registry: new Registry(), nowMs: () => Date.now() });
    await watcher.start();
    const w = watcher;
    const consumed = (): number => {
      let n = 0;
      for (const s of w.source.series()) if (s.segment === 'all') n += s.events;
      for (const r of w.source.rejections().values()) n += r;
      return n;
    };
    await until('the watcher to consume every message', () => consumed() >= N + bad.length);

    const out = join(dir, 'replay');
    const err: string[] = [];
    await runReplayCommand(
      parseReplayOptions({ topic, since: new Date(startedMs - 60_000).toISOString(), until: new Date(Date.now() + 60_000).toISOString(), config: configPath, window: 'total', out, progress: false }),
      { stdout: { write: () => true }, stderr: { write: (t: string) => err.push(t) }, nowMs: () => Date.now() },
      {},
    );
    const report = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')) as ReplayReport;

    // Counts: per series, as computed here from the events, and the same on both sides.
    const expected = expectedSeries(events, THRESHOLDS);
    expect(report.windows).toHaveLength(expected.size);
    expect(report.totals.events).toBe(N);
    expect(report.totals.rejected).toEqual(Object.fromEntries(reasonCounts(bad)));
    expect(Object.fromEntries(w.source.rejections())).toEqual(report.totals.rejected);
    expect(err.join('')).toContain(`${N + bad.length} messages in range over 3 partitions`);

    let compared = 0;
    for (const entry of report.windows) {
      const name = `${entry.model}/${entry.version}/${entry.segment}`;
      expect(entry.count, name).toBe(expected.get(`${entry.model}\u0000${entry.version}\u0000${entry.segment}`)?.events);
      const path = [entry.model, entry.version, entry.segment].map(encodeURIComponent).join('/');
      const response = await fetch(`${w.url()}/api/series/${path}`);
      expect(response.status, name).toBe(200);
      const api = (await response.json()) as { events: number; views: ApiView[] };
      const view = api.views.find((v) => v.window === '1h') as ApiView;
      expect(api.events, name).toBe(entry.count);
      expect(view.count, name).toBe(entry.count);
      expect(entry.lowMargin, name).toEqual(view.lowMargin.map((l) => ({ threshold: l.threshold, live: l.live.share, reference: l.referenceShare, interval: [l.live.lower, l.live.upper] })));
      expect(entry.quantiles, name).toEqual(Object.fromEntries(view.quantiles.map((q) => [String(q.q), q.live])));
      if (view.comparison === null) {
        expect(entry.ks, name).toBeNull();
        continue;
      }
      expect(entry.ks, name).toEqual({ statistic: view.comparison.ks.statistic, pValue: view.comparison.ks.pValue });
      expect(entry.psi, name).toBe(view.comparison.psi.value);
      expect(entry.wasserstein, name).toBe(view.comparison.wasserstein);
      compared += 1;
    }
    // parcel-damage's all, three lines and two sites were compared with the reference; the rest have none.
    expect(compared).toBe(6);
  });
  it('reads only the messages whose timestamps fall in [--since, --until), per partition', async () => {
    const ranged = uniqueName('replay-range-events');
    await admin.createTopics({ topics: [{ topic: ranged, numPartitions: 2, replicationFactor: 1 }], waitForLeaders: true });
    const t0 = Date.now() - 30 * 60_000;
    const minute = 60_000;
    // Message timestamps (CreateTime) in three stretches; the event times are all recent so none is late.
    const stretch = (fromMs: number, n: number, prefix: string) =>
      makeScoredEvents({ n, seed: fromMs % 1000, fromMs: Date.now() - 60_000, spanMs: 30_000, idPrefix: prefix, thresholds: THRESHOLDS }).map((e, i) => ({
        key: `k${i % 7}`,
        value: e.wire,
        timestamp: String(fromMs + i),
      }));
    await producer.send({ topic: ranged, messages: stretch(t0, 300, 'before') });
    await producer.send({ topic: ranged, messages: stretch(t0 + 10 * minute, 500, 'inside') });
    await producer.send({ topic: ranged, messages: stretch(t0 + 20 * minute, 200, 'after') });
    const out = join(dir, 'ranged');
    const err: string[] = [];
    await runReplayCommand(
      parseReplayOptions({ topic: ranged, since: new Date(t0 + 5 * minute).toISOString(), until: new Date(t0 + 15 * minute).toISOString(), brokers: brokers.join(','), window: 'total', out, progress: false }),
      { stdout: { write: () => true }, stderr: { write: (t: string) => err.push(t) }, nowMs: () => Date.now() },
      {},
    );
    const report = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')) as ReplayReport;
    expect(report.totals.lines).toBe(500);
    expect(report.totals.events).toBe(500);
    expect(report.windows.filter((e) => e.segment === 'all').reduce((n, e) => n + e.count, 0)).toBe(500);
    expect(err.join('')).toContain('500 messages in range over 2 partitions');
  });
  it('stops at the end offsets the partitions had when the replay began, however many messages follow', async () => {
    const growing = uniqueName('replay-growing-events');
    await admin.createTopics({ topics: [{ topic: growing, numPartitions: 2, replicationFactor: 1 }], waitForLeaders: true });
    const wire = (prefix: string, n: number) =>
      makeScoredEvents({ n, seed: 31, fromMs: Date.now() - 60_000, spanMs: 30_000, idPrefix: prefix, thresholds: THRESHOLDS }).map((e, i) => ({ key: `k${i % 5}`, value: e.wire }));
    await producer.send({ topic: growing, messages: wire('first', 400) });
    const ranges = await planRange(admin, growing, Date.now() - 3_600_000, Date.now() + 3_600_000);
    expect(ranges.reduce((n, r) => n + Number(BigInt(r.end) - BigInt(r.start)), 0)).toBe(400);
    // Produced after the plan, with timestamps inside the range: a replay that read to the live end would count them.
    await producer.send({ topic: growing, messages: wire('second', 300) });
    const read: string[] = [];
    const done: number[] = [];
    await readRange(kafka, admin, growing, ranges, {
      onMessage: (_partition, message) => read.push(String(message.value)),
      onPartitionDone: (partition) => done.push(partition),
    });
    expect(read).toHaveLength(400);
    expect(read.every((v) => v.includes('"id":"first-'))).toBe(true);
    expect(new Set(read).size).toBe(400);
    expect(done.sort()).toEqual([0, 1]);
  });
});
