/**
 * A broker outage in the middle of a stream, on a broker of this file's own (the shared one must never go
 * down under other files): the watcher says not ready while the broker is gone, comes back by itself when
 * it returns, and counts every event exactly once: nothing lost in the outage, nothing counted twice.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import type { Producer } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import type { HeadroomError } from '../../src/errors.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { dedicatedBrokerUnavailable } from '../harness/dedicated-broker.js';
import { uniqueName } from '../harness/names.js';
import { expectedSeries, makeScoredEvents } from '../harness/scored-events.js';
import { sleep, until } from '../harness/wait.js';
import { countedMessages, expectWatcherShows, scrape } from '../harness/watch-checks.js';
import { startLocalBroker } from '../kafka/broker.js';
import type { LocalBroker } from '../kafka/broker.js';

const PARTITIONS = 4;
const THRESHOLDS = [0.1, 0.25];
const EVENTS = 12_000;
const CHUNK = 200;

const log = (line: string): void => void process.stderr.write(`[watch-broker-restart] ${line}\n`);
const unavailable = dedicatedBrokerUnavailable('watch-broker-restart.test.ts');

describe.skipIf(unavailable !== undefined)('headroom watch through a broker restart', () => {
  const dir = mkdtempSync(join(tmpdir(), 'headroom-outage-'));
  let broker: LocalBroker | undefined;
  let watcher: Watcher | undefined;
  let kafka: Kafka | undefined;

  afterAll(async () => {
    await watcher?.close().catch(() => undefined);
    await broker?.stop();
    rmSync(dir, { recursive: true, force: true });
  });

  it('is not ready while the broker is down, resumes unattended, and counts exactly', async () => {
    const b = await startLocalBroker({ log: () => {} });
    broker = b;
    kafka = new Kafka({ clientId: 'headroom-outage-test', brokers: [b.bootstrap], logLevel: logLevel.NOTHING });
    const admin = kafka.admin();
    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    const topic = uniqueName('outage-events');
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    await admin.disconnect();
    await producer.connect();

    const logLines: string[] = [];
    let fatal: HeadroomError | undefined;
    const { config } = parseConfig(
      {
        kafka: { brokers: [b.bootstrap], clientId: 'headroom-outage-test', groupId: uniqueName('outage-group'), topics: [topic] },
        models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
        windows: ['5m'],
        checkpoint: { dir, interval: '500ms' },
        http: { host: '127.0.0.1', port: 0 },
      },
      'watch-broker-restart.test.ts',
      {},
    );
    const w = createWatcher({
      config,
      store: new FileCheckpointStore({ dir }),
      logger: pino({ level: 'info' }, { write: (line: string) => void logLines.push(line) }),
      registry: new Registry(),
      nowMs: () => Date.now(),
      lagIntervalMs: 500,
      onFatal: (error) => (fatal = error),
    });
    watcher = w;
    await w.start();
    const url = w.url() as string;

    const events = makeScoredEvents({ n: EVENTS, seed: 404, fromMs: Date.now() - 60_000, spanMs: 40_000, idPrefix: 'o', thresholds: THRESHOLDS });
    // Events trickle in before and after the outage; none is sent while the broker is down, so the
    // topic holds each exactly once and any difference in the counts is the watcher's.
    let sent = 0;
    const sendUpTo = async (via: Producer, n: number): Promise<void> => {
      for (; sent < n; sent += CHUNK) {
        await via.send({ topic, messages: events.slice(sent, Math.min(n, sent + CHUNK)).map((e, i) => ({ key: `parcel-${(sent + i) % 101}`, value: e.wire })) });
        await sleep(50);
      }
      sent = n;
    };
    await sendUpTo(producer, EVENTS / 2);
    await until('the first half to be counted', async () => countedMessages(await scrape(url)) >= 1_000);
    await producer.disconnect();

    const stoppedAt = performance.now();
    await b.stopProcess();
    await until('the watcher to say it is not ready', () => !w.source.readiness().ready, 120_000);
    log(`not ready ${((performance.now() - stoppedAt) / 1000).toFixed(1)} s after the broker stopped: ${w.source.readiness().reasons.join('; ')}`);
    const readyz = await fetch(`${url}/readyz`);
    expect(readyz.status).toBe(503);
    expect((await fetch(`${url}/healthz`)).status).toBe(200);
    await sleep(3_000);

    const startMs = await b.startProcess();
    log(`broker back after ${((performance.now() - stoppedAt) / 1000).toFixed(1)} s (its start took ${(startMs / 1000).toFixed(1)} s)`);
    const again = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    await again.connect();
    await sendUpTo(again, EVENTS);
    await again.disconnect();

    const backAt = performance.now();
    await until('every event to be counted', async () => countedMessages(await scrape(url).catch(() => [])) >= EVENTS, 180_000);
    await until('ready again with lag 0', () => w.source.readiness().ready && w.source.partitions().length === PARTITIONS && w.source.partitions().every((p) => p.lagMessages === 0), 120_000);
    log(`caught up and ready ${((performance.now() - backAt) / 1000).toFixed(1)} s after the broker came back`);
    expect(fatal).toBeUndefined();
    await expectWatcherShows(url, expectedSeries(events, THRESHOLDS), '5m');
    expect((await fetch(`${url}/readyz`)).status).toBe(200);
  }, 360_000);
});
