/**
 * Delayed labels on the real broker, through the real CLI: a scored topic and its outcome topic (3
 * partitions each, an event's outcome in the same partition as its prediction). Outcomes arrive before
 * their predictions, just after, long after (beyond the TTL in event time), never, twice, for ids never
 * predicted, malformed, and with a label that does not fit; the watcher is killed with SIGKILL while the
 * outcomes arrive and restarted. Afterwards every join count, every rejection and the observed error rate
 * are exactly what the test computed from what it produced.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, Partitioners, logLevel } from 'kafkajs';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { freePort } from '../kafka/broker.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { sleep, until } from '../harness/wait.js';
import { scrape } from '../harness/watch-checks.js';
import { value } from '../unit/serve/exposition.js';
import type { Sample } from '../unit/serve/exposition.js';
import { rng } from '../unit/events/prng.js';

const P = 3;
const N = 600;
const SECOND = 1_000;
const MIN = 60 * SECOND;
const TTL = 10 * MIN;

type Message = { partition: number; value: string };

const log = (line: string): void => void process.stderr.write(`[watch-labels] ${line}\n`);

function sum(samples: readonly Sample[], name: string, labels: Record<string, string> = {}): number {
  return samples.filter((s) => s.name === name && Object.entries(labels).every(([k, v]) => s.labels[k] === v)).reduce((a, s) => a + s.value, 0);
}

describe('headroom watch joins delayed labels from an outcome topic', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-labels-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dir = mkdtempSync(join(tmpdir(), 'headroom-labels-'));
  const running: RunningCli[] = [];

  afterAll(async () => {
    for (const r of running) if (r.child.exitCode === null && r.child.signalCode === null) r.child.kill('SIGKILL');
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  it('counts matches, expiries, duplicates and rejections exactly across a SIGKILL', async () => {
    const scored = uniqueName('labels-scored');
    const outcomes = uniqueName('labels-outcomes');
    await admin.connect();
    await admin.createTopics({
      topics: [scored, outcomes].map((topic) => ({ topic, numPartitions: P, replicationFactor: 1 })),
      waitForLeaders: true,
    });
    await producer.connect();
    const port = await freePort();
    const url = `http://127.0.0.1:${port}`;
    const configPath = join(dir, 'watch.yaml');
    const groupId = uniqueName('labels-group');
    writeFileSync(
      configPath,
      JSON.stringify({
        kafka: { brokers, groupId, topics: [scored], outcomeTopics: [outcomes], sessionTimeout: '6s', heartbeatInterval: '2s' },
        models: [{ name: 'parcel-damage', thresholds: [0.1] }],
        windows: ['24h'],
        labels: { ttl: '10m', maxPending: 10_000 },
        checkpoint: { dir: join(dir, 'state'), interval: '300ms' },
        http: { host: '127.0.0.1', port },
      }),
    );

    // Event times two hours back: inside the history, never "from the future".
    const t0 = Math.floor((Date.now() - 2 * 3_600_000) / MIN) * MIN;
    const r = rng(4242);
    const kinds = ['before', 'after', 'long-after', 'never', 'twice', 'inline'] as const;
    const predictions: Message[] = [];
    const phaseA: { time: number; m: Message }[] = [];
    const phaseC: { time: number; m: Message }[] = [];
    let labelled = 0;
    let wrong = 0;
    const count = { before: 0, after: 0, 'long-after': 0, never: 0, twice: 0, inline: 0 };
    const outcome = (id: string, time: number, label: unknown, partition: number) => ({ partition, value: JSON.stringify({ id, time, label }) });
    for (let i = 0; i < N; i += 1) {
      const id = `p-${i}`;
      const partition = i % P;
      const time = t0 + i * SECOND;
      const kind = kinds[i % kinds.length] as (typeof kinds)[number];
      count[kind] += 1;
      const p = Math.round(r.next() * 1000) / 1000;
      const label = r.next() < p ? 1 : 0;
      const isWrong = (label === 1 ? 1 : -1) * (2 * p - 1) <= 0;
      const event: Record<string, unknown> = { id, model: 'parcel-damage', version: 'v1', time, score: { kind: 'probability', p } };
      if (kind === 'inline') event.label = label;
      predictions.push({ partition, value: JSON.stringify(event) });
      if (kind === 'before') phaseA.push({ time: time + SECOND, m: outcome(id, time + SECOND, label, partition) });
      if (kind === 'after') phaseC.push({ time: time + 30 * SECOND, m: outcome(id, time + 30 * SECOND, label, partition) });
      if (kind === 'twice') {
        phaseC.push({ time: time + 10 * SECOND, m: outcome(id, time + 10 * SECOND, label, partition) });
        phaseC.push({ time: time + 11 * SECOND, m: outcome(id, time + 11 * SECOND, label, partition) });
      }
      if (kind === 'long-after') phaseC.push({ time: time + 2 * TTL, m: outcome(id, time + 2 * TTL, label, partition) });
      if (kind === 'before' || kind === 'after' || kind === 'twice' || kind === 'inline') {
        labelled += 1;
        if (isWrong) wrong += 1;
      }
    }
    // Outcomes for ids never predicted, one malformed message per partition, one label that fits no probability score.
    const ghosts = 15;
    for (let g = 0; g < ghosts; g += 1) phaseA.push({ time: t0 + g * 7 * SECOND, m: outcome(`ghost-${g}`, t0 + g * 7 * SECOND, 1, g % P) });
    const neverId = kinds.indexOf('never');
    phaseC.push({ time: t0 + neverId * SECOND + 5 * SECOND, m: outcome(`p-${neverId}`, t0 + neverId * SECOND + 5 * SECOND, 'maybe', neverId % P) });
    const byTime = (a: { time: number }, b: { time: number }) => a.time - b.time;
    phaseA.sort(byTime);
    phaseC.sort(byTime);
    const malformed: Message[] = Array.from({ length: P }, (_, partition) => ({ partition, value: '{"id": "broken"' }));
    // One closing pair per partition, an hour on: both sides' clocks pass every TTL, so nothing is left waiting.
    const closing = (topicSide: 'p' | 'o', partition: number): Message => {
      const time = t0 + 60 * MIN;
      return topicSide === 'p'
        ? { partition, value: JSON.stringify({ id: `close-${partition}`, model: 'parcel-damage', version: 'v1', time, score: { kind: 'probability', p: 0.9 } }) }
        : outcome(`close-${partition}`, time, 1, partition);
    };
    labelled += P; // the closing predictions, labelled right (p = 0.9, label 1)

    const send = (topic: string, messages: readonly Message[]) => producer.send({ topic, messages: messages.map((m) => ({ partition: m.partition, value: m.value })) });
    let cli = spawnHeadroom(['watch', '--config', configPath]);
    running.push(cli);

    // Phase A: outcomes before any prediction; they wait.
    await send(outcomes, phaseA.map((x) => x.m));
    await until('the early outcomes to wait', async () => sum(await scrape(url).catch(() => []), 'headroom_labels_waiting', { side: 'outcome' }) === phaseA.length, 90_000);
    // Phase B: every prediction.
    await send(scored, predictions);
    await until('every prediction to be counted', async () => sum(await scrape(url).catch(() => []), 'headroom_events_total', { segment: 'all' }) === N, 60_000);
    // Phase C: the later outcomes in slices, with a SIGKILL after the first slice.
    const slices = 6;
    const per = Math.ceil(phaseC.length / slices);
    for (let s = 0; s < slices; s += 1) {
      await send(outcomes, phaseC.slice(s * per, (s + 1) * per).map((x) => x.m));
      if (s === 1) await send(outcomes, malformed);
      if (s === 2) {
        await sleep(200 + r.int(600));
        const before = await scrape(url).then((x) => sum(x, 'headroom_outcomes_total'), () => Number.NaN);
        cli.child.kill('SIGKILL');
        expect(await cli.exited, cli.output()).toBe('SIGKILL');
        log(`killed with ${before} outcomes counted of ${phaseA.length + phaseC.length}`);
        cli = spawnHeadroom(['watch', '--config', configPath]);
        running.push(cli);
      }
      await sleep(150);
    }
    await send(scored, Array.from({ length: P }, (_, p) => closing('p', p)));
    await send(outcomes, Array.from({ length: P }, (_, p) => closing('o', p)));

    const outcomeMessages = phaseA.length + phaseC.length + malformed.length + P;
    const done = (s: readonly Sample[]): boolean =>
      sum(s, 'headroom_outcomes_total') + sum(s, 'headroom_events_rejected_total') === outcomeMessages && sum(s, 'headroom_events_total', { segment: 'all' }) === N + P;
    await until('every message to be counted after the restart', async () => done(await scrape(url).catch(() => [])), 120_000);
    const samples = await scrape(url);
    const joined = (result: string): number => value(samples, 'headroom_label_join_total', { result });
    expect(joined('matched')).toBe(count.before + count.after + count.twice + P);
    expect(joined('outcome_duplicate')).toBe(count.twice);
    expect(joined('outcome_unmatched')).toBe(count['long-after'] + ghosts);
    expect(joined('prediction_expired')).toBe(count['long-after'] + count.never);
    expect(joined('prediction_evicted')).toBe(0);
    expect(joined('prediction_duplicate')).toBe(0);
    expect(joined('outcome_evicted')).toBe(0);
    expect(joined('outcome_bad_label')).toBe(0);
    expect(value(samples, 'headroom_labels_waiting', { side: 'prediction' })).toBe(0);
    expect(value(samples, 'headroom_labels_waiting', { side: 'outcome' })).toBe(0);
    expect(value(samples, 'headroom_events_rejected_total', { reason: 'not_json' })).toBe(P);
    expect(value(samples, 'headroom_events_rejected_total', { reason: 'bad_label' })).toBe(1);
    const all = { model: 'parcel-damage', version: 'v1', segment: 'all' };
    expect(value(samples, 'headroom_labelled_total', all)).toBe(labelled);
    expect(value(samples, 'headroom_window_labelled_events', { ...all, window: '24h' })).toBe(labelled);
    expect(value(samples, 'headroom_error_ratio', { ...all, window: '24h' })).toBeCloseTo(wrong / labelled, 12);

    const api = (await (await fetch(`${url}/api/series/parcel-damage/v1/all`)).json()) as { labelled: number; views: { labels: { n: number; errorRate: { successes: number } } }[] };
    expect(api.labelled).toBe(labelled);
    expect(api.views[0]?.labels.errorRate.successes).toBe(wrong);

    cli.child.kill('SIGTERM');
    expect(await cli.exited, cli.output()).toBe(0);
    // Both topics' offsets were committed after the last checkpoint.
    const committed = await admin.fetchOffsets({ groupId, topics: [scored, outcomes] });
    const total = (topic: string): number => committed.find((c) => c.topic === topic)?.partitions.reduce((a, p) => a + Number(p.offset), 0) ?? -1;
    expect(total(scored)).toBe(N + P);
    expect(total(outcomes)).toBe(outcomeMessages);
  }, 300_000);
});
