/**
 * `headroom watch` at volume on the real broker: 200,000 valid events over 6 partitions, four models and
 * their segments, each counted exactly once with the low-margin shares computed here; and a flood of
 * 50,000 malformed messages (random bytes, wrong types, NaN, p = 1.5, empty values, a 2 MB payload)
 * mixed with valid ones: no crash, every rejection counted by reason, every one copied to the
 * dead-letter topic byte for byte, and the valid counts untouched.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import type { Message } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { uniqueName } from '../harness/names.js';
import { expectedSeries, makeMalformed, makeScoredEvents } from '../harness/scored-events.js';
import type { Malformed } from '../harness/scored-events.js';
import { readTopic } from '../harness/topics.js';
import { until } from '../harness/wait.js';
import { countedMessages, expectWatcherShows, scrape, waitUntilCounted } from '../harness/watch-checks.js';

const PARTITIONS = 6;
const THRESHOLDS = [0.1, 0.25];
/** Room for the 2 MB payload on the input and the dead-letter topic (the broker default is about 1 MB). */
const BIG_TOPIC = [{ name: 'max.message.bytes', value: String(3 * 1024 * 1024) }];

const log = (line: string): void => void process.stderr.write(`[watch-volume] ${line}\n`);

describe('headroom watch at volume on the real broker', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-volume-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dirs: string[] = [];
  const watchers: Watcher[] = [];
  const errorLines: string[] = [];
  const groupOf = new Map<Watcher, string>();

  const startWatcher = async (topic: string, deadLetterTopic: string | null): Promise<Watcher> => {
    const dir = mkdtempSync(join(tmpdir(), 'headroom-volume-'));
    dirs.push(dir);
    const groupId = uniqueName('volume-group');
    const { config } = parseConfig(
      {
        kafka: { brokers, clientId: 'headroom-volume-test', groupId, topics: [topic], deadLetterTopic },
        models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
        windows: ['5m', '1h'],
        checkpoint: { dir, interval: '2s' },
        http: { host: '127.0.0.1', port: 0 },
      },
      'watch-volume.test.ts',
      {},
    );
    // Only warnings and errors are kept: a crash or a failed checkpoint must show up, not pass silently.
    const logger = pino({ level: 'warn' }, { write: (line: string) => void errorLines.push(line) });
    const watcher = createWatcher({ config, store: new FileCheckpointStore({ dir }), logger, registry: new Registry(), nowMs: () => Date.now(), lagIntervalMs: 500 });
    watchers.push(watcher);
    groupOf.set(watcher, groupId);
    await watcher.start();
    return watcher;
  };

  const send = async (topic: string, messages: readonly Message[]): Promise<void> => {
    const chunk = 2_000;
    for (let i = 0; i < messages.length; i += chunk * 4) {
      const sends = [];
      for (let j = i; j < Math.min(i + chunk * 4, messages.length); j += chunk) sends.push(producer.send({ topic, messages: messages.slice(j, j + chunk) }));
      await Promise.all(sends);
    }
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

  it('counts 200,000 events over 6 partitions exactly, per model, version and segment', async () => {
    const topic = uniqueName('volume-events');
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const events = makeScoredEvents({ n: 200_000, seed: 2026, fromMs: Date.now() - 100_000, spanMs: 90_000, idPrefix: 'v', thresholds: THRESHOLDS });
    const produceStarted = performance.now();
    await send(topic, events.map((e, i) => ({ key: `parcel-${i % 1009}`, value: e.wire })));
    log(`produced 200,000 events in ${((performance.now() - produceStarted) / 1000).toFixed(1)} s`);

    const started = performance.now();
    const watcher = await startWatcher(topic, null);
    await waitUntilCounted(watcher, PARTITIONS, events.length);
    log(`watcher counted them in ${((performance.now() - started) / 1000).toFixed(1)} s`);

    const expected = expectedSeries(events, THRESHOLDS);
    // 4 models: parcel-damage all + 3 lines + 2 sites, label-reader all + 3 lines, route-sorter all + 2 sites, seal-check all.
    expect(expected.size).toBe(6 + 4 + 3 + 1);
    await expectWatcherShows(watcher.url() as string, expected, '5m');
    expect(watcher.source.readiness()).toEqual({ ready: true, reasons: [] });
    expect(errorLines.filter((l) => l.includes('"level":50'))).toEqual([]);
  }, 420_000);

  it('survives 50,000 malformed messages: counted by reason, copied byte for byte, valid counts untouched', async () => {
    const topic = uniqueName('flood-events');
    const deadLetterTopic = uniqueName('flood-rejected');
    await admin.createTopics({
      topics: [
        { topic, numPartitions: PARTITIONS, replicationFactor: 1, configEntries: BIG_TOPIC },
        { topic: deadLetterTopic, numPartitions: 2, replicationFactor: 1, configEntries: BIG_TOPIC },
      ],
      waitForLeaders: true,
    });
    const valid = makeScoredEvents({ n: 20_000, seed: 7, fromMs: Date.now() - 100_000, spanMs: 90_000, idPrefix: 'f', thresholds: THRESHOLDS });
    const bad: Malformed[] = makeMalformed(50_000, 11, 2 * 1024 * 1024);
    expect(bad).toHaveLength(50_001);
    // Interleaved: every valid event sits between malformed ones, in one stream per partition key.
    const messages: Message[] = [];
    let v = 0;
    bad.forEach((b, i) => {
      messages.push({ key: `parcel-${i % 1009}`, value: b.value });
      if (i % 5 < 2 && v < valid.length) messages.push({ key: `parcel-${v % 1009}`, value: (valid[v++] as { wire: string }).wire });
    });
    while (v < valid.length) messages.push({ key: `parcel-${v % 1009}`, value: (valid[v++] as { wire: string }).wire });
    const huge = messages.findIndex((m) => m.value !== null && m.value.length > 1024 * 1024);
    // The 2 MB payload goes alone: one request may not exceed the broker's own limits either.
    await send(topic, messages.slice(0, huge));
    await producer.send({ topic, messages: [messages[huge] as Message] });
    await send(topic, messages.slice(huge + 1));

    const watcher = await startWatcher(topic, deadLetterTopic);
    await waitUntilCounted(watcher, PARTITIONS, messages.length);
    await expectWatcherShows(watcher.url() as string, expectedSeries(valid, THRESHOLDS), '5m', bad);

    // Each malformed message once on the dead-letter topic: its bytes (null stays null) and its reason.
    const copies = await readTopic(kafka, deadLetterTopic, bad.length, 120_000);
    const key = (value: string | null, reason: string): string => `${reason}|${value ?? '<null>'}`;
    expect(copies.map((c) => key(c.value, c.headers['headroom-reason'] ?? '')).sort()).toEqual(bad.map((b) => key(b.value === null ? null : b.value.toString('base64'), b.reason)).sort());
    expect(new Set(copies.map((c) => `${c.headers['headroom-source-partition']}@${c.headers['headroom-source-offset']}`)).size).toBe(bad.length);
    expect(copies.every((c) => c.headers['headroom-source-topic'] === topic)).toBe(true);
    expect(watcher.source.readiness()).toEqual({ ready: true, reasons: [] });
  }, 420_000);

  it('sends a copy too large for the dead-letter topic without its value, and still checkpoints past it', async () => {
    const topic = uniqueName('oversize-events');
    const deadLetterTopic = uniqueName('oversize-rejected');
    // The input topic takes the 1.5 MB message; the dead-letter topic keeps the broker's ~1 MB default.
    await admin.createTopics({
      topics: [
        { topic, numPartitions: 1, replicationFactor: 1, configEntries: BIG_TOPIC },
        { topic: deadLetterTopic, numPartitions: 1, replicationFactor: 1 },
      ],
      waitForLeaders: true,
    });
    const valid = makeScoredEvents({ n: 30, seed: 3, fromMs: Date.now() - 60_000, spanMs: 30_000, idPrefix: 'o', thresholds: THRESHOLDS });
    const huge = Buffer.from(`{"id":"huge","pad":"${'x'.repeat(1_500_000)}"}`);
    const small = Buffer.from('[1, 2]');
    await producer.send({ topic, messages: [...valid.slice(0, 10).map((e) => ({ value: e.wire })), { value: huge }] });
    await producer.send({ topic, messages: [{ value: small }, ...valid.slice(10).map((e) => ({ value: e.wire }))] });

    const watcher = await startWatcher(topic, deadLetterTopic);
    const url = watcher.url() as string;
    await until('all 32 messages counted', async () => countedMessages(await scrape(url)) >= 32);
    const copies = await readTopic(kafka, deadLetterTopic, 2);
    expect(copies).toHaveLength(2);
    const [bigCopy, smallCopy] = copies as [(typeof copies)[0], (typeof copies)[0]];
    expect(bigCopy.value).toBeNull();
    expect(bigCopy.headers['headroom-reason']).toBe('too_large');
    expect(bigCopy.headers['headroom-value-dropped']).toMatch(new RegExp(`^${huge.length} bytes, more than ${deadLetterTopic} accepts`));
    expect(smallCopy).toEqual({ value: small.toString('base64'), headers: expect.objectContaining({ 'headroom-reason': 'not_object', 'headroom-source-offset': '11' }) });
    // Not held back by the refused copy: the checkpointed offset (committed after it) reaches the end.
    await until('the offset past every message to be committed', async () => {
      const offsets = await admin.fetchOffsets({ groupId: groupOf.get(watcher) as string, topics: [topic] });
      return offsets[0]?.partitions[0]?.offset === '32';
    }, 30_000);
    expect(errorLines.some((l) => l.includes('dead-letter copy too large for its topic'))).toBe(true);
  }, 120_000);
});
