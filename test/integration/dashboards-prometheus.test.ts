/**
 * Everything in dashboards/ against the real thing: `headroom watch` on the shared broker, with a reference
 * file, counts events of three segments; a real Prometheus scrapes it with headroom-rules.yml loaded. Then
 * every rule group must load and evaluate without error, and every panel query, variable query and rule
 * expression must parse and return data through /api/v1/query (alert expressions in their `bool` form:
 * see boolForm). The recorded Wilson bound must equal the one /api/series computes.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import {
  boolForm,
  DASHBOARDS_DIR,
  dashboardFiles,
  panelQueries,
  ruleExpressions,
  ruleFiles,
  substitute,
  variableQueries,
  type FoundQuery,
} from '../harness/dashboard-queries.js';
import { uniqueName } from '../harness/names.js';
import { startPrometheus, type RunningPrometheus } from '../harness/prometheus.js';
import { makeMalformed, makeScoredEvents, type ModelSpec } from '../harness/scored-events.js';

const THRESHOLDS = [0.1, 0.25];
const MODEL = 'parcel-damage';
const VERSION = '2026.11.3';
const LIVE: ModelSpec = { name: MODEL, version: VERSION, kind: 'probability', segments: { line: ['1', '2', '3'] }, spread: 0.6 };
const REFERENCE: ModelSpec = { ...LIVE, spread: 1 };
const N = 1_500;
const MALFORMED = 28;

/** Grafana's variables as a user would pick them, and its interval variables as it would fill them at a 1 s scrape. */
const VARIABLES: Readonly<Record<string, string>> = {
  job: 'headroom',
  model: MODEL,
  version: VERSION,
  segment: 'line=2',
  window: '5m',
  threshold: '0.1',
  __rate_interval: '1m',
  __interval: '15s',
  __range: '1h',
};

interface RuleGroupStatus {
  readonly name: string;
  readonly file: string;
  readonly rules: readonly { readonly name: string; readonly health: string; readonly lastError?: string; readonly type: string }[];
}

