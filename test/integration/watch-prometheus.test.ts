/**
 * A real Prometheus scrapes a running `headroom watch`: the low-margin ratio it stores for each line is
 * the share computed here from the very events produced, and the event counter matches the count sent.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { uniqueName } from '../harness/names.js';
import { startPrometheus, type RunningPrometheus } from '../harness/prometheus.js';
import { rng } from '../unit/events/prng.js';

const N = 1_200;
const THETA = 0.25;
const LINES = ['1', '2', '3'];

describe.skipIf(!inject('prometheusAvailable'))('a real Prometheus scraping headroom watch', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-watch-prom-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const topic = uniqueName('watch-prom-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-watch-prom-'));
  let watcher: Watcher | undefined;
  let prometheus: RunningPrometheus | undefined;

  afterAll(async () => {
    await prometheus?.stop();
    await watcher?.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  it('stores headroom_low_margin_ratio per line equal to the share of the produced events', async () => {
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 2, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();

    // Line 3's margins are squeezed towards the boundary, so its share differs clearly from the others.
    const next = rng(42).next;
    const base = Date.now() - 60_000;
    const margins = new Map<string, number[]>(LINES.map((l) => [l, []]));
    const messages = Array.from({ length: N }, (_, i) => {
      const line = LINES[i % 3] as string;
      const spread = line === '3' ? 0.4 : 1;
      const p = Math.round((0.5 + (next() - 0.5) * spread) * 1000) / 1000;
      margins.get(line)?.push(Math.abs(2 * p - 1)); // DESIGN "Margins": probability p → |2p − 1|
      const event = { id: `q-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(base + i * 20).toISOString(), score: { kind: 'probability', p }, segment: { line } };
      return { key: `k${i % 13}`, value: JSON.stringify(event) };
    });
    await producer.send({ topic, messages });

    const { config } = parseConfig(
      {
        kafka: { brokers, groupId: uniqueName('watch-prom-group'), topics: [topic] },
        models: [{ name: 'parcel-damage', thresholds: [THETA], segmentKeys: ['line'] }],
        checkpoint: { dir, interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
      },
      'watch-prometheus.test.ts',
      {},
    );
    watcher = createWatcher({ config, store: new FileCheckpointStore({ dir }), logger: pino({ level: 'warn' }), registry: new Registry(), nowMs: () => Date.now() });
    await watcher.start();
    const address = watcher.url();
    if (address === undefined) throw new Error("the watcher has no HTTP address after start()");
    const url = new URL(address);
    prometheus = await startPrometheus([{ job: 'headroom', address: url.host }]);

    const total = await prometheus.waitFor(
      'headroom_events_total{job="headroom",model="parcel-damage",segment="all"}',
      (r) => r.length === 1 && Number(r[0]?.value[1]) === N,
      60_000,
    );
    expect(Number(total[0]?.value[1])).toBe(N);

    const ratios = await prometheus.waitFor(
      `headroom_low_margin_ratio{job="headroom",window="5m",threshold="${THETA}",segment=~"line=.*"}`,
      (r) => r.length === LINES.length,
      30_000,
    );
    for (const line of LINES) {
      const own = margins.get(line) ?? [];
      const expected = own.filter((m) => m < THETA).length / own.length;
      const sample = ratios.find((r) => r.metric.segment === `line=${line}`);
      expect(sample, `line=${line}`).toBeDefined();
      expect(Number(sample?.value[1]), `line=${line}`).toBeCloseTo(expected, 12);
    }
    // The squeezed line really does stand out, so the check above compares different figures.
    const share = (line: string): number => Number(ratios.find((r) => r.metric.segment === `line=${line}`)?.value[1]);
    expect(share('3')).toBeGreaterThan(share('1') + 0.2);
  });
});
