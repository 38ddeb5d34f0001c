/**
 * `headroom watch` end to end against a bare kafkajs consumer over the same topic, in one run:
 * `npx tsx test/bench/watch-e2e.ts` (or `npm run bench -- watch-e2e`).
 *
 * A 6-partition topic on a real broker (KAFKA_BROKERS, else the local jar broker of test/kafka) is
 * filled with scored events, then read from the earliest offset to the high watermark of every
 * partition, alternately (w b b w w b ...), by:
 * - watcher: createWatcher as `headroom watch` runs it: FileCheckpointStore in a temp dir, the default
 *   checkpoint interval (5 s), its own prom-client Registry, HTTP on port 0, a pino logger at info;
 * - bare:    a kafkajs consumer group with eachBatch that JSON.parses each value and nothing else
 *            (autoCommit off, so it makes no request the watcher's loop would not make either).
 * Both use kafkajs' default consumer fetch settings (the watcher's config has none of its own) and a
 * fresh group. Each run is its own Node process, so neither inherits the other's heap or JIT state.
 * The clock runs from start()/connect() to the first poll (every 10 ms, the same for both) that finds
 * every partition's next offset at its high watermark; group join is inside, so "first" is also shown.
 *
 * Events: three models (parcel-damage: probability and votes; doc-router: three classes; crate-sorter:
 * logit and margin), segment `line` in 1–4, about a quarter labelled, event times rising over the hour
 * before the fill with up to 20 s of jitter, and about 1 in 500 older than the lateness (counted late).
 *
 * Environment: HEADROOM_BENCH_E2E_EVENTS (default 1000000), HEADROOM_BENCH_E2E_PAIRS (watcher/bare
 * pairs, default 3), HEADROOM_BENCH_E2E_CPU_PROF=DIR (each run writes a V8 .cpuprofile there).
 */
import { spawn } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { CompressionTypes, Kafka, logLevel, Partitioners } from 'kafkajs';
import type { Message } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { parseConfig } from '../../src/config/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import { uniqueName } from '../harness/names.js';
import { benchBrokers, envCount } from './bench-env.js';
import { rng } from '../unit/events/prng.js';

const PARTITIONS = 6;
const POLL_MS = 10;
/** Messages per partition per produce request: about 0.7 MB, under the broker's 1 MB default batch limit. */
const PER_PARTITION = 3_000;
const IN_FLIGHT = 4;

type Kind = 'watcher' | 'bare';

interface RunResult {
  readonly kind: Kind;
  /** From start()/connect() to the last offset. */
  readonly ms: number;
  /** From start()/connect() until the first message was through (group join, first fetch). */
  readonly firstMs: number;
  /** CPU time (user + system) of the process over `ms`: less swayed than wall time by other load. */
  readonly cpuMs: number;
  readonly messages: number;
  /** What the run saw: events counted (watcher) or values parsed (bare); must equal messages. */
  readonly seen: number;
  readonly note: string;
}

// ---------------------------------------------------------------------------------------------- fill

