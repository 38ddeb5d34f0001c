/**
 * "Usable" means more than an open port: the broker answers metadata requests, a topic can be created,
 * and a consumer group can join (so the offsets topic exists and its coordinator is loaded). Tests that
 * start right after this never race the broker's own start-up.
 */
import { randomUUID } from 'node:crypto';
import { connect } from 'node:net';
import { Kafka, logLevel } from 'kafkajs';

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

async function probeOnce(bootstrap: string): Promise<void> {
  const kafka = new Kafka({ clientId: 'headroom-harness-probe', brokers: [bootstrap], logLevel: logLevel.NOTHING,
    // Retries inside a probe ride out the seconds in which the offsets topic is still being created
    // (GroupCoordinator answers COORDINATOR_NOT_AVAILABLE); an outer loop covers a broker not yet listening.
    retry: { retries: 10, initialRetryTime: 100, maxRetryTime: 1_000 },
    connectionTimeout: 2_000,
  });
  const admin = kafka.admin();
  await admin.connect();
  try {
    await admin.describeCluster();
    const topic = `headroom-probe-${randomUUID()}`;
    await admin.createTopics({ topics: [{ topic, numPartitions: 1, replicationFactor: 1 }], waitForLeaders: true });
    const consumer = kafka.consumer({ groupId: `headroom-probe-${randomUUID()}` });
    try {
      await consumer.connect();
      await consumer.subscribe({ topics: [topic], fromBeginning: true });
      const joined = new Promise<void>((resolve) => consumer.on(consumer.events.GROUP_JOIN, () => resolve()));
      await consumer.run({ eachMessage: async () => {} });
      let timer: NodeJS.Timeout | undefined;
      const timeout = new Promise<never>((_, reject) => {
        timer = setTimeout(() => reject(new Error('consumer group did not join within 20 s')), 20_000);
      });
      await Promise.race([joined, timeout]).finally(() => clearTimeout(timer));
    } finally {
      await consumer.disconnect();
    }
    await admin.deleteTopics({ topics: [topic] });
  } finally {
    await admin.disconnect();
  }
}

function portAccepts(bootstrap: string): Promise<boolean> {
  const [host, port] = bootstrap.split(':');
  return new Promise((resolve) => {
    const socket = connect({ host, port: Number(port) });
    socket.once('connect', () => (socket.destroy(), resolve(true)));
    socket.once('error', () => (socket.destroy(), resolve(false)));
  });
}

export async function waitUntilUsable(bootstrap: string, timeoutMs: number): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  let lastError: unknown;
  // Plain TCP first: a kafkajs client started against a closed port leaves retry timers behind.
  while (performance.now() < deadline && !(await portAccepts(bootstrap))) await sleep(200);
  while (performance.now() < deadline) {
    try {
      await probeOnce(bootstrap);
      return;
    } catch (error) {
      lastError = error;
      await sleep(500);
    }
  }
  throw new Error(`not usable after ${timeoutMs} ms: ${lastError instanceof Error ? lastError.message : String(lastError)}`);
}

/**
 * The SCRAM listener takes its users from the metadata log, which a broker replays at start: until then
 * a right password can be refused. One admin connection that authenticates and reads the cluster proves it.
 */
export async function waitUntilScramWorks(bootstrap: string, user: { username: string; password: string }, timeoutMs: number): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  let lastError: unknown;
  while (performance.now() < deadline) {
    const kafka = new Kafka({
      clientId: 'headroom-harness-scram-probe',
      brokers: [bootstrap],
      logLevel: logLevel.NOTHING,
      sasl: { mechanism: 'scram-sha-512', username: user.username, password: user.password },
      retry: { retries: 0 },
      connectionTimeout: 2_000,
    });
    const admin = kafka.admin();
    try {
      await admin.connect();
      await admin.describeCluster();
      return;
    } catch (error) {
      lastError = error;
      await sleep(500);
    } finally {
      await admin.disconnect().catch(() => undefined);
    }
  }
  throw new Error(`SCRAM-SHA-512 login on ${bootstrap} did not work after ${timeoutMs} ms: ${lastError instanceof Error ? lastError.message : String(lastError)}`);
}
