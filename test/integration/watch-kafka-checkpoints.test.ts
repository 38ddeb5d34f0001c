/**
 * `checkpoint.store: kafka` in the watcher: a partition's state follows it from one watcher to another
 * through the state topic, not the file system. Watcher A counts the first events and stops; the
 * events are then deleted from the input topic, so watcher B, with an empty checkpoint.dir of its own,
 * can show them only by restoring A's states from Kafka; it counts the later events on top, exactly.
 * And the `headroom watch` binary with `checkpoint.store: kafka`, from a config file to a clean exit.
 */
import { mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { checkpointStoreFor } from '../../src/cli/checkpoint-store.js';
import { KafkaCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { spawnHeadroom } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { freePort } from '../kafka/broker.js';
import { expectedSeries, makeScoredEvents } from '../harness/scored-events.js';
import { until } from '../harness/wait.js';
import { countedMessages, expectWatcherShows, scrape, waitUntilCounted } from '../harness/watch-checks.js';

const PARTITIONS = 3;
const THRESHOLDS = [0.1, 0.25];

describe('headroom watch with checkpoints on a Kafka topic', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-kstore-watch-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dirs: string[] = [];
  const watchers: Watcher[] = [];
  const lines: string[] = [];

  const startWatcher = async (topic: string, groupId: string, stateTopic: string): Promise<{ watcher: Watcher; dir: string }> => {
    const dir = mkdtempSync(join(tmpdir(), 'headroom-kstore-watch-'));
    dirs.push(dir);
    const { config } = parseConfig(
      {
        kafka: { brokers, clientId: 'headroom-kstore-watch-test', groupId, topics: [topic] },
        models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
        windows: ['5m', '1h'],
        checkpoint: { store: 'kafka', topic: stateTopic, dir, interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
      },
      'watch-kafka-checkpoints.test.ts',
      {},
    );
    const logger = pino({ level: 'info' }, { write: (line: string) => void lines.push(line) });
    const store = checkpointStoreFor(config, {}, logger);
    expect(store).toBeInstanceOf(KafkaCheckpointStore);
    const watcher = createWatcher({ config, store, logger, registry: new Registry(), nowMs: () => Date.now(), lagIntervalMs: 500 });
    watchers.push(watcher);
    await watcher.start();
    return { watcher, dir };
  };

  beforeAll(async () => {
    await admin.connect();
    await producer.connect();
  });

  afterAll(async () => {
    for (const w of watchers) await w.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    for (const dir of dirs) rmSync(dir, { recursive: true, force: true });
  });

  it("a second watcher restores the first one's states from the topic and counts on from them", async () => {
    const topic = uniqueName('kstore-events');
    const groupId = uniqueName('kstore-group');
    const stateTopic = uniqueName('kstore-state');
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const first = makeScoredEvents({ n: 3_000, seed: 41, fromMs: Date.now() - 100_000, spanMs: 60_000, idPrefix: 'a', thresholds: THRESHOLDS });
    const later = makeScoredEvents({ n: 2_000, seed: 42, fromMs: Date.now() - 30_000, spanMs: 20_000, idPrefix: 'b', thresholds: THRESHOLDS });
    await producer.send({ topic, messages: first.map((e, i) => ({ key: `parcel-${i % 101}`, value: e.wire })) });

    const a = await startWatcher(topic, groupId, stateTopic);
    await waitUntilCounted(a.watcher, PARTITIONS, first.length, 120_000);
    await a.watcher.close();
    // Nothing of the state went to checkpoint.dir: it is all on the topic (only the alert state would be a file).
    expect(readdirSync(a.dir)).toEqual([]);

    // The first events are gone from the input: only A's saved states still hold them.
    const ends = await admin.fetchTopicOffsets(topic);
    await admin.deleteTopicRecords({ topic, partitions: ends.map((p) => ({ partition: p.partition, offset: p.high })) });
    expect((await admin.fetchTopicOffsets(topic)).every((p) => p.low === p.high)).toBe(true);
    await producer.send({ topic, messages: later.map((e, i) => ({ key: `parcel-${i % 101}`, value: e.wire })) });

    const b = await startWatcher(topic, groupId, stateTopic);
    await waitUntilCounted(b.watcher, PARTITIONS, first.length + later.length, 120_000);
    await expectWatcherShows(b.watcher.url() as string, expectedSeries([...first, ...later], THRESHOLDS), '5m');
    const assigned = lines.map((l) => JSON.parse(l) as { msg?: string; restored?: boolean }).filter((l) => l.msg === 'partition assigned');
    // A's three assignments (nothing to restore) and B's three (each restored).
    expect(assigned.map((l) => l.restored)).toEqual([false, false, false, true, true, true]);
    expect(lines.filter((l) => l.includes('"level":50'))).toEqual([]);
  }, 300_000);

  it("a partition that moves mid-run is restored from its previous owner's latest save, not from the store as it was at start", async () => {
    const topic = uniqueName('kstore-move-events');
    const groupId = uniqueName('kstore-move-group');
    const stateTopic = uniqueName('kstore-move-state');
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    // Both start on an empty state topic, so neither could have A's states from a load made at start.
    const a = await startWatcher(topic, groupId, stateTopic);
    const b = await startWatcher(topic, groupId, stateTopic);
    const urls = [a.watcher.url() as string, b.watcher.url() as string];
    await until('the two watchers to share the partitions', () => a.watcher.source.partitions().length > 0 && b.watcher.source.partitions().length > 0, 120_000);
    const aOwned = a.watcher.source.partitions().map((p) => p.partition);
    expect(aOwned.length + b.watcher.source.partitions().length).toBe(PARTITIONS);

    const first = makeScoredEvents({ n: 3_000, seed: 44, fromMs: Date.now() - 100_000, spanMs: 60_000, idPrefix: 'm', thresholds: THRESHOLDS });
    const later = makeScoredEvents({ n: 2_000, seed: 45, fromMs: Date.now() - 30_000, spanMs: 20_000, idPrefix: 'n', thresholds: THRESHOLDS });
    await producer.send({ topic, messages: first.map((e, i) => ({ key: `parcel-${i % 101}`, value: e.wire })) });
    const total = async (): Promise<number> => (await Promise.all(urls.map(async (u) => countedMessages(await scrape(u))))).reduce((x, y) => x + y, 0);
    await until(`${first.length} messages counted by the two`, async () => (await total()) >= first.length, 120_000);
    expect(await total()).toBe(first.length);
    // A's events leave the input topic: once A stops, only its last saves on the state topic hold them.
    const ends = await admin.fetchTopicOffsets(topic);
    await admin.deleteTopicRecords({ topic, partitions: ends.map((p) => ({ partition: p.partition, offset: p.high })) });
    const mark = lines.length;
    await a.watcher.close();

    await producer.send({ topic, messages: later.map((e, i) => ({ key: `parcel-${i % 101}`, value: e.wire })) });
    await until('B to own every partition', () => b.watcher.source.partitions().length === PARTITIONS, 120_000);
    await waitUntilCounted(b.watcher, PARTITIONS, first.length + later.length, 120_000);
    await expectWatcherShows(urls[1] as string, expectedSeries([...first, ...later], THRESHOLDS), '5m');
    const taken = lines
      .slice(mark)
      .map((l) => JSON.parse(l) as { msg?: string; restored?: boolean; partition?: number })
      .filter((l) => l.msg === 'partition assigned');
    // Each of A's partitions, restored by B from A's save (B's own are logged again at the rebalance too).
    for (const p of aOwned) expect(taken.filter((l) => l.partition === p).map((l) => l.restored)).toEqual([true]);
    expect(b.watcher.source.readiness()).toEqual({ ready: true, reasons: [] });
  }, 300_000);

  it('headroom watch with checkpoint.store kafka counts, exits 0 on SIGTERM, and leaves its states on the topic', async () => {
    const topic = uniqueName('kstore-cli-events');
    const groupId = uniqueName('kstore-cli-group');
    const stateTopic = uniqueName('kstore-cli-state');
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const events = makeScoredEvents({ n: 2_000, seed: 43, fromMs: Date.now() - 60_000, spanMs: 50_000, idPrefix: 'c', thresholds: THRESHOLDS });
    await producer.send({ topic, messages: events.map((e, i) => ({ key: `parcel-${i % 101}`, value: e.wire })) });
    const dir = mkdtempSync(join(tmpdir(), 'headroom-kstore-cli-'));
    dirs.push(dir);
    const port = await freePort();
    const url = `http://127.0.0.1:${port}`;
    const configPath = join(dir, 'watch.yaml');
    writeFileSync(
      configPath,
      JSON.stringify({
        kafka: { brokers, clientId: 'headroom-kstore-cli-test', groupId, topics: [topic] },
        models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
        windows: ['5m'],
        checkpoint: { store: 'kafka', topic: stateTopic, dir: join(dir, 'state'), interval: '1s' },
        http: { host: '127.0.0.1', port },
      }),
    );
    const cli = spawnHeadroom(['watch', '--config', configPath]);
    try {
      await until('the CLI to count every event', async () => countedMessages(await scrape(url).catch(() => [])) >= events.length, 120_000);
      await expectWatcherShows(url, expectedSeries(events, THRESHOLDS), '5m');
    } finally {
      cli.child.kill('SIGTERM');
    }
    expect(await cli.exited, cli.output()).toBe(0);
    const logged = cli.logLines();
    expect(logged.some((l) => l.msg === 'state topic read to its end' && l.stateTopic === stateTopic), cli.output()).toBe(true);
    expect(String(logged.find((l) => l.msg === 'configuration')?.config)).toContain(`checkpoint on topic ${stateTopic}`);

    const store = new KafkaCheckpointStore({ kafka, topic: stateTopic, logger: pino({ level: 'silent' }) });
    try {
      const keys = await store.list(groupId);
      expect(keys.map((k) => [k.topic, k.partition])).toEqual([0, 1, 2].map((p) => [topic, p]));
      const states = await Promise.all(keys.map((k) => store.load(groupId, k.topic, k.partition)));
      expect(states.reduce((n, s) => n + (s?.counts.events ?? 0), 0)).toBe(events.length);
    } finally {
      await store.close();
    }
  }, 300_000);
});