function eventMaker(count: number, endMs: number): (i: number) => string {
  const r = rng(20261202);
  const spanMs = 3_600_000;
  const lines = ['1', '2', '3', '4'];
  const classes = ['letter', 'invoice', 'claim'];
  return (i) => {
    const u = r.next();
    const line = r.pick(lines);
    let model: string;
    let version: string;
    let score: Record<string, unknown>;
    let label: unknown;
    const labelled = r.chance(0.25);
    if (u < 0.5) {
      model = 'parcel-damage';
      version = '2026.11.3';
      if (r.chance(0.85)) {
        const p = Math.round(r.next() ** 0.3 * 1e4) / 1e4; // bunched near 1, as a confident model's are
        score = { kind: 'probability', p };
      } else {
        const total = 2 + Math.round(r.next() * 300) / 100;
        score = { kind: 'votes', sum: Math.round((r.next() * 2 - 1) * total * 100) / 100, total };
      }
      if (labelled) label = r.chance(0.5) ? 1 : 0;
    } else if (u < 0.8) {
      model = 'doc-router';
      version = 'v7';
      const a = r.next();
      const b = r.next() * (1 - a);
      const values: Record<string, number> = {};
      const shares = [a, b, 1 - a - b];
      classes.forEach((c, k) => (values[c] = Math.round((shares[k] as number) * 1e6) / 1e6));
      // Rounding may leave the sum a millionth off 1; put the rest on the last class.
      values.claim = Math.round((1 - (values.letter as number) - (values.invoice as number)) * 1e6) / 1e6;
      score = { kind: 'classes', values };
      if (labelled) label = r.pick(classes);
    } else {
      model = 'crate-sorter';
      version = '3.1';
      score = r.chance(0.7) ? { kind: 'logit', z: Math.round((r.next() * 10 - 5) * 1e3) / 1e3 } : { kind: 'margin', value: Math.round(r.next() * 1e4) / 1e4 };
      if (labelled && score.kind === 'logit') label = r.chance(0.5) ? 1 : -1;
    }
    const late = r.chance(0.002) ? 300_000 : 0;
    const timeMs = Math.floor(endMs - spanMs + (i / count) * spanMs - r.next() * 20_000 - late);
    const event: Record<string, unknown> = { id: `p-${i.toString().padStart(7, '0')}`, model, version, time: new Date(timeMs).toISOString(), score };
    if (label !== undefined) event.label = label;
    event.segment = { line };
    return JSON.stringify(event);
  };
}

async function fill(kafka: Kafka, topic: string, count: number): Promise<{ ms: number; bytes: number }> {
  const producer = kafka.producer({ allowAutoTopicCreation: false, createPartitioner: Partitioners.DefaultPartitioner });
  await producer.connect();
  const make = eventMaker(count, Date.now());
  let bytes = 0;
  let produced = 0;
  const t0 = performance.now();
  const inFlight = new Set<Promise<unknown>>();
  try {
    while (produced < count) {
      const messages: Message[] = [];
      const until = Math.min(count, produced + PER_PARTITION * PARTITIONS);
      for (; produced < until; produced += 1) {
        const value = make(produced);
        bytes += Buffer.byteLength(value);
        messages.push({ partition: produced % PARTITIONS, value });
      }
      const sending = producer.send({ topic, messages, acks: 1, compression: CompressionTypes.None });
      inFlight.add(sending);
      void sending.finally(() => inFlight.delete(sending)).catch(() => undefined);
      if (inFlight.size >= IN_FLIGHT) await Promise.race(inFlight);
    }
    await Promise.all(inFlight);
    return { ms: performance.now() - t0, bytes };
  } finally {
    await producer.disconnect();
  }
}

// ------------------------------------------------------------------------------------------ one run

/** Polls `consumed` every POLL_MS until it reaches `total`; times are from `t0`. */
function timeUntil(consumed: () => number, total: number, t0: number, cpu0: NodeJS.CpuUsage): Promise<{ ms: number; firstMs: number; cpuMs: number }> {
  return new Promise((done) => {
    let firstMs = NaN;
    const timer = setInterval(() => {
      const n = consumed();
      const at = performance.now() - t0;
      if (n > 0 && Number.isNaN(firstMs)) firstMs = at;
      if (n >= total) {
        clearInterval(timer);
        const cpu = process.cpuUsage(cpu0);
        done({ ms: at, firstMs, cpuMs: (cpu.user + cpu.system) / 1000 });
      }
    }, POLL_MS);
  });
}

