/**
 * Events/s through 1, 2 and 3 `headroom watch` processes sharing one group with `checkpoint.store:
 * kafka`: `npm run bench -- scale` (or `npx tsx test/bench/scale.ts`).
 *
 * A 12-partition topic on a real broker (KAFKA_BROKERS, else the local jar broker of test/kafka) is
 * filled once with scored events; then for N = 1, 2, 3 a fresh group and a fresh state topic, N CLI
 * processes started together (as the tests start them: node + tsx on the sources), and every watcher's
 * /metrics polled each second until their counts add up to every event. Reported: the time from the
 * spawn (process start, group joins and rebalances, restores included), and the events/s between the
 * first counted event and the last. The broker, the watchers and this process share the machine's cores,
 * so on a 2-core machine more watchers mostly add rebalances and contention: the figures say how much.
 *
 * Environment: HEADROOM_BENCH_SCALE_EVENTS (default 400000), HEADROOM_BENCH_SCALE_MAX (default 3).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { CompressionTypes, Kafka, logLevel, Partitioners } from 'kafkajs';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { makeScoredEvents } from '../harness/scored-events.js';
import { countedMessages } from '../harness/watch-checks.js';
import { freePort } from '../kafka/broker.js';
import { benchBrokers, envCount } from './bench-env.js';
import { parseExposition } from '../unit/serve/exposition.js';

const PARTITIONS = 12;
const CHUNK = 20_000;

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

async function counted(url: string): Promise<number> {
  try {
    const response = await fetch(`${url}/metrics`);
    if (response.status !== 200) return 0;
    return countedMessages(parseExposition(await response.text()).samples);
  } catch {
    return 0; // not listening yet
  }
}

async function run(brokers: string[], topic: string, members: number, events: number, dir: string): Promise<{ totalMs: number; flowMs: number }> {
  const groupId = uniqueName(`bench-scale-${members}`);
  const stateTopic = uniqueName(`bench-scale-state-${members}`);
  const urls: string[] = [];
  const clis: RunningCli[] = [];
  const t0 = performance.now();
  for (let i = 0; i < members; i += 1) {
    const port = await freePort();
    const configPath = join(dir, `${groupId}-${i}.yaml`);
    writeFileSync(
      configPath,
      JSON.stringify({
        kafka: { brokers, clientId: `headroom-bench-scale-${i}`, groupId, topics: [topic] },
        models: [{ name: '*', segmentKeys: ['line', 'site'] }],
        checkpoint: { store: 'kafka', topic: stateTopic, dir: join(dir, `${groupId}-${i}`) },
        http: { host: '127.0.0.1', port },
      }),
    );
    urls.push(`http://127.0.0.1:${port}`);
    clis.push(spawnHeadroom(['watch', '--config', configPath], { LOG_LEVEL: 'warn' }));
  }
  let firstMs: number | undefined;
  try {
    for (;;) {
      await sleep(1_000);
      const n = (await Promise.all(urls.map(counted))).reduce((a, b) => a + b, 0);
      const now = performance.now();
      if (n > 0 && firstMs === undefined) firstMs = now;
      if (n >= events) {
        if (n !== events) throw new Error(`${members} watcher(s) counted ${n} of ${events} events`);
        return { totalMs: now - t0, flowMs: now - (firstMs ?? t0) };
      }
      for (const cli of clis) if (cli.child.exitCode !== null) throw new Error(`a watcher exited: ${cli.output().slice(-2000)}`);
      if (now - t0 > 600_000) throw new Error(`${members} watcher(s): ${n} of ${events} after 10 min`);
    }
  } finally {
    for (const cli of clis) cli.child.kill('SIGTERM');
    await Promise.all(clis.map((c) => c.exited));
  }
}

async function main(): Promise<void> {
  const events = envCount('HEADROOM_BENCH_SCALE_EVENTS', 400_000);
  const max = envCount('HEADROOM_BENCH_SCALE_MAX', 3);
  const kafkaBrokers = await benchBrokers();
  const brokers = kafkaBrokers.brokers;
  const kafka = new Kafka({ clientId: 'headroom-bench-scale', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ allowAutoTopicCreation: false, createPartitioner: Partitioners.DefaultPartitioner });
  const topic = uniqueName('bench-scale');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-bench-scale-'));
  try {
    await admin.connect();
    await producer.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const now = Date.now();
    for (let i = 0; i < events; i += CHUNK) {
      const batch = makeScoredEvents({ n: Math.min(CHUNK, events - i), seed: 1000 + i, fromMs: now - 3_600_000, spanMs: 3_000_000, idPrefix: `e${i}`, thresholds: [0.1, 0.25] });
      await producer.send({ topic, acks: 1, compression: CompressionTypes.None, messages: batch.map((e, j) => ({ partition: (i + j) % PARTITIONS, value: e.wire })) });
    }
    console.log(`fill: ${events.toLocaleString()} events over ${PARTITIONS} partitions`);
    console.log('watchers | from spawn to last event | events/s from first to last counted event');
    for (let members = 1; members <= max; members += 1) {
      const { totalMs, flowMs } = await run(brokers, topic, members, events, dir);
      console.log(`${members}        | ${(totalMs / 1000).toFixed(1)} s (${Math.round(events / (totalMs / 1000)).toLocaleString()} events/s) | ${Math.round(events / (flowMs / 1000)).toLocaleString()} events/s over ${(flowMs / 1000).toFixed(1)} s`);
    }
  } finally {
    await producer.disconnect().catch(() => undefined);
    await admin.disconnect().catch(() => undefined);
    rmSync(dir, { recursive: true, force: true });
    await kafkaBrokers.stop();
  }
}

await main();
