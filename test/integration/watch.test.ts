/**
 * `headroom watch` on the real broker: every produced event is counted exactly once per series, the
 * low-margin ratios equal the ones computed here from the same events, rejections are counted by
 * reason, and a second watcher on the same checkpoints resumes where the first stopped: with Kafka's
 * committed offsets moved past unread messages behind its back, only the restore-and-seek finds them.
 * Every malformed message ends up once on the dead-letter topic, byte for byte.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { uniqueName } from '../harness/names.js';
import { sleep, until } from '../harness/wait.js';
import { parseExposition, value } from '../unit/serve/exposition.js';
import { rng } from '../unit/events/prng.js';

const PARTITIONS = 3;
const FIRST = 3_000;
const SECOND = 500;
const THRESHOLDS = [0.1, 0.25];
const MODELS = ['parcel-damage', 'doc-router'] as const;
const LINES = ['1', '2', '3'];

interface Produced {
  readonly model: string;
  readonly version: string;
  readonly line: string;
  /** The confidence margin, computed here from the score's definition (DESIGN "Margins"), not by src/margin. */
  readonly margin: number;
  readonly wire: string;
}

/** A deterministic generator (mulberry32, shared with the unit tests), so a failure can be replayed. */
function random(seed: number): () => number {
  return rng(seed).next;
}

function makeEvents(n: number, seed: number, fromMs: number, spanMs: number, idPrefix: string): Produced[] {
  const next = random(seed);
  const out: Produced[] = [];
  while (out.length < n) {
    const i = out.length;
    const model = MODELS[i % 2] as string;
    const version = model === 'parcel-damage' ? '2026.11.3' : 'v7';
    const line = LINES[Math.floor(next() * LINES.length)] as string;
    const timeMs = Math.floor(fromMs + next() * spanMs);
    let score: Record<string, unknown>;
    let margin: number;
    if (model === 'parcel-damage') {
      const p = Math.round(next() * 1000) / 1000;
      score = { kind: 'probability', p };
      margin = Math.abs(2 * p - 1);
    } else {
      const z = Math.round((next() * 8 - 4) * 100) / 100;
      score = { kind: 'logit', z };
      margin = Math.abs(Math.tanh(z / 2));
    }
    // A margin a rounding step away from a threshold could fall on either side: leave such scores out.
    if (THRESHOLDS.some((t) => Math.abs(margin - t) < 1e-9)) continue;
    const wire = JSON.stringify({ id: `${idPrefix}-${i}`, model, version, time: new Date(timeMs).toISOString(), score, segment: { line } });
    out.push({ model, version, line, margin, wire });
  }
  return out;
}

/** Malformed messages, each with the reason src/events/reasons.ts documents for it. */
function makeMalformed(n: number): { value: string | null; reason: string }[] {
  const kinds: ((i: number) => { value: string | null; reason: string })[] = [
    (i) => ({ value: `{"id":"bad-${i}", "model": `, reason: 'not_json' }),
    (i) => ({ value: JSON.stringify({ id: `bad-${i}`, model: 'parcel-damage', version: '1', score: { kind: 'probability', p: 1.5 } }), reason: 'probability_out_of_range' }),
    (i) => ({ value: JSON.stringify({ id: `bad-${i}`, version: '1', score: { kind: 'probability', p: 0.5 } }), reason: 'missing_field' }),
    (i) => ({ value: JSON.stringify({ id: `bad-${i}`, model: 'parcel-damage', version: '1', score: { kind: 'probability', p: '0.5' } }), reason: 'wrong_type' }),
    () => ({ value: '[1, 2, 3]', reason: 'not_object' }),
  ];
  return Array.from({ length: n }, (_, i) => (kinds[i % kinds.length] as (i: number) => { value: string | null; reason: string })(i));
}

function expectedCounts(events: readonly Produced[]): Map<string, number> {
  const counts = new Map<string, number>();
  const bump = (k: string): void => void counts.set(k, (counts.get(k) ?? 0) + 1);
  for (const e of events) {
    bump(JSON.stringify([e.model, e.version, 'all']));
    bump(JSON.stringify([e.model, e.version, `line=${e.line}`]));
  }
  return counts;
}

function expectedRatio(events: readonly Produced[], model: string, segment: string, threshold: number): number {
  const inSeries = events.filter((e) => e.model === model && (segment === 'all' || segment === `line=${e.line}`));
  return inSeries.filter((e) => e.margin < threshold).length / inSeries.length;
}

