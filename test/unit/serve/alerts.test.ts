/**
 * Alerts on /metrics and /api/alerts: a real AlertBook evaluated on the serve fixture's series (the main
 * series' recent margins sit well below its reference), exported as headroom_alert_firing and listed by
 * the API, and the exposition through the real `promtool check metrics`.
 */
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AlertBook, evaluateAlerts, parseAlertsSection } from '../../../src/alerts/index.js';
import { createApp, createMetrics } from '../../../src/serve/index.js';
import type { AlertReport } from '../../../src/serve/index.js';
import { parseExposition, value } from './exposition.js';
import { MODEL, VERSION, VIEWS, world } from './fixture.js';
import { checkMetrics, havePromtool, mustRunPromtool } from './promtool.js';

const { rules } = parseAlertsSection({
  rules: [
    // No hold: the first evaluation with the condition fires, so one evaluation shows a firing alert.
    { name: 'share-up', kind: 'shareRise', model: MODEL, threshold: 0.1, window: '5m', minCount: 100, holdFor: '0s' },
    { name: 'line-share-up', kind: 'shareRise', model: MODEL, segmentKey: 'line', threshold: 0.1, window: '5m', minCount: 100, holdFor: '0s' },
  ],
});

const w = world();
const book = new AlertBook(rules);
const { transitions, failures } = evaluateAlerts(book, w.source.snapshots, VIEWS);
const report: AlertReport = { rules, alerts: book.status(), recent: transitions };
const source = { ...w.source, alerts: () => report };
const registry = new Registry();
createMetrics({ registry, source, views: VIEWS, nowMs: () => w.nowMs });
const app = createApp({ registry, source, views: VIEWS, nowMs: () => w.nowMs, onError: () => undefined });
let server: Server;
let base: string;

beforeAll(async () => {
  server = await new Promise<Server>((resolve) => {
    const s = app.listen(0, '127.0.0.1', () => resolve(s));
  });
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  await new Promise<void>((resolve, reject) => server.close((e) => (e ? reject(e) : resolve())));
});

describe('alerts on /metrics and the API', () => {
  it('fires on the main series, whose recent share is far above its reference, and not on the quiet line', () => {
    expect(failures).toEqual([]);
    expect(transitions.map((t) => `${t.rule} ${t.series.segment} ${t.from}>${t.to}`)).toEqual(['share-up all calm>brewing', 'share-up all brewing>firing']);
    // line=9's 5m view is empty: fewer events than minCount, so it says nothing and stays calm.
    expect(book.phaseOf('line-share-up', { model: MODEL, version: VERSION, segment: 'line=9' })).toBe('calm');
  });

  it('exports headroom_alert_firing 1 for the firing alert and 0 for the calm one', async () => {
    const { samples } = parseExposition(await registry.metrics());
    expect(value(samples, 'headroom_alert_firing', { model: MODEL, version: VERSION, segment: 'all', rule: 'share-up' })).toBe(1);
    expect(value(samples, 'headroom_alert_firing', { model: MODEL, version: VERSION, segment: 'line=9', rule: 'line-share-up' })).toBe(0);
    expect(samples.filter((s) => s.name === 'headroom_alert_firing')).toHaveLength(book.status().length);
  });

  it('lists rules, alerts with their readings, and the latest transitions at /api/alerts', async () => {
    const response = await fetch(`${base}/api/alerts`);
    expect(response.status).toBe(200);
    const body = (await response.json()) as { rules: unknown[]; alerts: Record<string, unknown>[]; recent: Record<string, unknown>[] };
    expect(body.rules).toEqual([
      { name: 'share-up', kind: 'shareRise', model: MODEL, segmentKey: null },
      { name: 'line-share-up', kind: 'shareRise', model: MODEL, segmentKey: 'line' },
    ]);
    const firing = body.alerts.find((a) => a.rule === 'share-up');
    expect(firing).toMatchObject({ kind: 'shareRise', model: MODEL, version: VERSION, segment: 'all', phase: 'firing', verdict: 'above' });
    expect(firing?.value as number).toBeGreaterThan(firing?.fireLevel as number);
    expect(body.alerts.find((a) => a.rule === 'line-share-up')).toMatchObject({ phase: 'calm', verdict: 'unknown', reason: expect.stringContaining('fewer than minCount') });
    expect(body.recent).toEqual([
      expect.objectContaining({ rule: 'share-up', from: 'calm', to: 'brewing', at: new Date(transitions[0]?.at as number).toISOString() }),
      expect.objectContaining({ rule: 'share-up', from: 'brewing', to: 'firing', id: transitions[1]?.id }),
    ]);
  });
});

describe.skipIf(!havePromtool && !mustRunPromtool)('promtool check metrics with alerts', () => {
  it('finds nothing to complain about', async () => {
    const result = checkMetrics(await registry.metrics());
    expect(result.stdout + result.stderr).toBe('');
    expect(result.status).toBe(0);
  });
});
