/**
 * The local broker's restart keeps what a "broker went away mid-stream" test relies on: a topic's
 * messages, a group's committed offsets, its ports, and an orphan-sweep entry naming the live JVM.
 * On a broker of its own, since the shared one must never go down under other files.
 */
import { readFileSync } from 'node:fs';
import { connect } from 'node:net';
import { basename, join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import type { Consumer } from 'kafkajs';
import { afterAll, describe, expect, it } from 'vitest';
import { dedicatedBrokerUnavailable } from '../harness/dedicated-broker.js';
import { uniqueName } from '../harness/names.js';
import { startLocalBroker } from '../kafka/broker.js';
import type { LocalBroker } from '../kafka/broker.js';
import { cacheRoot } from '../kafka/jars.js';

const TOTAL = 1_000;
const READ_BEFORE = 600;
const PARTITIONS = 2;

const portOpen = (address: string): Promise<boolean> =>
  new Promise((resolve) => {
    const [host, port] = address.split(':');
    const socket = connect({ host, port: Number(port) });
    socket.once('connect', () => (socket.destroy(), resolve(true)));
    socket.once('error', () => (socket.destroy(), resolve(false)));
  });

const registeredPid = (broker: LocalBroker): number =>
  (JSON.parse(readFileSync(join(cacheRoot(), 'running-brokers', `${basename(broker.dataDir)}.json`), 'utf8')) as { brokerPid: number }).brokerPid;

/** Reads until `count` messages arrived (or the time is up), committing each batch's offsets. */
async function readSome(consumer: Consumer, topic: string, count: number): Promise<string[]> {
  const values: string[] = [];
  await consumer.subscribe({ topics: [topic], fromBeginning: true });
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`only ${values.length} of ${count} messages arrived`)), 60_000);
    void consumer.run({
      autoCommit: false,
      eachMessage: async ({ topic: t, partition, message }) => {
        if (values.length >= count) return;
        values.push(message.value?.toString() ?? '');
        await consumer.commitOffsets([{ topic: t, partition, offset: (BigInt(message.offset) + 1n).toString() }]);
        if (values.length === count) {
          clearTimeout(timer);
          resolve();
        }
      },
    });
  });
  await consumer.stop();
  return values;
}

describe.skipIf(dedicatedBrokerUnavailable('harness-broker-restart.test.ts') !== undefined)('the local broker across a restart', () => {
  let broker: LocalBroker | undefined;

  afterAll(async () => {
    await broker?.stop();
  });

  it('keeps messages, committed offsets, ports and a correct sweep entry; stop() then removes everything', async () => {
    broker = await startLocalBroker({ heapMb: 512, log: (line) => process.stderr.write(`[restart broker] ${line}\n`) });
    const b = broker;
    process.stderr.write(`[harness-broker-restart] started in ${(b.startMs / 1000).toFixed(1)} s\n`);
    const topic = uniqueName('restart-topic');
    const groupId = uniqueName('restart-group');
    const clients = () => new Kafka({ clientId: 'headroom-restart-test', brokers: [b.bootstrap], logLevel: logLevel.NOTHING });

    let kafka = clients();
    let admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    await producer.connect();
    const sent = Array.from({ length: TOTAL }, (_, n) => `message-${n}`);
    // acks -1 and one send per 100: every message is acknowledged before the broker goes down.
    for (let i = 0; i < TOTAL; i += 100) await producer.send({ topic, acks: -1, messages: sent.slice(i, i + 100).map((value, j) => ({ key: `k${(i + j) % 7}`, value })) });
    await producer.disconnect();
    const first = kafka.consumer({ groupId });
    await first.connect();
    const before = await readSome(first, topic, READ_BEFORE);
    await first.disconnect();
    const committedBefore = await admin.fetchOffsets({ groupId, topics: [topic] });
    const highBefore = await admin.fetchTopicOffsets(topic);
    await admin.disconnect();
    expect(before).toHaveLength(READ_BEFORE);
    expect(committedBefore[0]?.partitions.reduce((sum, p) => sum + Math.max(0, Number(p.offset)), 0)).toBe(READ_BEFORE);

    const pidBefore = b.pid;
    expect(registeredPid(b)).toBe(pidBefore);

    // Down for a while: the port refuses connections, the data stays, the sweep entry stays (pid -1).
    await b.stopProcess();
    expect(b.pid).toBe(-1);
    expect(await portOpen(b.bootstrap)).toBe(false);
    expect(readFileSync(join(b.dataDir, 'server.properties'), 'utf8')).toContain(b.bootstrap);
    expect(registeredPid(b)).toBe(-1);
    await b.stopProcess(); // idempotent

    const restartMs = await b.startProcess();
    process.stderr.write(`[harness-broker-restart] started again in ${(restartMs / 1000).toFixed(1)} s\n`);
    expect(b.pid).toBeGreaterThan(0);
    expect(b.pid).not.toBe(pidBefore);
    expect(registeredPid(b)).toBe(b.pid);

    kafka = clients();
    admin = kafka.admin();
    await admin.connect();
    try {
      expect(await admin.fetchTopicOffsets(topic)).toEqual(highBefore);
      expect(await admin.fetchOffsets({ groupId, topics: [topic] })).toEqual(committedBefore);
      // The same group resumes after its committed offsets: exactly the unread messages, once each.
      const resumed = kafka.consumer({ groupId });
      await resumed.connect();
      const after = await readSome(resumed, topic, TOTAL - READ_BEFORE);
      await resumed.disconnect();
      expect([...before, ...after].sort()).toEqual([...sent].sort());
    } finally {
      await admin.disconnect();
    }

    // restart() is the two in one, and again on the same port.
    const pidSecond = b.pid;
    await b.restart();
    expect(b.pid).not.toBe(pidSecond);
    expect(registeredPid(b)).toBe(b.pid);
    const again = clients().admin();
    await again.connect();
    expect((await again.fetchTopicOffsets(topic)).reduce((sum, p) => sum + Number(p.high), 0)).toBe(TOTAL);
    await again.disconnect();

    const pidLast = b.pid;
    await b.stop();
    await b.stop(); // idempotent
    expect(await portOpen(b.bootstrap)).toBe(false);
    expect(() => process.kill(pidLast, 0)).toThrow();
    expect(() => readFileSync(join(b.dataDir, 'server.properties'))).toThrow();
    expect(() => registeredPid(b)).toThrow();
    await expect(b.startProcess()).rejects.toMatchObject({ code: 'HR_ERR_HARNESS_KAFKA_START' });
  }, 240_000);
});
