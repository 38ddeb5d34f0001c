/**
 * `headroom watch` against a broker that demands SASL/SCRAM-SHA-512, on a broker of its own (the shared
 * one has no SASL listener). The password reaches the watcher only through HEADROOM_KAFKA_SASL_PASSWORD:
 * with the right one every produced event is counted exactly; with a wrong one start() fails once,
 * promptly, saying authentication failed, and the CLI exits non-zero with one error line. No log line,
 * at the most verbose level, ever holds either password.
 */
import { randomBytes } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/index.js';
import type { HeadroomConfig } from '../../src/config/index.js';
import { exitCodeOf, HeadroomError } from '../../src/errors.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { spawnHeadroom } from '../harness/cli.js';
import { dedicatedBrokerUnavailable } from '../harness/dedicated-broker.js';
import { uniqueName } from '../harness/names.js';
import { startLocalBroker } from '../kafka/broker.js';
import type { LocalBroker } from '../kafka/broker.js';
import { rng } from '../unit/events/prng.js';

const N = 900;
const PARTITIONS = 2;
const LINES = ['1', '2', '3'];
const USER = 'headroom-watch';
// Random per run, so a match in a log line can only be a leak, never a coincidence with fixed text.
const PASSWORD = `right-${randomBytes(12).toString('hex')}`;
const WRONG = `wrong-${randomBytes(12).toString('hex')}`;
/** How long a refused start may take at most: far beyond one attempt, far below a retry loop's minutes. */
const REFUSAL_BOUND_MS = 60_000;

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

async function until(what: string, check: () => boolean | Promise<boolean>, timeoutMs = 90_000): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (performance.now() < deadline) {
    if (await check()) return;
    await sleep(100);
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}

/** The broker's own count of refused logins (Kafka's SocketServer logs one line per failed authentication). */
function failedLogins(broker: LocalBroker): number {
  return readFileSync(broker.logFile, 'utf8').split('\n').filter((line) => line.includes('Failed authentication with')).length;
}

