/**
 * Several `headroom watch` processes sharing one consumer group and `checkpoint.store: kafka`: three
 * watchers on 12 partitions while events are produced continuously (a bounded stream); one is killed with
 * SIGKILL part way, and a fourth starts later. At the end the cluster view (/api/cluster/series and the
 * headroom_cluster_ families of the one elected exporter) shows exactly the produced count of every
 * series, the per-instance figures of the live watchers add up to the same, and each partition the
 * killed watcher owned was restored by its next owner from the state topic.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { KafkaCheckpointStore } from '../../src/state/index.js';
import { freePort } from '../kafka/broker.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { expectedSeries, makeScoredEvents } from '../harness/scored-events.js';
import { sleep, until } from '../harness/wait.js';
import { countedMessages, scrape } from '../harness/watch-checks.js';
import { value } from '../unit/serve/exposition.js';

const PARTITIONS = 12;
const THRESHOLDS = [0.1, 0.25];
const EVENTS = 24_000;
const CHUNK = 400;

const log = (line: string): void => void process.stderr.write(`[watch-scale] ${line}\n`);

interface Member {
  readonly name: string;
  readonly url: string;
  readonly cli: RunningCli;
}

interface ClusterSeries {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
  readonly events: number;
}

describe('three headroom watch processes on one group with checkpoints on a Kafka topic', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-scale-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dir = mkdtempSync(join(tmpdir(), 'headroom-scale-'));
  const members: Member[] = [];

  afterAll(async () => {
    for (const m of members) if (m.cli.child.exitCode === null && m.cli.child.signalCode === null) m.cli.child.kill('SIGKILL');
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  it('counts every series exactly across a SIGKILL and a late joiner, and every partition moves with its state', async () => {
    const topic = uniqueName('scale-events');
    const groupId = uniqueName('scale-group');
    const stateTopic = uniqueName('scale-state');
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();

    const start = async (name: string): Promise<Member> => {
      const port = await freePort();
      const configPath = join(dir, `${name}.yaml`);
      writeFileSync(
        configPath,
        JSON.stringify({
          // The broker's shortest session: the killed member's partitions move after 6 s, not 30.
          kafka: { brokers, clientId: `headroom-scale-${name}`, groupId, topics: [topic], sessionTimeout: '6s', heartbeatInterval: '2s' },
          models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
          windows: ['5m'],
          checkpoint: { store: 'kafka', topic: stateTopic, dir: join(dir, `${name}-state`), interval: '1s' },
          http: { host: '127.0.0.1', port },
        }),
      );
      const member = { name, url: `http://127.0.0.1:${port}`, cli: spawnHeadroom(['watch', '--config', configPath]) };
      members.push(member);
      return member;
    };
    const [a, b, c] = [await start('a'), await start('b'), await start('c')];
    await until('three watchers ready', async () => {
      for (const m of [a, b, c]) {
        const ready = await fetch(`${m.url}/readyz`).then((r) => r.status === 200, () => false);
        if (!ready) return false;
      }
      return true;
    }, 120_000);

    const events = makeScoredEvents({ n: EVENTS, seed: 71, fromMs: Date.now() - 100_000, spanMs: 60_000, idPrefix: 's', thresholds: THRESHOLDS });
    let d: Member | undefined;
    let bOwned = new Set<number>();
    let killedAtMs = 0;
    for (let i = 0; i < EVENTS; i += CHUNK) {
      await producer.send({ topic, messages: events.slice(i, i + CHUNK).map((e, j) => ({ key: `parcel-${(i + j) % 997}`, value: e.wire })) });
      // From a third of the way: the first chunk at which b has saved every partition it owns (its checkpoint
      // age is exported once it has), so that its saves are what its partitions' next owners must restore.
      const bSamples = i >= CHUNK * 20 && killedAtMs === 0 ? await scrape(b.url) : [];
      const bLag = bSamples.filter((x) => x.name === 'headroom_consumer_lag_messages').map((x) => x.labels.partition);
      const bSaved = new Set(bSamples.filter((x) => x.name === 'headroom_checkpoint_age_seconds').map((x) => x.labels.partition));
      if (bLag.length > 0 && bLag.every((p) => bSaved.has(p))) {
        // What b owns as it dies: the partitions on its lag gauge (one sample per owned partition).
        bOwned = new Set(bLag.map(Number));
        killedAtMs = Date.now();
        log(`SIGKILL b after ${i + CHUNK} events; it owned ${[...bOwned].join(',')}`);
        b.cli.child.kill('SIGKILL');
      }
      if (d === undefined && killedAtMs > 0 && i >= CHUNK * 40) {
        log(`starting d after ${i + CHUNK} events`);
        d = await start('d');
      }
      await sleep(200);
    }
    expect(killedAtMs, 'b saved every partition it owned, and was killed, before the production ended').toBeGreaterThan(0);
    expect(d, 'd started after the kill').toBeDefined();
    expect(await b.cli.exited).toBe('SIGKILL');
    const live = [a, c, d as Member];
    const expected = expectedSeries(events, THRESHOLDS);

    // Each live watcher exports only what it owns: their sum is every message, once.
    const instanceTotal = async (): Promise<number> => (await Promise.all(live.map(async (m) => countedMessages(await scrape(m.url))))).reduce((x, y) => x + y, 0);
    await until(`${EVENTS} events counted across the live watchers`, async () => (await instanceTotal()) >= EVENTS, 240_000);
    // The cluster view of each watcher lags its peers by a checkpoint and a refresh (1 s each).
    const clusterSeries = async (m: Member): Promise<ClusterSeries[]> => {
      const response = await fetch(`${m.url}/api/cluster/series`);
      expect(response.status).toBe(200);
      return ((await response.json()) as { series: ClusterSeries[] }).series;
    };
    const showsAll = async (m: Member): Promise<boolean> => {
      const series = await clusterSeries(m);
      return series.length === expected.size && series.every((s) => expected.get(`${s.model}\u0000${s.version}\u0000${s.segment}`)?.events === s.events);
    };
    await until('every watcher\'s cluster view to show the produced counts', async () => (await Promise.all(live.map(showsAll))).every(Boolean), 120_000);
    expect(await instanceTotal()).toBe(EVENTS);
    for (const m of live) {
      for (const s of await clusterSeries(m)) expect(s.events, `${m.name}: ${s.model} ${s.version} ${s.segment}`).toBe(expected.get(`${s.model}\u0000${s.version}\u0000${s.segment}`)?.events);
    }

    // One exporter of the headroom_cluster_ families, with the same exact figures.
    const scrapes = await Promise.all(live.map((m) => scrape(m.url)));
    const exporters = scrapes.map((s) => value(s, 'headroom_cluster_exporter', {}));
    expect(exporters.filter((x) => x === 1)).toHaveLength(1);
    expect(exporters.filter((x) => x === 0)).toHaveLength(live.length - 1);
    for (const [i, samples] of scrapes.entries()) {
      const others = samples.filter((s) => s.name.startsWith('headroom_cluster_') && !['headroom_cluster_exporter', 'headroom_cluster_partitions'].includes(s.name));
      if (exporters[i] === 0) expect(others).toEqual([]);
      expect(value(samples, 'headroom_cluster_partitions', {})).toBe(PARTITIONS);
    }
    const exporter = scrapes[exporters.indexOf(1)] ?? [];
    for (const e of expected.values()) {
      const labels = { model: e.model, version: e.version, segment: e.segment };
      expect(value(exporter, 'headroom_cluster_events_total', labels), JSON.stringify(labels)).toBe(e.events);
      expect(value(exporter, 'headroom_cluster_window_events', { ...labels, window: '5m' })).toBe(e.events);
      for (const [t, below] of e.below) {
        expect(value(exporter, 'headroom_cluster_low_margin_ratio', { ...labels, window: '5m', threshold: String(t) })).toBeCloseTo(below / e.events, 12);
      }
    }

    // Every partition b owned went to a live watcher, restored from the state topic.
    const assigned = (m: Member) => m.cli.logLines().filter((l) => l.msg === 'partition assigned') as { partition: number; restored: boolean; time: number; offset: string }[];
    expect(bOwned.size).toBeGreaterThan(0);
    for (const p of bOwned) {
      const takers = live.flatMap((m) => assigned(m).filter((l) => l.partition === p && l.time > killedAtMs));
      expect(takers.length, `partition ${p} of b taken over`).toBeGreaterThan(0);
      const story = [b, ...live].map((m) => `${m.name}: ${JSON.stringify(assigned(m).filter((l) => l.partition === p))}`).join('\n');
      expect(takers.some((l) => l.restored), `partition ${p} restored by its next owner (killed at ${killedAtMs})\n${story}`).toBe(true);
    }

    // SIGTERM: each saves its partitions; the state topic then holds every event once.
    for (const m of live) m.cli.child.kill('SIGTERM');
    for (const m of live) expect(await m.cli.exited, m.cli.output().slice(-2000)).toBe(0);
    const store = new KafkaCheckpointStore({ kafka, topic: stateTopic, logger: pino({ level: 'silent' }) });
    try {
      const keys = await store.list(groupId);
      expect(keys).toHaveLength(PARTITIONS);
      const states = await Promise.all(keys.map((k) => store.load(groupId, k.topic, k.partition)));
      expect(states.reduce((n, s) => n + (s?.counts.events ?? 0), 0)).toBe(EVENTS);
    } finally {
      await store.close();
    }
  }, 600_000);
});
