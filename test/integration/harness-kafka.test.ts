/**
 * Proves the broker under the tests is a real one: 10,000 messages go through it and come back through a
 * consumer group, every one exactly once and in order within each partition.
 */
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { uniqueName } from '../harness/names.js';

const TOTAL = 10_000;
const PARTITIONS = 4;

describe('the test harness broker', () => {
  const kafka = new Kafka({ clientId: 'headroom-harness-test', brokers: inject('kafkaBrokers').split(','), logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const topic = uniqueName('harness-roundtrip');
  const groupId = uniqueName('harness-group');
  const consumer = kafka.consumer({ groupId });

  afterAll(async () => {
    await consumer.disconnect();
    await admin.disconnect();
  });

  it('carries 10,000 messages through a consumer group, exactly once and in order per partition', async () => {
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const meta = await admin.fetchTopicMetadata({ topics: [topic] });
    expect(meta.topics[0]?.partitions).toHaveLength(PARTITIONS);

    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    await producer.connect();
    for (let start = 0; start < TOTAL; start += 1_000) {
      const messages = Array.from({ length: 1_000 }, (_, i) => {
        const n = start + i;
        // Keyed by n mod 16, so each key's messages share a partition and their order there is checkable.
        return { key: `k${n % 16}`, value: JSON.stringify({ n, key: `k${n % 16}` }) };
      });
      await producer.send({ topic, messages });
    }
    await producer.disconnect();

    const seen = new Map<number, number>();
    const lastPerKey = new Map<string, number>();
    const keysPerPartition = new Map<number, Set<string>>();
    let outOfOrder = 0;
    let received = 0;
    const done = new Promise<void>((resolve) => {
      void consumer.connect().then(async () => {
        await consumer.subscribe({ topics: [topic], fromBeginning: true });
        await consumer.run({
          eachMessage: async ({ partition, message }) => {
            const body = JSON.parse(message.value?.toString() ?? '{}') as { n: number; key: string };
            seen.set(body.n, (seen.get(body.n) ?? 0) + 1);
            if ((lastPerKey.get(body.key) ?? -1) > body.n) outOfOrder += 1;
            lastPerKey.set(body.key, body.n);
            const keys = keysPerPartition.get(partition) ?? new Set<string>();
            keys.add(body.key);
            keysPerPartition.set(partition, keys);
            received += 1;
            if (received >= TOTAL) resolve();
          },
        });
      });
    });
    await Promise.race([done, new Promise((_, reject) => setTimeout(() => reject(new Error(`only ${received} of ${TOTAL} arrived`)), 90_000))]);

    expect(received).toBe(TOTAL);
    expect(seen.size).toBe(TOTAL);
    expect([...seen.values()].every((count) => count === 1)).toBe(true);
    expect(outOfOrder).toBe(0);
    // The messages really were spread over partitions, and no key was split between two of them.
    expect(keysPerPartition.size).toBeGreaterThan(1);
    const allKeys = [...keysPerPartition.values()].flatMap((keys) => [...keys]);
    expect(new Set(allKeys).size).toBe(allKeys.length);

    // The group's committed offsets add up to what was produced (the broker's own bookkeeping).
    await consumer.stop();
    const offsets = await admin.fetchOffsets({ groupId, topics: [topic] });
    const committed = offsets[0]?.partitions.reduce((sum, p) => sum + Number(p.offset), 0);
    expect(committed).toBe(TOTAL);
  });
});
