/**
 * Reference reloads of `headroom watch` on the real broker. The watcher consumes parcel-damage events
 * with a reference file; the file is then replaced by references built from other events (other
 * low-margin shares, computed here from those events), and /metrics and /api show the new share after a
 * change on disk and after reloadReferences() (what SIGHUP calls). A broken replacement keeps the
 * reference in force and is counted. Last, the CLI as a child process: SIGHUP reloads, the service
 * keeps running, and SIGTERM still ends it cleanly.
 */
import { mkdirSync, mkdtempSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { find, parseExposition, value } from '../unit/serve/exposition.js';
import { rng } from '../unit/events/prng.js';

const MODEL = 'parcel-damage';
const VERSION = '2026.11.3';
const THRESHOLDS = [0.1, 0.25];
const LIVE = 600;

interface Scored {
  readonly wire: string;
  /** |2p − 1|, computed here from the score's definition (DESIGN "Margins"), not by src/margin. */
  readonly margin: number;
}

/** Probability scores; `spread` < 1 pulls them toward 0.5, i.e. toward low margins. */
function scoredEvents(n: number, seed: number, spread: number, model = MODEL): Scored[] {
  const next = rng(seed).next;
  const out: Scored[] = [];
  const base = Date.now() - 60_000;
  while (out.length < n) {
    const p = Math.round((0.5 + (next() - 0.5) * spread) * 1000) / 1000;
    const margin = Math.abs(2 * p - 1);
    // A margin a rounding step from a threshold could land on either side of it: leave it out.
    if (THRESHOLDS.some((t) => Math.abs(margin - t) < 1e-9)) continue;
    const wire = JSON.stringify({ id: `e-${seed}-${out.length}`, model, version: VERSION, time: new Date(base + out.length * 10).toISOString(), score: { kind: 'probability', p } });
    out.push({ wire, margin });
  }
  return out;
}

function shareBelow(events: readonly Scored[], t: number): number {
  return events.filter((e) => e.margin < t).length / events.length;
}

function referenceText(events: readonly Scored[], createdAt: string): string {
  const decoded = events.map((e) => {
    const d = decodeScoredEvent(Buffer.from(e.wire));
    if (!d.ok) throw new Error(`reference event does not decode: ${d.detail}`);
    return d.event;
  });
  return formatReference(buildReference(decoded, { createdAt, thresholds: THRESHOLDS, source: 'watch-reload test' }));
}

/** Written beside the target, then renamed over it: the way deploys and editors replace a file. */
function replaceFile(path: string, text: string): void {
  const temp = `${path}.${process.pid}.tmp`;
  writeFileSync(temp, text);
  renameSync(temp, path);
}

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

async function until(what: string, check: () => boolean | Promise<boolean>, timeoutMs = 60_000): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (performance.now() < deadline) {
    if (await check()) return;
    await sleep(100);
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}

async function scrape(url: string) {
  const response = await fetch(`${url}/metrics`);
  expect(response.status).toBe(200);
  return parseExposition(await response.text()).samples;
}

/** The series' event count, or undefined before its first event. */
async function eventsCounted(url: string): Promise<number | undefined> {
  return find(await scrape(url), 'headroom_events_total', { model: MODEL, version: VERSION, segment: 'all' })[0]?.value;
}

async function referenceShare(url: string, t: number): Promise<number | undefined> {
  const samples = await scrape(url);
  return samples.find((s) => s.name === 'headroom_reference_low_margin_ratio' && s.labels.model === MODEL && s.labels.segment === 'all' && s.labels.threshold === String(t))?.value;
}

interface SeriesListBody {
  series: { model: string; version: string; segment: string; reference: { state: string; version?: string; createdAt?: string; file?: string } }[];
}

async function seriesList(url: string): Promise<SeriesListBody['series']> {
  const response = await fetch(`${url}/api/series`);
  expect(response.status).toBe(200);
  return ((await response.json()) as SeriesListBody).series;
}

describe('headroom watch reloads its references', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-reload-test', brokers, logLevel: logLevel.WARN });
  const topic = uniqueName('reload-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-reload-'));
  const referencePath = join(dir, 'references', 'parcel-damage.json');
  const live = scoredEvents(LIVE, 1, 1);
  // Three references of the same model version with clearly different low-margin shares.
  const refA = scoredEvents(500, 11, 1);
  const refB = scoredEvents(500, 12, 0.3);
  const refC = scoredEvents(500, 13, 0.6);
  const watchers: Watcher[] = [];
  let child: RunningCli | undefined;

  beforeAll(async () => {
    const admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 1, replicationFactor: 1 }], waitForLeaders: true });
    await admin.disconnect();
    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
    await producer.connect();
    // doc-router has no reference at all: it must still be watched, and say so.
    const other = scoredEvents(50, 2, 1, 'doc-router');
    await producer.send({ topic, messages: [...live, ...other].map((e) => ({ value: e.wire })) });
    await producer.disconnect();
    mkdirSync(join(dir, 'references'));
  });

  afterAll(async () => {
    child?.child.kill('SIGKILL');
    for (const w of watchers) await w.close().catch(() => undefined);
    rmSync(dir, { recursive: true, force: true });
  });

  it('shows the new reference after a file change and after reloadReferences(), and keeps it through a broken file', async () => {
    // The shares really differ, so a test that saw the old one would fail.
    for (const t of THRESHOLDS) {
      expect(Math.abs(shareBelow(refB, t) - shareBelow(refA, t))).toBeGreaterThan(0.05);
      expect(Math.abs(shareBelow(refC, t) - shareBelow(refB, t))).toBeGreaterThan(0.05);
    }
    writeFileSync(referencePath, referenceText(refA, '2026-11-02T00:00:00.000Z'));
    const { config } = parseConfig(
      {
        kafka: { brokers, clientId: 'headroom-reload-test', groupId: uniqueName('reload-group'), topics: [topic] },
        models: [{ name: MODEL, thresholds: THRESHOLDS, reference: referencePath }, { name: '*', thresholds: THRESHOLDS }],
        windows: ['5m'],
        checkpoint: { dir: join(dir, 'state-a'), interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
        referenceReload: { watchFiles: true, debounce: '200ms' },
      },
      'watch-reload.test.ts',
      {},
    );
    const logLines: Record<string, unknown>[] = [];
    const watcher = createWatcher({
      config,
      store: new FileCheckpointStore({ dir: config.checkpoint.dir }),
      logger: pino({ level: 'info' }, { write: (line: string) => void logLines.push(JSON.parse(line) as Record<string, unknown>) }),
      registry: new Registry(),
      nowMs: () => Date.now(),
    });
    watchers.push(watcher);
    await watcher.start();
    const url = watcher.url() as string;
    await until('the live events to be counted', async () => (await eventsCounted(url)) === LIVE);
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refA, t), 12);
    const list = await seriesList(url);
    expect(list.find((s) => s.model === 'doc-router')?.reference).toEqual({ state: 'none' });
    expect(list.find((s) => s.model === MODEL)?.reference).toMatchObject({ state: 'loaded', version: VERSION, createdAt: '2026-11-02T00:00:00.000Z', file: 'current' });

    // 1. A change on disk, by rename: picked up without being asked.
    replaceFile(referencePath, referenceText(refB, '2026-11-09T00:00:00.000Z'));
    await until('the changed file to be in force', async () => Math.abs(((await referenceShare(url, 0.1)) ?? -1) - shareBelow(refB, 0.1)) < 1e-12);
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refB, t), 12);
    expect((await seriesList(url)).find((s) => s.model === MODEL)?.reference).toMatchObject({ state: 'loaded', createdAt: '2026-11-09T00:00:00.000Z' });
    expect(logLines.filter((l) => l.msg === 'references reloaded').map((l) => l.why)).toEqual(['file change']);

    // 2. reloadReferences(), what SIGHUP calls: in force as soon as it resolves.
    writeFileSync(referencePath, referenceText(refC, '2026-11-16T00:00:00.000Z'));
    const report = await watcher.reloadReferences('SIGHUP');
    expect(report.failures).toEqual([]);
    expect(report.changes.map((c) => [c.change, c.createdAt])).toEqual([['updated', '2026-11-16T00:00:00.000Z']]);
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refC, t), 12);
    let samples = await scrape(url);
    const loadedAt = value(samples, 'headroom_reference_loaded_timestamp_seconds', { model: MODEL, version: VERSION });
    expect(Math.abs(loadedAt - Date.now() / 1000)).toBeLessThan(120);
    expect(value(samples, 'headroom_reference_reload_errors_total', { model: MODEL })).toBe(0);

    // 3. A broken replacement (cut short mid-write): the reference in force stays, the error is counted.
    const text = referenceText(refA, '2026-11-23T00:00:00.000Z');
    replaceFile(referencePath, text.slice(0, Math.floor(text.length / 2)));
    await until('the failed reload to be counted', async () => value(await scrape(url), 'headroom_reference_reload_errors_total', { model: MODEL }) === 1);
    samples = await scrape(url);
    expect(value(samples, 'headroom_reference_reload_failing', { model: MODEL })).toBe(1);
    expect(value(samples, 'headroom_reference_loaded', { model: MODEL, version: VERSION })).toBe(1);
    expect(value(samples, 'headroom_reference_loaded_timestamp_seconds', { model: MODEL, version: VERSION })).toBe(loadedAt);
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refC, t), 12);
    expect((await seriesList(url)).find((s) => s.model === MODEL)?.reference).toMatchObject({ state: 'loaded', createdAt: '2026-11-16T00:00:00.000Z', file: 'reload-failed' });
    const errors = logLines.filter((l) => l.level === 50);
    expect(errors).toHaveLength(1);
    expect(errors[0]).toMatchObject({ file: referencePath, code: 'HR_ERR_REFERENCE_INVALID' });
    expect(String(errors[0]?.msg)).toContain(`${referencePath}: is not JSON`);
    // The live figures go on: every event still counted once.
    expect(value(samples, 'headroom_events_total', { model: MODEL, version: VERSION, segment: 'all' })).toBe(LIVE);
    await watcher.close();
  }, 180_000);

  it('reloads on SIGHUP in the CLI, and keeps running', async () => {
    writeFileSync(referencePath, referenceText(refA, '2026-11-02T00:00:00.000Z'));
    const configPath = join(dir, 'watch.yaml');
    writeFileSync(
      configPath,
      [
        'kafka:',
        `  brokers: [${brokers.map((b) => JSON.stringify(b)).join(', ')}]`,
        `  groupId: ${uniqueName('reload-cli-group')}`,
        `  topics: [${topic}]`,
        'models:',
        `  - name: ${MODEL}`,
        `    thresholds: [${THRESHOLDS.join(', ')}]`,
        '    reference: references/parcel-damage.json',
        '  - name: "*"',
        'windows: [5m]',
        'checkpoint: { dir: state-cli, interval: 1s }',
        'http: { host: 127.0.0.1, port: 0 }',
        // Off, so only the signal can have reloaded the file.
        'referenceReload: { watchFiles: false }',
        '',
      ].join('\n'),
    );
    const cli = spawnHeadroom(['watch', '--config', configPath], { HEADROOM_KAFKA_BROKERS: undefined, HEADROOM_HTTP_PORT: undefined });
    child = cli;
    const lines = (): Record<string, unknown>[] => cli.logLines();
    await until('the CLI to listen', () => lines().some((l) => typeof l.url === 'string'), 90_000);
    const url = lines().find((l) => typeof l.url === 'string')?.url as string;
    await until('the CLI to count the live events', async () => (await eventsCounted(url)) === LIVE, 90_000);
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refA, t), 12);

    replaceFile(referencePath, referenceText(refB, '2026-11-09T00:00:00.000Z'));
    await sleep(1_000);
    // Not watched: still the old reference until the signal.
    expect(await referenceShare(url, 0.1)).toBeCloseTo(shareBelow(refA, 0.1), 12);
    cli.child.kill('SIGHUP');
    await until('the reload after SIGHUP', () => lines().some((l) => l.msg === 'references reloaded'), 30_000);
    expect(lines().find((l) => l.msg === 'references reloaded')).toMatchObject({ why: 'SIGHUP', changes: [`${MODEL} ${VERSION} updated (created 2026-11-02T00:00:00.000Z → 2026-11-09T00:00:00.000Z)`] });
    for (const t of THRESHOLDS) expect(await referenceShare(url, t)).toBeCloseTo(shareBelow(refB, t), 12);
    expect(cli.child.exitCode).toBeNull();
    const health = await fetch(`${url}/healthz`);
    expect(health.status).toBe(200);

    cli.child.kill('SIGTERM');
    expect(await cli.exited, cli.output()).toBe(0);
    child = undefined;
  }, 180_000);
});