describe.skipIf(dedicatedBrokerUnavailable('watch-sasl.test.ts') !== undefined)('headroom watch over SASL/SCRAM-SHA-512', () => {
  const topic = uniqueName('sasl-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-watch-sasl-'));
  const configPath = join(dir, 'watch.yaml');
  const expected = new Map<string, number>();
  const watchers: Watcher[] = [];
  let broker: LocalBroker | undefined;

  const sasl = (): NonNullable<LocalBroker['scram']> => {
    if (broker?.scram === undefined) throw new Error('the broker has no SCRAM listener');
    return broker.scram;
  };

  /** The file holds the mechanism and user only; the password is the environment's. */
  const load = async (password: string, groupId: string): Promise<HeadroomConfig> => {
    writeFileSync(
      configPath,
      [
        'kafka:',
        `  brokers: ["${sasl().bootstrap}"]`,
        `  groupId: ${groupId}`,
        `  topics: [${topic}]`,
        '  sasl:',
        `    mechanism: ${sasl().mechanism.toLowerCase()}`,
        `    username: ${USER}`,
        'models:',
        '  - name: parcel-damage',
        '    segmentKeys: [line]',
        'checkpoint: { dir: ./state, interval: 1s }',
        'http: { host: 127.0.0.1, port: 0 }',
        '',
      ].join('\n'),
    );
    const { config, warnings } = await loadConfig(configPath, { HEADROOM_KAFKA_SASL_PASSWORD: password });
    expect(config.kafka.sasl?.password.origin).toBe('HEADROOM_KAFKA_SASL_PASSWORD');
    expect(warnings).toEqual([expect.stringMatching(/^kafka\.sasl is set but kafka\.tls is not/)]);
    return config;
  };

  const newWatcher = (config: HeadroomConfig, lines: string[]): Watcher => {
    // trace: the most kafkajs and the watcher ever say, so a leak at any level would be caught.
    const logger = pino({ level: 'trace' }, { write: (line: string) => void lines.push(line) });
    const watcher = createWatcher({ config, store: new FileCheckpointStore({ dir: config.checkpoint.dir }), logger, registry: new Registry(), nowMs: () => Date.now() });
    watchers.push(watcher);
    return watcher;
  };

  beforeAll(async () => {
    broker = await startLocalBroker({ heapMb: 512, scram: { username: USER, password: PASSWORD }, log: (line) => process.stderr.write(`[sasl broker] ${line}\n`) });
    process.stderr.write(`[watch-sasl.test] broker with a SCRAM listener ready in ${(broker.startMs / 1000).toFixed(1)} s\n`);
    // Topic and events go in through the plain listener: what is under test is the watcher's side.
    const kafka = new Kafka({ clientId: 'headroom-sasl-test', brokers: [broker.bootstrap], logLevel: logLevel.WARN });
    const admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }], waitForLeaders: true });
    await admin.disconnect();
    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    await producer.connect();
    const next = rng(7).next;
    const base = Date.now() - 60_000;
    const values: string[] = [];
    for (let i = 0; i < N; i += 1) {
      const line = LINES[Math.floor(next() * LINES.length)] as string;
      // The wire format of README "Wire format": one JSON object per message.
      values.push(JSON.stringify({ id: `s-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(base + Math.floor(next() * 50_000)).toISOString(), score: { kind: 'probability', p: Math.round(next() * 1000) / 1000 }, segment: { line } }));
      for (const segment of ['all', `line=${line}`]) expected.set(segment, (expected.get(segment) ?? 0) + 1);
    }
    await producer.send({ topic, acks: -1, messages: values.map((value, i) => ({ key: `k${i % 13}`, value })) });
    await producer.disconnect();
  }, 180_000);

  afterAll(async () => {
    for (const w of watchers) await w.close().catch(() => undefined);
    await broker?.stop();
    rmSync(dir, { recursive: true, force: true });
  });

  it('counts every event exactly once when the password from the environment is right', async () => {
    const lines: string[] = [];
    const config = await load(PASSWORD, uniqueName('sasl-group'));
    expect(readFileSync(configPath, 'utf8')).not.toContain(PASSWORD);
    expect(config.kafka.brokers).toEqual([sasl().bootstrap]);
    expect(sasl().bootstrap).not.toBe(broker?.bootstrap);
    const watcher = newWatcher(config, lines);
    const before = failedLogins(broker as LocalBroker);
    const started = performance.now();
    await watcher.start();
    const events = (): number => [...watcher.source.series()].filter((s) => s.segment === 'all').reduce((sum, s) => sum + s.events, 0);
    await until(`${N} events over SCRAM`, () => events() >= N);
    process.stderr.write(`[watch-sasl.test] ${N} events consumed over SCRAM-SHA-512 in ${((performance.now() - started) / 1000).toFixed(1)} s\n`);
    await until('lag 0 on every partition', () => watcher.source.partitions().length === PARTITIONS && watcher.source.partitions().every((p) => p.lagMessages === 0));

    const response = await fetch(`${watcher.url()}/api/series`);
    expect(response.status).toBe(200);
    const body = (await response.json()) as { series: { model: string; version: string; segment: string; events: number }[] };
    const got = new Map(body.series.map((s) => [s.segment, s.events]));
    expect(body.series.every((s) => s.model === 'parcel-damage' && s.version === '2026.11.3')).toBe(true);
    expect(got).toEqual(expected);
    expect([...watcher.source.rejections().values()].reduce((a, b) => a + b, 0)).toBe(0);
    expect(watcher.source.readiness()).toEqual({ ready: true, reasons: [] });
    expect(failedLogins(broker as LocalBroker)).toBe(before);

    await watcher.close();
    expect(lines.length).toBeGreaterThan(0);
    expect(lines.filter((l) => l.includes(PASSWORD))).toEqual([]);
  });

  it('a wrong password: start() rejects once, within a bounded time, saying authentication failed, without the password', async () => {
    const lines: string[] = [];
    const watcher = newWatcher(await load(WRONG, uniqueName('sasl-wrong-group')), lines);
    const before = failedLogins(broker as LocalBroker);
    const started = performance.now();
    let timer: NodeJS.Timeout | undefined;
    const bound = new Promise<'still trying'>((resolve) => (timer = setTimeout(() => resolve('still trying'), REFUSAL_BOUND_MS)));
    const outcome = await Promise.race([watcher.start().then(() => 'started' as const, (error: unknown) => error), bound]).finally(() => clearTimeout(timer));
    const tookMs = performance.now() - started;
    expect(outcome).toBeInstanceOf(HeadroomError);
    const error = outcome as HeadroomError;
    expect(error.code).toBe('HR_ERR_WATCH_START');
    expect(error.message).toMatch(/authentication failed/i);
    expect(error.message).toContain(sasl().bootstrap);
    expect(error.message).toMatch(/SCRAM[- ]SHA-?512/i);
    expect(error.message).not.toContain(WRONG);
    expect(error.message).not.toContain(PASSWORD);

    // Attempts, counted on both sides: the broker's refused logins and kafkajs's failed SCRAM exchanges.
    await until('the broker to log the refused login', () => failedLogins(broker as LocalBroker) > before, 10_000);
    await sleep(2_000); // a retry would show up in this time
    const brokerSide = failedLogins(broker as LocalBroker) - before;
    const clientSide = lines.filter((l) => l.includes('"kafka":"SaslAuthenticator-SCRAM-SHA-512"') && l.includes('authentication failed')).length;
    process.stderr.write(`[watch-sasl.test] wrong password refused after ${tookMs.toFixed(0)} ms; ${brokerSide} failed login(s) on the broker, ${clientSide} in kafkajs's log\n`);
    expect(brokerSide).toBeGreaterThanOrEqual(1);
    expect(brokerSide).toBeLessThanOrEqual(3);
    expect(clientSide).toBe(brokerSide);
    // Refused is not ready: the watcher closed itself and serves nothing.
    expect(watcher.source.readiness().ready).toBe(false);
    expect(lines.filter((l) => l.includes(WRONG) || l.includes(PASSWORD))).toEqual([]);
  });

  it('the CLI with a wrong password exits non-zero with one error line and never prints the password', async () => {
    await load(WRONG, uniqueName('sasl-cli-group'));
    const before = failedLogins(broker as LocalBroker);
    const cli = spawnHeadroom(['watch', '--config', configPath], { HEADROOM_KAFKA_SASL_PASSWORD: WRONG, LOG_LEVEL: 'trace' });
    const started = performance.now();
    const code = await new Promise<number | string | null>((resolve) => {
      const timer = setTimeout(() => (cli.child.kill('SIGKILL'), resolve(null)), REFUSAL_BOUND_MS);
      void cli.exited.then((c) => (clearTimeout(timer), resolve(c)));
    });
    const stdout = cli.stdout();
    const stderr = cli.stderr();
    process.stderr.write(`[watch-sasl.test] CLI exited ${code} after ${((performance.now() - started) / 1000).toFixed(1)} s; stderr: ${stderr.trim()}\n`);
    expect(code).toBe(exitCodeOf(new HeadroomError('HR_ERR_WATCH_START', '')));
    expect(code).not.toBe(0);
    const errorLines = stderr.split('\n').filter((l) => l.trim() !== '');
    expect(errorLines).toHaveLength(1);
    expect(errorLines[0]).toMatch(/^headroom: the watcher could not start: .*authentication failed.* \[HR_ERR_WATCH_START\]$/i);
    expect(errorLines[0]).toContain(sasl().bootstrap);
    // The start-up log did print the configuration, with the password redacted and its origin named.
    expect(stdout).toContain('password [redacted] (from HEADROOM_KAFKA_SASL_PASSWORD)');
    expect(stdout).not.toContain(WRONG);
    expect(stderr).not.toContain(WRONG);
    await until('the broker to log the refused login', () => failedLogins(broker as LocalBroker) > before, 10_000);
    expect(failedLogins(broker as LocalBroker) - before).toBeLessThanOrEqual(3);
  });
});