describe('headroom watch on the real broker', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-watch-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const topic = uniqueName('watch-events');
  const groupId = uniqueName('watch-group');
  const deadLetterTopic = uniqueName('watch-rejected');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-watch-'));
  const logLines: string[] = [];
  const watchers: Watcher[] = [];

  // parcel-damage has a reference file (loaded at start); doc-router has none and must still be watched.
  const referenceEvents = makeEvents(800, 9, Date.UTC(2026, 10, 1), 3_600_000, 'ref').filter((e) => e.model === 'parcel-damage');
  const referenceDir = mkdtempSync(join(tmpdir(), 'headroom-watch-ref-'));
  const referencePath = join(referenceDir, 'parcel-damage.json');
  const decodedReference = referenceEvents.map((e) => {
    const decoded = decodeScoredEvent(Buffer.from(e.wire));
    if (!decoded.ok) throw new Error(`reference event does not decode: ${decoded.detail}`);
    return decoded.event;
  });
  writeFileSync(referencePath, formatReference(buildReference(decodedReference as ScoredEvent[], { createdAt: '2026-11-02T00:00:00Z', thresholds: THRESHOLDS })));

  const { config } = parseConfig(
    {
      kafka: { brokers, clientId: 'headroom-watch-test', groupId, topics: [topic], deadLetterTopic },
      models: MODELS.map((name) => ({ name, thresholds: THRESHOLDS, segmentKeys: ['line'], ...(name === 'parcel-damage' ? { reference: referencePath } : {}) })),
      windows: ['5m', '1h'],
      lateness: '2m',
      checkpoint: { dir, interval: '1s' },
      http: { host: '127.0.0.1', port: 0 },
    },
    'watch.test.ts',
    {},
  );

  const newWatcher = (): Watcher => {
    const logger = pino({ level: 'info' }, { write: (line: string) => void logLines.push(line) });
    const watcher = createWatcher({
      config,
      store: new FileCheckpointStore({ dir }),
      logger,
      registry: new Registry(),
      nowMs: () => Date.now(),
      lagIntervalMs: 500,
    });
    watchers.push(watcher);
    return watcher;
  };

  const send = async (values: readonly (string | null)[]): Promise<void> => {
    for (let i = 0; i < values.length; i += 500) {
      // Keys spread the messages over the partitions (murmur2 of the key).
      await producer.send({ topic, messages: values.slice(i, i + 500).map((v, j) => ({ key: `k${(i + j) % 97}`, value: v })) });
    }
  };

  const consumed = (watcher: Watcher): number => {
    let n = 0;
    for (const s of watcher.source.series()) if (s.segment === 'all') n += s.events;
    for (const r of watcher.source.rejections().values()) n += r;
    return n;
  };

  const metrics = async (watcher: Watcher) => {
    const response = await fetch(`${watcher.url()}/metrics`);
    expect(response.status).toBe(200);
    return parseExposition(await response.text()).samples;
  };

  afterAll(async () => {
    for (const w of watchers) await w.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
    rmSync(referenceDir, { recursive: true, force: true });
  });

  it('counts every event once, across a restart from its checkpoints', async () => {
    await admin.connect();
    await admin.createTopics({
      topics: [
        { topic, numPartitions: PARTITIONS, replicationFactor: 1 },
        { topic: deadLetterTopic, numPartitions: 1, replicationFactor: 1 },
      ],
      waitForLeaders: true,
    });
    await producer.connect();

    // Every event time within 90 s, ending 10 s ago: inside the 2m lateness, and the 5m view holds them all.
    const base = Date.now() - 100_000;
    const first = makeEvents(FIRST, 1, base, 90_000, 'a');
    const bad = makeMalformed(100);
    const mixed: (string | null)[] = first.map((e) => e.wire);
    bad.forEach((b, i) => mixed.splice(Math.floor((i * mixed.length) / bad.length), 0, b.value));
    await send(mixed);

    const one = newWatcher();
    const started = performance.now();
    await one.start();
    expect(one.url()).toMatch(/^http:\/\/127\.0\.0\.1:\d+$/);
    expect(logLines.some((l) => l.includes(`listening on ${one.url()}`))).toBe(true);
    await until('the first watcher to consume everything', () => consumed(one) >= FIRST + bad.length);
    const firstMs = performance.now() - started;
    process.stderr.write(`[watch.test] first watcher: ${FIRST} events + ${bad.length} malformed consumed in ${(firstMs / 1000).toFixed(1)} s\n`);
    expect(consumed(one)).toBe(FIRST + bad.length);
    expect(one.source.readiness()).toEqual({ ready: true, reasons: [] });

    const check = async (watcher: Watcher, events: readonly Produced[], rejected: readonly { reason: string }[]): Promise<void> => {
      const samples = await metrics(watcher);
      const counts = expectedCounts(events);
      for (const [key, n] of counts) {
        const [model, version, segment] = JSON.parse(key) as [string, string, string];
        expect(value(samples, 'headroom_events_total', { model, version, segment }), key).toBe(n);
        for (const t of THRESHOLDS) {
          const got = value(samples, 'headroom_low_margin_ratio', { model, version, segment, window: '5m', threshold: String(t) });
          expect(got, `${key} θ=${t}`).toBeCloseTo(expectedRatio(events, model, segment, t), 12);
        }
      }
      // No series beyond the ones produced (2 models × (all + 3 lines)).
      expect(samples.filter((s) => s.name === 'headroom_events_total')).toHaveLength(counts.size);
      const reasons = new Map<string, number>();
      for (const r of rejected) reasons.set(r.reason, (reasons.get(r.reason) ?? 0) + 1);
      for (const [reason, n] of reasons) expect(value(samples, 'headroom_events_rejected_total', { reason }), reason).toBe(n);
      expect(samples.filter((s) => s.name === 'headroom_events_rejected_total')).toHaveLength(reasons.size);
      // The reference: loaded for parcel-damage with the shares computed here from its events; doc-router has none.
      expect(value(samples, 'headroom_reference_loaded', { model: 'parcel-damage', version: '2026.11.3' })).toBe(1);
      expect(value(samples, 'headroom_reference_loaded', { model: 'doc-router', version: 'v7' })).toBe(0);
      for (const t of THRESHOLDS) {
        const share = referenceEvents.filter((e) => e.margin < t).length / referenceEvents.length;
        expect(value(samples, 'headroom_reference_low_margin_ratio', { model: 'parcel-damage', version: '2026.11.3', segment: 'all', threshold: String(t) })).toBeCloseTo(share, 12);
      }
      expect(samples.filter((s) => s.name === 'headroom_drift_ks' && s.labels.model === 'parcel-damage' && s.labels.segment === 'all' && s.labels.window === '5m')).toHaveLength(1);
      expect(samples.filter((s) => s.name.startsWith('headroom_drift_') && s.labels.model === 'doc-router')).toHaveLength(0);
    };
    await check(one, first, bad);

    // The lag comes from the broker's high watermarks: 0 on every partition once all is consumed.
    await until('lag 0 on every partition', () => {
      const p = one.source.partitions();
      return p.length === PARTITIONS && p.every((x) => x.lagMessages === 0);
    });

    await one.close();
    await one.close(); // idempotent

    // While no watcher runs, 400 of the 500 new events and 20 malformed messages arrive; then Kafka's
    // committed offsets are moved to the end of each partition behind the watcher's back. A consumer
    // resuming from them would never see those messages: only the seek to the checkpointed offsets
    // finds them (and the offset guard keeps anything before the checkpoint from counting twice).
    const second = makeEvents(SECOND, 2, base, 90_000, 'b');
    const moreBad = makeMalformed(20);
    await send([...second.slice(0, 400).map((e) => e.wire), ...moreBad.map((b) => b.value)]);
    const ends = await admin.fetchTopicOffsets(topic);
    await admin.setOffsets({ groupId, topic, partitions: ends.map((p) => ({ partition: p.partition, offset: p.high })) });

    const two = newWatcher();
    await two.start();
    await send(second.slice(400).map((e) => e.wire));
    const total = FIRST + SECOND + bad.length + moreBad.length;
    const secondStarted = performance.now();
    await until('the second watcher to catch up', () => consumed(two) >= total);
    process.stderr.write(`[watch.test] second watcher: caught up to ${total} messages ${((performance.now() - secondStarted) / 1000).toFixed(1)} s after producing\n`);
    // Give a duplicate the time to show up before concluding there is none.
    await until('the lag to reach 0', () => two.source.partitions().every((x) => x.lagMessages === 0) && two.source.partitions().length === PARTITIONS);
    expect(consumed(two)).toBe(total);
    await check(two, [...first, ...second], [...bad, ...moreBad]);
    await two.close();

    // The committed offsets are the checkpointed next offsets: all of the topic.
    const offsets = await admin.fetchOffsets({ groupId, topics: [topic] });
    expect(offsets[0]?.partitions.reduce((sum, p) => sum + Number(p.offset), 0)).toBe(total);

    // The dead-letter topic holds each malformed message once, byte for byte, with its reason and origin.
    const copies: { value: string; reason: string; sourceTopic: string; where: string }[] = [];
    const reader = kafka.consumer({ groupId: uniqueName('watch-dlq-reader') });
    await reader.connect();
    await reader.subscribe({ topics: [deadLetterTopic], fromBeginning: true });
    const header = (h: unknown): string => (h === undefined ? '' : String(h));
    await reader.run({
      eachMessage: async ({ message }) => {
        const h = message.headers ?? {};
        copies.push({
          value: message.value?.toString('utf8') ?? '',
          reason: header(h['headroom-reason']),
          sourceTopic: header(h['headroom-source-topic']),
          where: `${header(h['headroom-source-partition'])}@${header(h['headroom-source-offset'])}`,
        });
      },
    });
    try {
      await until('the dead-letter copies', () => copies.length >= bad.length + moreBad.length, 60_000);
      await sleep(1_000); // a copy too many would arrive in this time
    } finally {
      await reader.disconnect();
    }
    const allBad = [...bad, ...moreBad];
    expect(copies.map((c) => `${c.reason}|${c.value}`).sort()).toEqual(allBad.map((b) => `${b.reason}|${b.value ?? ''}`).sort());
    expect(copies.every((c) => c.sourceTopic === topic)).toBe(true);
    expect(new Set(copies.map((c) => c.where)).size).toBe(allBad.length);
  }, 240_000);
});