async function runWatcher(brokers: string[], topic: string, total: number): Promise<RunResult> {
  const dir = mkdtempSync(join(tmpdir(), 'headroom-bench-e2e-'));
  const { config } = parseConfig(
    {
      kafka: { brokers, clientId: 'headroom-bench', groupId: uniqueName('bench-e2e-watch'), topics: [topic] },
      models: [{ name: '*', segmentKeys: ['line'] }],
      checkpoint: { dir },
      http: { host: '127.0.0.1', port: 0 },
    },
    'watch-e2e.ts',
    {},
  );
  let logLines = 0;
  const logger = pino({ level: 'info' }, { write: () => void (logLines += 1) });
  const watcher = createWatcher({ config, store: new FileCheckpointStore({ dir }), logger, registry: new Registry(), nowMs: () => Date.now() });
  try {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    await watcher.start();
    // The watcher reads the high watermarks at start; the topic no longer grows, so lag 0 is the end.
    const consumed = (): number => {
      const parts = watcher.source.partitions();
      if (parts.length < PARTITIONS || parts.some((p) => p.lagMessages === null)) return 0;
      return total - parts.reduce((sum, p) => sum + (p.lagMessages ?? 0), 0);
    };
    const { ms, firstMs, cpuMs } = await timeUntil(consumed, total, t0, cpu0);
    let seen = 0;
    for (const s of watcher.source.series()) if (s.segment === 'all') seen += s.events;
    for (const n of watcher.source.rejections().values()) seen += n;
    const c0 = performance.now();
    await watcher.close();
    return { kind: 'watcher', ms, firstMs, cpuMs, messages: total, seen, note: `close ${(performance.now() - c0).toFixed(0)} ms, ${logLines} log lines` };
  } finally {
    await watcher.close().catch(() => undefined);
    rmSync(dir, { recursive: true, force: true });
  }
}

async function runBare(brokers: string[], topic: string, total: number, highs: readonly number[]): Promise<RunResult> {
  const kafka = new Kafka({ clientId: 'headroom-bench-bare', brokers, logLevel: logLevel.NOTHING });
  const consumer = kafka.consumer({ groupId: uniqueName('bench-e2e-bare') });
  const next = new Array<number>(PARTITIONS).fill(0);
  let parsed = 0;
  try {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    await consumer.connect();
    await consumer.subscribe({ topics: [topic], fromBeginning: true });
    await consumer.run({
      autoCommit: false,
      eachBatch: async ({ batch }) => {
        for (const message of batch.messages) {
          if (message.value === null) continue;
          JSON.parse(message.value.toString());
          parsed += 1;
        }
        next[batch.partition] = Number(batch.lastOffset()) + 1;
      },
    });
    const consumed = (): number => next.reduce((sum, n, p) => sum + Math.min(n, highs[p] ?? 0), 0);
    const { ms, firstMs, cpuMs } = await timeUntil(consumed, total, t0, cpu0);
    return { kind: 'bare', ms, firstMs, cpuMs, messages: total, seen: parsed, note: `${parsed.toLocaleString()} values parsed` };
  } finally {
    await consumer.disconnect();
  }
}

async function child(kind: Kind, brokers: string[], topic: string, highs: number[]): Promise<void> {
  const total = highs.reduce((a, b) => a + b, 0);
  const result = kind === 'watcher' ? await runWatcher(brokers, topic, total) : await runBare(brokers, topic, total, highs);
  process.stdout.write(`RESULT ${JSON.stringify(result)}\n`);
}

function spawnRun(kind: Kind, brokers: string[], topic: string, highs: number[], index: number, profDir: string | undefined): Promise<RunResult> {
  const self = fileURLToPath(import.meta.url);
  const prof = profDir === undefined ? [] : ['--cpu-prof', `--cpu-prof-dir=${profDir}`, `--cpu-prof-name=${index}-${kind}.cpuprofile`];
  const args = [...prof, '--import', 'tsx', self, `--child=${kind}`, `--brokers=${brokers.join(',')}`, `--topic=${topic}`, `--highs=${highs.join(',')}`];
  return new Promise((done, fail) => {
    const proc = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    proc.stdout.on('data', (chunk: Buffer) => (out += chunk.toString()));
    proc.on('error', fail);
    proc.on('exit', (code, signal) => {
      const line = out.split('\n').find((l) => l.startsWith('RESULT '));
      if (code !== 0 || line === undefined) fail(new Error(`${kind} run exited with ${code ?? signal}:\n${out}`));
      else done(JSON.parse(line.slice('RESULT '.length)) as RunResult);
    });
  });
}

// ------------------------------------------------------------------------------------------- parent

const median = (xs: readonly number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  return s.length % 2 === 1 ? (s[mid] as number) : ((s[mid - 1] as number) + (s[mid] as number)) / 2;
};
const kps = (n: number, ms: number): string => `${(n / ms).toFixed(0).padStart(4)}k events/s`;

