/**
 * KafkaCheckpointStore on the real broker: the shared CheckpointStore contract, then what only a topic
 * store has to get right: several instances, states above the broker's record limit, compaction.
 */
import { gzipSync } from 'node:zlib';
import kafkajs, { Kafka, logLevel } from 'kafkajs';
import type { Admin, KafkaMessage, Producer } from 'kafkajs';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { isHeadroomError } from '../../src/errors.js';
import { chunkKey, KIND_HEADER, parseChunkKey, recordWhere, stateKey } from '../../src/state/kafka-records.js';
import { KafkaCheckpointStore } from '../../src/state/kafka-store.js';
import type { KafkaCheckpointStoreOptions } from '../../src/state/kafka-store.js';
import { bigState } from '../unit/state/big-state.js';
import { checkpointStoreContract, sampleState } from '../unit/state/checkpoint-store-contract.js';
import { uniqueName } from '../harness/names.js';
import { until } from '../harness/wait.js';

const { ConfigResourceTypes } = kafkajs;
const kafka = new Kafka({ clientId: 'headroom-kstore-test', brokers: inject('kafkaBrokers').split(','), logLevel: logLevel.NOTHING });
const quiet = pino({ level: 'silent' });
let admin: Admin;
let producer: Producer;
const stores: KafkaCheckpointStore[] = [];

function storeOn(topic: string, extra: Partial<KafkaCheckpointStoreOptions> = {}): KafkaCheckpointStore {
  const store = new KafkaCheckpointStore({ kafka, topic, logger: quiet, ...extra });
  stores.push(store);
  return store;
}

beforeAll(async () => {
  admin = kafka.admin();
  producer = kafka.producer();
  await admin.connect();
  await producer.connect();
});

afterAll(async () => {
  await Promise.allSettled(stores.map((s) => s.close()));
  await producer?.disconnect();
  await admin?.disconnect();
});

/** Writes a record as a damaged medium or a stranger would; returns its offset. */
async function put(topic: string, key: string | null, value: Buffer | string | null, kind?: string): Promise<string> {
  const [meta] = await producer.send({ topic, acks: -1, messages: [{ key, value, partition: 0, ...(kind === undefined ? {} : { headers: { [KIND_HEADER]: kind } }) }] });
  return meta?.baseOffset as string;
}

/** Every record on partition 0 of `topic` as it is now, read by a plain consumer. */
async function records(topic: string): Promise<KafkaMessage[]> {
  const [end] = await admin.fetchTopicOffsets(topic);
  const high = BigInt(end?.high ?? '0');
  const out: KafkaMessage[] = [];
  let at = -1n;
  const reader = kafka.consumer({ groupId: uniqueName('raw-reader'), maxWaitTimeInMs: 500 });
  await reader.connect();
  try {
    await reader.subscribe({ topics: [topic], fromBeginning: true });
    await reader.run({
      eachBatch: async ({ batch }) => {
        out.push(...batch.messages);
        at = BigInt(batch.lastOffset()) + 1n;
      },
    });
    await until(`reading ${topic} to ${high}`, () => high === 0n || at >= high, 60_000);
  } finally {
    await reader.disconnect();
  }
  return out;
}

async function failure(p: Promise<unknown>): Promise<{ code?: string; message: string }> {
  try {
    await p;
  } catch (e) {
    return isHeadroomError(e) ? { code: e.code, message: e.message } : { message: String(e) };
  }
  throw new Error('expected a rejection');
}

checkpointStoreContract('KafkaCheckpointStore', async () => {
  const topic = uniqueName('state');
  const store = storeOn(topic);
  const damaged = new Map<string, string>();
  return {
    store,
    reopen: async () => storeOn(topic),
    // A record in headroom's own format holding the damaged text, so the state checks are what refuse it.
    damage: async (group, t, partition, text) => {
      const key = stateKey(group, t, partition);
      damaged.set(key, await put(topic, key, gzipSync(text), 'inline'));
    },
    whereOf: (group, t, partition) => {
      const key = stateKey(group, t, partition);
      return recordWhere(topic, 0, damaged.get(key) ?? '?', key);
    },
    cleanup: async () => {
      // Only if made: kafkajs retries the delete of an unknown topic for seconds.
      if ((await admin.listTopics()).includes(topic)) await admin.deleteTopics({ topics: [topic] });
    },
  };
});