describe.skipIf(!inject('prometheusAvailable'))('dashboards/ against a real Prometheus scraping headroom watch', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-dashboards-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const topic = uniqueName('dashboards-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-dashboards-'));
  let watcher: Watcher | undefined;
  let prometheus: RunningPrometheus | undefined;

  beforeAll(async () => {
    // The live events are less sure of themselves than the reference (spread 0.6 against 1): drift and a
    // higher low-margin share, so the figures the panels show are not all zero.
    const referenceEvents = makeScoredEvents({ n: 900, seed: 7, fromMs: Date.UTC(2026, 10, 1), spanMs: 3_600_000, idPrefix: 'ref', models: [REFERENCE], thresholds: THRESHOLDS });
    const decoded = referenceEvents.map((e) => {
      const d = decodeScoredEvent(Buffer.from(e.wire));
      if (!d.ok) throw new Error(`reference event does not decode: ${d.detail}`);
      return d.event;
    });
    const referencePath = join(dir, 'parcel-damage.json');
    writeFileSync(referencePath, formatReference(buildReference(decoded as ScoredEvent[], { createdAt: '2026-11-02T00:00:00Z', thresholds: THRESHOLDS, source: 'dashboards test' })));

    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 3, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();
    const live = makeScoredEvents({ n: N, seed: 11, fromMs: Date.now() - 60_000, spanMs: 50_000, idPrefix: 'live', models: [LIVE], thresholds: THRESHOLDS });
    await producer.send({ topic, messages: live.map((e, i) => ({ key: `k${i % 17}`, value: e.wire })) });
    // Some rejections, so the rejection panels and rule have a series to read.
    await producer.send({ topic, messages: makeMalformed(MALFORMED, 3).map((m, i) => ({ key: `bad${i}`, value: m.value })) });

    const checkpoints = join(dir, 'state');
    const { config } = parseConfig(
      {
        kafka: { brokers, groupId: uniqueName('dashboards-group'), topics: [topic] },
        models: [{ name: MODEL, thresholds: THRESHOLDS, segmentKeys: ['line'], reference: referencePath }],
        checkpoint: { dir: checkpoints, interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
        // headroom_alert_firing exists (0 or 1) for every alert of a configured rule.
        alerts: {
          evaluateEvery: '1s',
          rules: [
            { name: 'line-share-rise', kind: 'shareRise', model: MODEL, segmentKey: 'line', threshold: 0.1, window: '5m', minCount: 50 },
            { name: 'model-drift', kind: 'drift', model: MODEL, statistic: 'psi', window: '5m', minCount: 50 },
          ],
        },
      },
      'dashboards-prometheus.test.ts',
      {},
    );
    watcher = createWatcher({ config, store: new FileCheckpointStore({ dir: checkpoints }), logger: pino({ level: 'warn' }), registry: new Registry(), nowMs: () => Date.now() });
    await watcher.start();
    const address = watcher.url();
    if (address === undefined) throw new Error('the watcher has no HTTP address after start()');
    prometheus = await startPrometheus([{ job: 'headroom', address: new URL(address).host }], { ruleFiles: ruleFiles().map((f) => join(DASHBOARDS_DIR, f)) });

    // All events counted and scraped, and a few scrapes since, so rates and deriv() have two samples.
    await prometheus.waitFor(`headroom_events_total{job="headroom",model="${MODEL}",segment="all"}`, (r) => Number(r[0]?.value[1]) === N, 90_000);
    await prometheus.waitFor('count_over_time(headroom_consumer_lag_messages[1m])', (r) => r.length > 0 && r.every((s) => Number(s.value[1]) >= 3), 60_000);
  }, 240_000);

  afterAll(async () => {
    await prometheus?.stop();
    await watcher?.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  const prom = (): RunningPrometheus => {
    if (prometheus === undefined) throw new Error('Prometheus did not start');
    return prometheus;
  };

  it('Prometheus loads every rule group of dashboards/ and evaluates each rule without error', async () => {
    const expected = ruleFiles().flatMap(ruleExpressions);
    let groups: RuleGroupStatus[] = [];
    const deadline = performance.now() + 60_000;
    // A rule's health is "unknown" until its first evaluation.
    while (performance.now() < deadline) {
      const body = (await (await fetch(`${prom().url}/api/v1/rules`)).json()) as { status: string; data: { groups: RuleGroupStatus[] } };
      expect(body.status).toBe('success');
      groups = body.data.groups;
      if (groups.flatMap((g) => g.rules).length === expected.length && groups.every((g) => g.rules.every((r) => r.health !== 'unknown'))) break;
      await new Promise((resolve) => setTimeout(resolve, 500));
    }
    expect(groups.map((g) => g.name).sort()).toEqual([...new Set(expected.map((r) => r.group))].sort());
    for (const rule of expected) {
      const loaded = groups.find((g) => g.name === rule.group)?.rules.find((r) => r.name === rule.name);
      expect(loaded, rule.where).toBeDefined();
      expect(loaded?.type, rule.where).toBe(rule.kind === 'alert' ? 'alerting' : 'recording');
      expect(loaded?.lastError ?? '', rule.where).toBe('');
      expect(loaded?.health, rule.where).toBe('ok');
    }
  });

  it('every panel and variable query of the dashboards parses and returns data', async () => {
    const queries = dashboardFiles().flatMap((f) => [...variableQueries(f), ...panelQueries(f)]);
    expect(queries.length).toBeGreaterThan(30);
    expect(queries.filter((q) => q.expr.includes('headroom_alert_firing')).length).toBeGreaterThanOrEqual(3);
    const checks = queries.map((q) => ({ ...q, expr: substitute(q.expr, VARIABLES) }));
    expect(await problemsOf(prom(), checks)).toEqual([]);
  });

  it('every rule expression parses and returns data (alert conditions in bool form)', async () => {
    const rules = ruleFiles().flatMap(ruleExpressions);
    expect(rules.filter((r) => r.kind === 'alert').length).toBeGreaterThanOrEqual(8);
    // As written, each must parse (an alert condition is usually empty); the bool form must also have data.
    const asWritten = rules.map((r) => ({ where: `${r.where} (as written)`, expr: r.expr }));
    for (const c of asWritten) await expect(prom().query(c.expr), c.where).resolves.toBeDefined();
    const checks = rules.map((r) => ({ ...r, expr: r.kind === 'alert' ? boolForm(r.expr) : r.expr }));
    expect(await problemsOf(prom(), checks)).toEqual([]);
  });

  it('the recorded Wilson lower bound equals the one /api/series computes', async () => {
    const segment = 'line=2';
    const recorded = await prom().waitFor(
      `headroom:low_margin_ratio:wilson_lower95{job="headroom",model="${MODEL}",segment="${segment}",window="5m"}`,
      (r) => r.length === THRESHOLDS.length,
      30_000,
    );
    const url = watcher?.url() ?? '';
    const api = (await (await fetch(`${url}/api/series/${MODEL}/${VERSION}/${encodeURIComponent(segment)}`)).json()) as {
      views: { window: string; lowMargin: { threshold: number; live: { lower: number; share: number } }[] }[];
    };
    const view = api.views.find((v) => v.window === '5m');
    for (const t of THRESHOLDS) {
      const fromApi = view?.lowMargin.find((l) => l.threshold === t)?.live;
      const fromRule = Number(recorded.find((r) => r.metric.threshold === String(t))?.value[1]);
      expect(fromApi, `θ=${t}`).toBeDefined();
      expect(fromApi?.lower ?? 0, `θ=${t}: a bound strictly inside (0, share)`).toBeGreaterThan(0);
      expect(fromRule, `θ=${t}`).toBeCloseTo(fromApi?.lower ?? Number.NaN, 12);
      expect(fromRule).toBeLessThan(fromApi?.share ?? 0);
    }
  });
});

type Check = FoundQuery;

/**
 * Runs every query; lists each that fails to parse and each that has no data within a minute (a rate or
 * a fresh recording rule may need another scrape or evaluation). All problems at once, so one run shows
 * every broken query.
 */
async function problemsOf(prometheus: RunningPrometheus, checks: readonly Check[]): Promise<string[]> {
  const problems: string[] = [];
  let empty: Check[] = [];
  for (const c of checks) {
    try {
      const result = await prometheus.query(c.expr);
      if (result.length === 0) empty.push(c);
    } catch (error) {
      problems.push(`${c.where} does not run: ${(error as Error).message}`);
    }
  }
  const deadline = performance.now() + 60_000;
  while (empty.length > 0 && performance.now() < deadline) {
    await new Promise((resolve) => setTimeout(resolve, 1_000));
    const still: Check[] = [];
    for (const c of empty) if ((await prometheus.query(c.expr)).length === 0) still.push(c);
    empty = still;
  }
  for (const c of empty) problems.push(`${c.where} returns no data: ${c.expr}`);
  return problems;
}
