/**
 * `headroom watch` (the CLI, in a child process) on the real broker posts its alert transitions to a
 * webhook: a local HTTP receiver gets the `headroom-alert/1` body of the firing transition, with the
 * transition id as Idempotency-Key and the bearer token from HEADROOM_ALERT_WEBHOOK_TOKEN, which no line
 * of the watcher's output contains. The same transition is logged as a structured line.
 */
import { createServer } from 'node:http';
import type { IncomingHttpHeaders, Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { makeScoredEvents } from '../harness/scored-events.js';
import type { ModelSpec } from '../harness/scored-events.js';
import { until } from '../harness/wait.js';
import { freePort } from '../kafka/broker.js';

const MODEL = 'parcel-damage';
const VERSION = '2026.11.3';
const TOKEN = `hook-${Math.random().toString(36).slice(2)}`;
const spec = (spread: number): ModelSpec => ({ name: MODEL, version: VERSION, kind: 'probability', segments: { line: ['3'] }, spread });

interface Received {
  readonly headers: IncomingHttpHeaders;
  readonly body: Record<string, unknown>;
}

describe('alert transitions to a webhook from the CLI', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-webhook-test', brokers, logLevel: logLevel.WARN });
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const dir = mkdtempSync(join(tmpdir(), 'headroom-webhook-'));
  const received: Received[] = [];
  let server: Server | undefined;
  let cli: RunningCli | undefined;

  afterAll(async () => {
    cli?.child.kill('SIGKILL');
    await producer.disconnect();
    await new Promise<void>((resolve) => (server === undefined ? resolve() : server.close(() => resolve())));
    rmSync(dir, { recursive: true, force: true });
  });

  it('posts the firing transition with its idempotency key and the token, and never logs the token', async () => {
    server = createServer((req, res) => {
      let text = '';
      req.on('data', (chunk: Buffer) => (text += chunk.toString('utf8')));
      req.on('end', () => {
        received.push({ headers: req.headers, body: JSON.parse(text) as Record<string, unknown> });
        res.writeHead(204).end();
      });
    });
    await new Promise<void>((resolve) => server?.listen(0, '127.0.0.1', resolve));
    const hook = `http://127.0.0.1:${(server.address() as AddressInfo).port}/hooks/parcels`;

    const reference = makeScoredEvents({ n: 2_000, seed: 5, fromMs: Date.UTC(2026, 10, 1), spanMs: 3_600_000, idPrefix: 'ref', models: [spec(1)], thresholds: [0.25] });
    writeFileSync(
      join(dir, 'reference.json'),
      formatReference(buildReference(reference.map((e) => (decodeScoredEvent(Buffer.from(e.wire)) as { event: ScoredEvent }).event), { createdAt: '2026-11-02T00:00:00Z', thresholds: [0.25], segmentKeys: ['line'] })),
    );
    const topic = uniqueName('webhook-events');
    const port = await freePort();
    writeFileSync(
      join(dir, 'watch.yaml'),
      JSON.stringify({
        kafka: { brokers, groupId: uniqueName('webhook-group'), topics: [topic] },
        models: [{ name: MODEL, thresholds: [0.25], segmentKeys: ['line'], reference: 'reference.json' }],
        windows: ['5m'],
        checkpoint: { dir: 'state', interval: '1s' },
        http: { host: '127.0.0.1', port },
        alerts: {
          evaluateEvery: '300ms',
          linkBase: `http://127.0.0.1:${port}`,
          webhook: { url: hook, timeout: '2s', retries: 2, backoff: '100ms' },
          rules: [{ name: 'line-share-rise', kind: 'shareRise', model: MODEL, segmentKey: 'line', threshold: 0.25, window: '5m', minCount: 300, holdFor: '0s' }],
        },
      }),
    );
    // Line 3's margins crowd the boundary (spread 0.2 against the reference's 1).
    const admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 2, replicationFactor: 1 }], waitForLeaders: true });
    await admin.disconnect();
    await producer.connect();
    const live = makeScoredEvents({ n: 1_000, seed: 9, fromMs: Date.now() - 120_000, spanMs: 60_000, idPrefix: 'live', models: [spec(0.2)], thresholds: [0.25] });
    await producer.send({ topic, messages: live.map((e, i) => ({ key: `parcel-${i}`, value: e.wire })) });

    cli = spawnHeadroom(['watch', '--config', join(dir, 'watch.yaml')], { HEADROOM_ALERT_WEBHOOK_TOKEN: TOKEN, HEADROOM_KAFKA_BROKERS: undefined, HEADROOM_HTTP_PORT: undefined });
    await until('the webhook to receive the firing transition', () => received.some((r) => r.body.to === 'firing'), 60_000);

    const firing = received.find((r) => r.body.to === 'firing') as Received;
    expect(firing.body).toMatchObject({
      format: 'headroom-alert/1',
      rule: { name: 'line-share-rise', kind: 'shareRise' },
      series: { model: MODEL, version: VERSION, segment: 'line=3' },
      from: 'brewing',
      to: 'firing',
    });
    expect(firing.headers['idempotency-key']).toBe(firing.body.id);
    expect(firing.headers.authorization).toBe(`Bearer ${TOKEN}`);
    expect(firing.headers['content-type']).toMatch(/^application\/json/);
    // Transitions in order: brewing first, then firing (seq 1, 2).
    expect(received.map((r) => `${String(r.body.seq)} ${String(r.body.to)}`)).toEqual(['1 brewing', '2 firing']);

    // The same transition as one structured log line; the token in no line at all.
    const logged = cli.logLines().find((l) => l.event === 'alert_transition' && l.to === 'firing');
    expect(logged).toMatchObject({ rule: 'line-share-rise', segment: 'line=3', alertId: firing.body.id });
    cli.child.kill('SIGTERM');
    expect(await cli.exited, cli.output()).toBe(0);
    expect(cli.output()).not.toContain(TOKEN);
  }, 120_000);
});