async function main(): Promise<void> {
  const events = envCount('HEADROOM_BENCH_E2E_EVENTS', 1_000_000);
  const pairs = envCount('HEADROOM_BENCH_E2E_PAIRS', 3);
  const profDir = process.env.HEADROOM_BENCH_E2E_CPU_PROF ? resolve(process.env.HEADROOM_BENCH_E2E_CPU_PROF) : undefined;
  if (profDir !== undefined) mkdirSync(profDir, { recursive: true });

  const kafkaBrokers = await benchBrokers();
  const brokers = kafkaBrokers.brokers;
  const kafka = new Kafka({ clientId: 'headroom-bench-fill', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const topic = uniqueName('bench-e2e');
  try {
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    const filled = await fill(kafka, topic, events);
    const highs = (await admin.fetchTopicOffsets(topic)).sort((a, b) => a.partition - b.partition).map((p) => Number(p.high));
    const total = highs.reduce((a, b) => a + b, 0);
    if (total !== events) throw new Error(`the topic holds ${total} messages, ${events} were produced`);
    console.log(
      `fill: ${events.toLocaleString()} events (${(filled.bytes / 1e6).toFixed(0)} MB, ${PARTITIONS} partitions, acks 1, no compression) ` +
        `in ${(filled.ms / 1000).toFixed(1)} s = ${kps(events, filled.ms)}`,
    );

    const order: Kind[] = [];
    for (let p = 0; p < pairs; p += 1) order.push(...(p % 2 === 0 ? (['watcher', 'bare'] as const) : (['bare', 'watcher'] as const)));
    const results: RunResult[] = [];
    for (const [i, kind] of order.entries()) {
      const r = await spawnRun(kind, brokers, topic, highs, i + 1, profDir);
      results.push(r);
      const flag = r.seen === r.messages ? '' : `  (saw ${r.seen}, expected ${r.messages}!)`;
      console.log(`  run ${i + 1} ${kind.padEnd(7)} ${kps(r.messages, r.ms)}  ${(r.ms / 1000).toFixed(2)} s, CPU ${(r.cpuMs / 1000).toFixed(2)} s (first message at ${(r.firstMs / 1000).toFixed(2)} s; ${r.note})${flag}`);
    }
    const ratios: number[] = [];
    const cpuRatios: number[] = [];
    for (let p = 0; p < pairs; p += 1) {
      const pair = [results[2 * p], results[2 * p + 1]] as [RunResult, RunResult];
      const w = pair.find((r) => r.kind === 'watcher') as RunResult;
      const b = pair.find((r) => r.kind === 'bare') as RunResult;
      ratios.push(b.ms / w.ms);
      cpuRatios.push(b.cpuMs / w.cpuMs);
    }
    const rates = (kind: Kind): number[] => results.filter((r) => r.kind === kind).map((r) => r.messages / r.ms);
    console.log(`median: watcher ${kps(median(rates('watcher')), 1)}; bare eachBatch + JSON.parse ${kps(median(rates('bare')), 1)}`);
    console.log(`ratio watcher / bare (events/s) per pair: ${ratios.map((r) => r.toFixed(2)).join(', ')}; median ${median(ratios).toFixed(2)}  (target >= 0.8)`);
    console.log(`ratio of CPU time bare / watcher per pair: ${cpuRatios.map((r) => r.toFixed(2)).join(', ')}; median ${median(cpuRatios).toFixed(2)}`);
    if (profDir !== undefined) console.log(`CPU profiles in ${profDir}`);
    await admin.deleteTopics({ topics: [topic] }).catch(() => undefined);
  } finally {
    await admin.disconnect();
    await kafkaBrokers.stop();
  }
}

const arg = (name: string): string | undefined => process.argv.find((a) => a.startsWith(`--${name}=`))?.slice(name.length + 3);
const childKind = arg('child');
const run =
  childKind === 'watcher' || childKind === 'bare'
    ? child(childKind, (arg('brokers') ?? '').split(','), arg('topic') ?? '', (arg('highs') ?? '').split(',').map(Number))
    : main();
run.catch((error: unknown) => {
  console.error(error instanceof Error ? (error.stack ?? error.message) : String(error));
  process.exitCode = 1;
});