describe('KafkaCheckpointStore on a real broker', () => {
  it('creates the state topic compacted, and refuses one that deletes by time', async () => {
    const topic = uniqueName('state');
    await storeOn(topic).start();
    const described = await admin.describeConfigs({
      includeSynonyms: false,
      resources: [{ type: ConfigResourceTypes.TOPIC, name: topic, configNames: ['cleanup.policy'] }],
    });
    expect(described.resources[0]?.configEntries.find((e) => e.configName === 'cleanup.policy')?.configValue).toBe('compact');

    const deleting = uniqueName('state-delete');
    await admin.createTopics({ waitForLeaders: true, topics: [{ topic: deleting, numPartitions: 1, replicationFactor: 1, configEntries: [{ name: 'cleanup.policy', value: 'compact,delete' }] }] });
    const f = await failure(storeOn(deleting).load('g', 'scores', 0));
    expect(f.code).toBe('HR_ERR_CHECKPOINT_TOPIC');
    expect(f.message).toContain(deleting);
    expect(f.message).toContain('cleanup.policy=compact,delete');
  });

  it("a second instance (another watcher) sees the first one's saves, and the first sees the second's", async () => {
    const topic = uniqueName('state');
    const a = storeOn(topic);
    const b = storeOn(topic);
    await Promise.all([a.start(), b.start()]);
    expect(a.readerGroupId).not.toBe(b.readerGroupId);
    await a.save('watchers', 'scores', 3, sampleState('scores', 3, 20));
    // No reopen and no wait: load reads to the end offsets before answering.
    expect((await b.load('watchers', 'scores', 3))?.nextOffset).toBe('121');
    expect(await b.list('watchers')).toEqual([{ topic: 'scores', partition: 3 }]);
    await b.save('watchers', 'scores', 3, sampleState('scores', 3, 35));
    await b.save('watchers', 'scores', 4, sampleState('scores', 4, 2));
    expect((await a.load('watchers', 'scores', 3))?.counts.events).toBe(35);
    expect(await a.list('watchers')).toEqual([
      { topic: 'scores', partition: 3 },
      { topic: 'scores', partition: 4 },
    ]);
  });

  it('a multi-MB state round-trips in chunks no bigger than the limit, which one record would exceed', async () => {
    const topic = uniqueName('state');
    const big = bigState('scores', 0, { minutes: 130, perMinute: 3000, lines: 4 });
    const rawBytes = Buffer.byteLength(JSON.stringify(big));
    expect(rawBytes).toBeGreaterThan(3_000_000);
    const a = storeOn(topic);
    await a.save('g', 'scores', 0, big);

    const onTopic = await records(topic);
    const chunks = onTopic.filter((m) => m.headers?.[KIND_HEADER]?.toString() === 'chunk');
    const heads = onTopic.filter((m) => m.key?.toString() === stateKey('g', 'scores', 0));
    expect(heads.map((m) => m.headers?.[KIND_HEADER]?.toString())).toEqual(['manifest']);
    expect(chunks.length).toBeGreaterThanOrEqual(2);
    for (const c of chunks) expect(c.value?.length).toBeLessThanOrEqual(512 * 1024);
    // The manifest comes after every chunk it names: it is the commit point.
    expect(Math.max(...chunks.map((c) => Number(c.offset)))).toBeLessThan(Number(heads[0]?.offset));
    const packedBytes = chunks.reduce((n, c) => n + (c.value?.length ?? 0), 0);
    expect(packedBytes).toBeLessThan(rawBytes / 2);
    expect(packedBytes).toBeGreaterThan(1_048_588); // more than the broker's default max.message.bytes

    // The same bytes as one record are refused by the broker's default limit: chunks are needed.
    const whole = Buffer.concat(chunks.map((c) => c.value as Buffer));
    const refused = await failure(producer.send({ topic, acks: -1, messages: [{ key: 'whole', value: whole, partition: 0 }] }));
    expect(refused.message).toMatch(/too large|larger than/i);

    const b = storeOn(topic);
    expect(await b.load('g', 'scores', 0)).toEqual(JSON.parse(JSON.stringify(big)));
  });

  it('keys are compaction-safe: one key per partition at every save, new chunk keys per save, old chunks tombstoned', async () => {
    const topic = uniqueName('state');
    // 1,000 bytes: the 300-event states take 2 chunks, the 1-event one is inline (sizes checked here, gzip level 1 as the store packs).
    const packed = (n: number): number => gzipSync(Buffer.from(JSON.stringify(sampleState('scores', 1, n))), { level: 1 }).length;
    expect(packed(1)).toBeLessThan(1_000);
    expect(Math.min(packed(300), packed(301))).toBeGreaterThan(1_000);
    expect(Math.max(packed(300), packed(301))).toBeLessThanOrEqual(2_000);
    const a = storeOn(topic, { chunkBytes: 1_000 });
    const key = stateKey('g', 'scores', 1);
    await a.save('g', 'scores', 1, sampleState('scores', 1, 300)); // save 1: chunked
    await a.save('g', 'scores', 1, sampleState('scores', 1, 301)); // save 2: chunked, deletes save 1's chunks
    await a.save('g', 'scores', 1, sampleState('scores', 1, 1)); // save 3: inline, deletes save 2's chunks

    const onTopic = await records(topic);
    const heads = onTopic.filter((m) => m.key?.toString() === key);
    expect(heads.map((m) => m.headers?.[KIND_HEADER]?.toString())).toEqual(['manifest', 'manifest', 'inline']);
    const chunkRecords = onTopic.filter((m) => m.value !== null && m.key?.toString() !== key);
    const saveIds = [...new Set(chunkRecords.map((m) => parseChunkKey(m.key?.toString() ?? '')?.saveId))];
    expect(saveIds).toHaveLength(2);
    expect(saveIds.every((id) => id !== undefined)).toBe(true);
    // Chunk keys never repeat, so compaction can never replace a chunk that a manifest names.
    expect(new Set(chunkRecords.map((m) => m.key?.toString())).size).toBe(chunkRecords.length);
    const tombstoned = new Set(onTopic.filter((m) => m.value === null).map((m) => m.key?.toString()));
    expect(tombstoned).toEqual(new Set(chunkRecords.map((m) => m.key?.toString())));
    expect((await storeOn(topic).load('g', 'scores', 1))?.counts.events).toBe(1);
  });

  it('after the broker compacts the topic, a new instance restores the last save of each partition', async () => {
    const topic = uniqueName('state-compacting');
    await admin.createTopics({
      waitForLeaders: true,
      topics: [
        {
          topic,
          numPartitions: 1,
          replicationFactor: 1,
          // Roll segments quickly and clean as soon as anything is dirty, so compaction runs within the test.
          configEntries: [
            { name: 'cleanup.policy', value: 'compact' },
            { name: 'segment.ms', value: '500' },
            { name: 'min.cleanable.dirty.ratio', value: '0.001' },
            { name: 'delete.retention.ms', value: '0' },
            { name: 'min.compaction.lag.ms', value: '0' },
          ],
        },
      ],
    });
    const a = storeOn(topic, { chunkBytes: 500 });
    for (let i = 1; i <= 6; i += 1) {
      await a.save('g', 'scores', 0, sampleState('scores', 0, 100 * i));
      await a.save('g', 'scores', 1, sampleState('scores', 1, i));
    }
    const written = (await records(topic)).length;
    // A record after segment.ms rolls the segment, making the older ones cleanable; the cleaner wakes every 15 s.
    await until(
      'the log cleaner to compact the state topic',
      async () => {
        await put(topic, 'filler', 'x', 'inline');
        return (await records(topic)).length < written;
      },
      100_000,
    );
    const b = storeOn(topic);
    expect((await b.load('g', 'scores', 0))?.counts.events).toBe(600);
    expect((await b.load('g', 'scores', 1))?.counts.events).toBe(6);
    expect(await b.list('g')).toEqual([
      { topic: 'scores', partition: 0 },
      { topic: 'scores', partition: 1 },
    ]);
  }, 150_000);

  it('a corrupt record is refused naming topic, key and offset; strangers on the topic are ignored', async () => {
    const topic = uniqueName('state');
    const a = storeOn(topic);
    await a.start();
    const key = stateKey('g', 'scores', 0);
    await put(topic, 'not/a key', 'x'); // a compacted topic refuses records without a key, so a stranger has one
    await put(topic, 'g/scores/x', 'y', 'inline');

    const noHeader = await put(topic, key, JSON.stringify(sampleState('scores', 0, 3)));
    let f = await failure(a.load('g', 'scores', 0));
    expect(f.code).toBe('HR_ERR_CHECKPOINT_CORRUPT');
    expect(f.message).toContain(recordWhere(topic, 0, noHeader, key));
    expect(f.message).toContain(`no ${KIND_HEADER} header`);
    expect(f.message).toContain(topic);

    const notGzip = await put(topic, key, JSON.stringify(sampleState('scores', 0, 3)), 'inline');
    f = await failure(a.load('g', 'scores', 0));
    expect([f.code, f.message.includes(recordWhere(topic, 0, notGzip, key)), f.message.includes('not gzip')]).toEqual(['HR_ERR_CHECKPOINT_CORRUPT', true, true]);

    const manifest = { format: 'headroom-checkpoint-manifest/1', saveId: 'abc123', chunks: 2, bytes: 10, sha256: '0'.repeat(64) };
    await put(topic, chunkKey(key, 'abc123', 0), Buffer.from('12345'), 'chunk');
    const missing = await put(topic, key, JSON.stringify(manifest), 'manifest');
    f = await failure(a.load('g', 'scores', 0));
    expect(f.code).toBe('HR_ERR_CHECKPOINT_CORRUPT');
    expect(f.message).toContain(recordWhere(topic, 0, missing, key));
    expect(f.message).toContain(`names chunk ${chunkKey(key, 'abc123', 1)}, which is not on the topic`);

    await put(topic, chunkKey(key, 'abc123', 1), Buffer.from('67890'), 'chunk');
    f = await failure(a.load('g', 'scores', 0));
    expect([f.code, f.message.includes('SHA-256 does not match')]).toEqual(['HR_ERR_CHECKPOINT_CORRUPT', true]);

    // Listed (there is something at the key) but never loaded as empty; a tombstone removes it.
    expect(await a.list('g')).toEqual([{ topic: 'scores', partition: 0 }]);
    await put(topic, key, null);
    expect(await a.load('g', 'scores', 0)).toBeUndefined();
    expect(await a.list('g')).toEqual([]);
  });

  it('close waits for a save under way, disconnects, and refuses later calls', async () => {
    const topic = uniqueName('state');
    const a = storeOn(topic, { chunkBytes: 300 });
    await a.start();
    const saving = a.save('g', 'scores', 5, sampleState('scores', 5, 400));
    const closing = a.close();
    expect(a.close()).toBe(closing);
    await closing;
    await expect(saving).resolves.toBeUndefined();
    expect((await failure(a.list('g'))).code).toBe('HR_ERR_CHECKPOINT_CLOSED');
    expect((await failure(a.start())).code).toBe('HR_ERR_CHECKPOINT_CLOSED');
    const [reader] = (await admin.describeGroups([a.readerGroupId])).groups;
    expect(reader?.members ?? []).toEqual([]);
    expect((await storeOn(topic).load('g', 'scores', 5))?.counts.events).toBe(400);
  });
});
