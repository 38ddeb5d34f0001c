/**
 * Crash safety of `headroom watch`, run as the real CLI in a child process: while events are being
 * produced it is killed with SIGKILL at random moments (before it has joined, mid-batch, mid-checkpoint),
 * six times; after the last start and catch-up every series' count and every rejection count equals what
 * was produced, exactly: nothing lost, nothing counted twice. Then SIGTERM stops it cleanly with exit 0.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { freePort } from '../kafka/broker.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { expectedSeries, makeMalformed, makeScoredEvents } from '../harness/scored-events.js';
import { sleep, until } from '../harness/wait.js';
import { countedMessages, expectWatcherShows, scrape } from '../harness/watch-checks.js';
import { rng } from '../unit/events/prng.js';

const PARTITIONS = 6;
const THRESHOLDS = [0.1, 0.25];
const EVENTS = 30_000;
const KILLS = 6;

const log = (line: string): void => void process.stderr.write(`[watch-crash] ${line}\n`);

describe('headroom watch killed with SIGKILL while events arrive', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-crash-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dir = mkdtempSync(join(tmpdir(), 'headroom-crash-'));
  const running: RunningCli[] = [];

  afterAll(async () => {
    for (const r of running) if (r.child.exitCode === null && r.child.signalCode === null) r.child.kill('SIGKILL');
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  it(`counts exactly after ${KILLS} SIGKILLs at random moments`, async () => {
    const topic = uniqueName('crash-events');
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();

    const groupId = uniqueName('crash-group');
    const port = await freePort();
    const url = `http://127.0.0.1:${port}`;
    const configPath = join(dir, 'watch.yaml');
    // JSON is YAML; a short checkpoint interval puts many checkpoints (and so many kill points) in the run.
    writeFileSync(
      configPath,
      JSON.stringify({
        // The broker's shortest session: a killed member's partitions are handed on after 6 s, not 30.
        kafka: { brokers, clientId: 'headroom-crash-test', groupId, topics: [topic], sessionTimeout: '6s', heartbeatInterval: '2s' },
        models: [{ name: '*', thresholds: THRESHOLDS, segmentKeys: ['line', 'site'] }],
        windows: ['5m'],
        checkpoint: { dir: join(dir, 'state'), interval: '300ms' },
        http: { host: '127.0.0.1', port },
      }),
    );

    const events = makeScoredEvents({ n: EVENTS, seed: 99, fromMs: Date.now() - 60_000, spanMs: 50_000, idPrefix: 'c', thresholds: THRESHOLDS });
    const bad = makeMalformed(300, 5);
    const messages = events.map((e, i) => ({ key: `parcel-${i % 211}`, value: e.wire as string | Buffer | null }));
    bad.forEach((b, i) => messages.splice(Math.floor((i * messages.length) / bad.length), 0, { key: `bad-${i % 7}`, value: b.value }));

    // The producer trickles the messages in until the kills are over, so every kill lands while events arrive.
    let produced = 0;
    let killing = true;
    const producing = (async () => {
      for (let i = 0; i < messages.length; i += 250) {
        await producer.send({ topic, messages: messages.slice(i, i + 250) });
        produced = Math.min(messages.length, i + 250);
        if (killing) await sleep(300);
      }
    })();

    const r = rng(31337);
    let midStream = 0;
    for (let kill = 1; kill <= KILLS; kill += 1) {
      const cli = spawnHeadroom(['watch', '--config', configPath]);
      running.push(cli);
      // The first kill lands during start-up; the others once it serves and counts, at a random moment.
      if (kill > 1) await until('the restarted watcher to serve', async () => countedMessages(await scrape(url).catch(() => [])) > 0, 60_000);
      const wait = kill === 1 ? 300 + r.int(1_200) : 200 + r.int(2_000);
      await sleep(wait);
      const counted = await scrape(url).then(countedMessages, () => Number.NaN);
      const producedAtKill = produced;
      cli.child.kill('SIGKILL');
      expect(await cli.exited, cli.output()).toBe('SIGKILL');
      if (counted > 0 && producedAtKill < messages.length) midStream += 1;
      log(`kill ${kill}, ${wait} ms after ${kill === 1 ? 'spawning' : 'serving'}: ${producedAtKill} produced, ${Number.isNaN(counted) ? 'not yet serving' : `${counted} counted`}`);
    }
    killing = false;
    // What the test claims: most kills hit a watcher that was counting while the producer was still sending.
    expect(midStream).toBeGreaterThanOrEqual(KILLS - 1);
    await producing;
    expect(produced).toBe(messages.length);

    const last = spawnHeadroom(['watch', '--config', configPath]);
    running.push(last);
    await until('the last watcher to count every message', async () => countedMessages(await scrape(url).catch(() => [])) >= messages.length, 180_000);
    // A message counted twice would show as a total past the produced count once everything is read.
    await until('lag 0 on every partition', async () => {
      const samples = await scrape(url);
      const lags = samples.filter((s) => s.name === 'headroom_consumer_lag_messages');
      return lags.length === PARTITIONS && lags.every((s) => s.value === 0);
    });
    expect(countedMessages(await scrape(url))).toBe(messages.length);
    await expectWatcherShows(url, expectedSeries(events, THRESHOLDS), '5m', bad);

    // SIGTERM: stop fetching, checkpoint, commit, leave the group, exit 0.
    last.child.kill('SIGTERM');
    expect(await last.exited, last.output()).toBe(0);
    expect(last.output()).toContain('watcher closed');
    const offsets = await admin.fetchOffsets({ groupId, topics: [topic] });
    expect(offsets[0]?.partitions.reduce((sum, p) => sum + Number(p.offset), 0)).toBe(messages.length);
  }, 360_000);
});
