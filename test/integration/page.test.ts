/**
 * The live page end to end: a watcher on the real broker, fed three parcel lines of which line 3 sinks,
 * with alert rules, plus events whose model, version and segment names are markup; then `/` in a real
 * headless Chromium. The page must log no error, ask nothing of another origin, list every series, draw
 * the live and the reference curves of the chosen one, show line 3's alert, and show the hostile names as
 * text without running them. Leaves test-artifacts/page.png for a person to look at.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Kafka, logLevel, Partitioners } from 'kafkajs';
import { pino } from 'pino';
import type { Browser } from 'playwright-core';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { parseConfig } from '../../src/config/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { FileCheckpointStore } from '../../src/state/index.js';
import { createWatcher } from '../../src/stream/index.js';
import type { Watcher } from '../../src/stream/index.js';
import { keyColoursOnCanvas, launchChromium, openPage } from '../harness/browser.js';
import type { OpenedPage } from '../harness/browser.js';
import { uniqueName } from '../harness/names.js';
import { makeScoredEvents } from '../harness/scored-events.js';
import type { ModelSpec } from '../harness/scored-events.js';
import { sleep, until } from '../harness/wait.js';

const MODEL = 'parcel-damage';
const VERSION = '2026.11.3';
const THETA = 0.25;
const MINUTE = 60_000;
const MINUTES = 10;
const PER_LINE_MINUTE = 150;
const HOSTILE_MODEL = '<script>alert(1)</script>';
const HOSTILE_VERSION = 'v1</title><script>alert(2)</script>';
const HOSTILE_LINE = '"><img src=x onerror=alert(3)>';
const steady = (line: string): ModelSpec => ({ name: MODEL, version: VERSION, kind: 'probability', segments: { line: [line] } });

interface SeriesJson {
  model: string;
  version: string;
  segment: string;
}

describe.skipIf(!inject('chromiumAvailable'))('the live page of a watcher on the real broker, in headless Chromium', () => {
  const brokers = inject('kafkaBrokers').split(',');
  const kafka = new Kafka({ clientId: 'headroom-page-test', brokers, logLevel: logLevel.WARN });
  const admin = kafka.admin();
  const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner, allowAutoTopicCreation: false });
  const topic = uniqueName('page-events');
  const dir = mkdtempSync(join(tmpdir(), 'headroom-page-'));
  let watcher: Watcher | undefined;
  let browser: Browser | undefined;
  let base = '';
  /** For each labelled line-1 event, whether its label says the model was wrong. */
  const line1Labels: boolean[] = [];

  const referencePath = join(dir, 'parcel-damage.json');
  const referenceEvents = ['1', '2', '3'].flatMap((line, i) =>
    makeScoredEvents({ n: 1_500, seed: 70 + i, fromMs: Date.UTC(2026, 10, 1), spanMs: 3_600_000, idPrefix: `ref-${line}`, models: [steady(line)], thresholds: [THETA] }),
  );
  writeFileSync(
    referencePath,
    formatReference(
      buildReference(
        referenceEvents.map((e) => (decodeScoredEvent(Buffer.from(e.wire)) as { event: ScoredEvent }).event),
        { createdAt: '2026-11-02T00:00:00Z', thresholds: [0.1, THETA], segmentKeys: ['line'] },
      ),
    ),
  );

  beforeAll(async () => {
    const { config } = parseConfig(
      {
        kafka: { brokers, clientId: 'headroom-page-test', groupId: uniqueName('page-group'), topics: [topic] },
        models: [
          { name: MODEL, thresholds: [0.1, THETA], segmentKeys: ['line'], reference: referencePath },
          { name: '*', thresholds: [0.1, THETA], segmentKeys: ['line'] },
        ],
        windows: ['5m', '1h'],
        checkpoint: { dir: join(dir, 'state'), interval: '1s' },
        http: { host: '127.0.0.1', port: 0 },
        alerts: {
          evaluateEvery: '200ms',
          rules: [{ name: 'line-share-rise', kind: 'shareRise', model: MODEL, segmentKey: 'line', threshold: THETA, window: '5m', minCount: 300, holdFor: '2m', clearFor: '5m' }],
        },
      },
      'page.test.ts',
      {},
    );
    await admin.connect();
    await admin.createTopics({ topics: [{ topic, numPartitions: 3, replicationFactor: 1 }], waitForLeaders: true });
    await producer.connect();
    watcher = createWatcher({
      config,
      store: new FileCheckpointStore({ dir: config.checkpoint.dir }),
      logger: pino({ level: 'warn' }, { write: () => undefined }),
      registry: new Registry(),
      nowMs: () => Date.now(),
    });
    await watcher.start();
    base = watcher.url() as string;

    // Ten minutes of event time, a minute at a time; line 3's margins sink from minute 3 on.
    const start = Date.now() - (MINUTES + 1) * MINUTE;
    for (let m = 0; m < MINUTES; m++) {
      const minute = ['1', '2', '3'].flatMap((line) =>
        makeScoredEvents({ n: PER_LINE_MINUTE, seed: 2_000 * m + Number(line), fromMs: start + m * MINUTE, spanMs: MINUTE, idPrefix: `m${m}-${line}`, thresholds: [THETA], models: [{ ...steady(line), spread: line === '3' && m >= 3 ? 0.25 : 1 }] }),
      );
      const hostile = makeScoredEvents({
        n: 20,
        seed: 9_000 + m,
        fromMs: start + m * MINUTE,
        spanMs: MINUTE,
        idPrefix: `h${m}`,
        thresholds: [THETA],
        models: [
          { name: HOSTILE_MODEL, version: HOSTILE_VERSION, kind: 'probability', segments: { line: ['1'] } },
          { name: MODEL, version: VERSION, kind: 'probability', segments: { line: [HOSTILE_LINE] } },
        ],
      });
      // Line 1's events carry the inspector's verdict: wrong (label against the predicted side) for every 7th.
      const labelled = minute.map((e, i) => {
        if (e.segment.line !== '1') return e.wire;
        const event = JSON.parse(e.wire) as { score: { p: number }; label?: number };
        const predicted = event.score.p >= 0.5 ? 1 : 0;
        const label = i % 7 === 0 ? 1 - predicted : predicted;
        if (event.score.p === 0.5) return e.wire; // on the boundary: no side to be right or wrong about
        line1Labels.push(label !== predicted);
        return JSON.stringify({ ...event, label });
      });
      await producer.send({ topic, messages: [...labelled, ...hostile].map((value, i) => ({ key: `parcel-${m}-${i}`, value: typeof value === 'string' ? value : value.wire })) });
      await sleep(300);
    }
    const firing = async (): Promise<boolean> => {
      const body = (await (await fetch(`${base}/api/alerts`)).json()) as { alerts: { segment: string; phase: string }[] };
      return body.alerts.some((a) => a.segment === 'line=3' && a.phase === 'firing');
    };
    await until('line 3 to fire', firing, 60_000);
    browser = await launchChromium();
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    await watcher?.close().catch(() => undefined);
    await producer.disconnect();
    await admin.disconnect();
    rmSync(dir, { recursive: true, force: true });
  });

  const open = async (): Promise<OpenedPage & { dialogs: string[] }> => {
    const opened = await openPage(browser as Browser, `${base}/`, { waitFor: 'body[data-drawn="true"]', viewport: { width: 1280, height: 900 } });
    const dialogs: string[] = [];
    opened.page.on('dialog', (d) => {
      dialogs.push(d.message());
      void d.dismiss();
    });
    return Object.assign(opened, { dialogs });
  };

  const titleIs = async (opened: OpenedPage, title: string): Promise<void> => {
    await opened.page.waitForFunction((t) => {
      const doc = (globalThis as unknown as { document: { getElementById(id: string): { textContent: string | null } | null } }).document;
      return doc.getElementById('detail-title')?.textContent === t;
    }, title);
  };

  it('lists every series, opens on the firing line with its live and reference curves and its alert, and asks only its own server', async () => {
    const listed = ((await (await fetch(`${base}/api/series`)).json()) as { series: SeriesJson[] }).series;
    expect(listed.length).toBeGreaterThanOrEqual(6);
    const opened = await open();
    try {
      expect(await opened.page.locator('#series-list li').count()).toBe(listed.length);
      // It opens on the series with a firing alert: line 3.
      await titleIs(opened, `${MODEL} @ ${VERSION} · line=3`);
      const cdf = await keyColoursOnCanvas(opened.page, 'chart-cdf', 'key-cdf');
      expect(Object.keys(cdf).sort()).toEqual(['#3b3f45', '#D55E00'].sort()); // reference and live
      for (const [colour, n] of Object.entries(cdf)) expect(n, `CDF curve ${colour}`).toBeGreaterThan(30);
      const history = await keyColoursOnCanvas(opened.page, 'chart-history', 'key-history');
      expect(Object.keys(history).length).toBeGreaterThanOrEqual(2);
      for (const [colour, n] of Object.entries(history)) expect(n, `history curve ${colour}`).toBeGreaterThan(30);
      // The alert, raised on top and in the series' own table.
      const raised = await opened.page.locator('#raised-list li').allTextContents();
      expect(raised.some((t) => t.includes('firing') && t.includes('line-share-rise') && t.includes('line=3'))).toBe(true);
      expect(await opened.page.locator('#alerts-body .phase.firing').count()).toBe(1);
      expect(await opened.page.textContent('#recent-list')).toContain('brewing → firing');
      const badge = opened.page.locator('#series-list button[aria-current="true"] .phase');
      expect(await badge.textContent()).toBe('firing');
      // Drift figures for both windows, against the reference.
      expect(await opened.page.locator('#drift-body tr').count()).toBe(2);
      expect(await opened.page.textContent('#caution')).toContain('a statistical signal, not a verdict');
      const path = await opened.screenshot('page');
      expect(readFileSync(path).subarray(1, 4).toString()).toBe('PNG');

      // Choosing another line draws it: line 1, calm, still with both curves.
      await opened.page.locator('#series-list .s-name', { hasText: /^parcel-damage · line=1$/ }).click();
      await titleIs(opened, `${MODEL} @ ${VERSION} · line=1`);
      await opened.page.waitForFunction(() => {
        const doc = (globalThis as unknown as { document: { querySelector(s: string): unknown } }).document;
        return doc.querySelector('#chart-cdf canvas') !== null;
      });
      const calm = await keyColoursOnCanvas(opened.page, 'chart-cdf', 'key-cdf');
      for (const [colour, n] of Object.entries(calm)) expect(n, `line 1 CDF curve ${colour}`).toBeGreaterThan(30);
      expect(Object.keys(calm)).toHaveLength(2);
      expect(await opened.page.locator('#alerts-body .phase.calm').count()).toBe(1);
      // Line 1's labels: its 5m/1h windows list the labelled count and the error rate computed here.
      expect(await opened.page.locator('#labels-none').isHidden()).toBe(true);
      const labelRows = await opened.page.locator('#labels-body tr').allTextContents();
      const wrongShare = line1Labels.filter(Boolean).length / line1Labels.length;
      expect(labelRows.some((r) => r.includes(`${line1Labels.length.toLocaleString('en-US')}`) && r.includes(`${(100 * wrongShare).toFixed(1)}%`))).toBe(true);
      // The margin-loss curve at θ = 0 is the error rate; reliability bins are listed for probability scores.
      // The 1h window holds every labelled event of the test.
      await opened.page.selectOption('#window', '1h');
      await opened.page.waitForFunction(() => {
        const doc = (globalThis as unknown as { document: { getElementById(id: string): { textContent: string | null } | null } }).document;
        return (doc.getElementById('loss-title')?.textContent ?? '').includes('(1h)');
      });
      const lossRows = await opened.page.locator('#loss-body tr').allTextContents();
      expect(lossRows.length).toBeGreaterThanOrEqual(5);
      expect(lossRows.some((r) => r.startsWith('0') && r.includes(`${(100 * wrongShare).toFixed(1)}%`))).toBe(true);
      expect(await opened.page.locator('#reliability-body tr').count()).toBe(10);

      expect(opened.errors).toEqual([]);
      expect(opened.dialogs).toEqual([]);
      const origin = new URL(base).origin;
      expect(opened.requests.filter((r) => new URL(r).origin !== origin)).toEqual([]);
      expect(opened.requests.filter((r) => r.includes('/api/series/'))).not.toEqual([]);
    } finally {
      await opened.close();
    }
  });

  it('shows model, version and segment names that hold markup as text, and runs none of them', async () => {
    const opened = await open();
    try {
      const names = await opened.page.locator('#series-list .s-name').allTextContents();
      expect(names).toContain(`${HOSTILE_MODEL} · all`);
      expect(names).toContain(`${MODEL} · line=${HOSTILE_LINE}`);
      const subs = await opened.page.locator('#series-list .s-sub').allTextContents();
      expect(subs.some((s) => s.startsWith(`${HOSTILE_VERSION} · `))).toBe(true);
      await opened.page.locator('#series-list .s-name', { hasText: `${HOSTILE_MODEL} · all` }).click();
      await titleIs(opened, `${HOSTILE_MODEL} @ ${HOSTILE_VERSION} · all`);
      // No reference for that model: the live curve alone, and the page says why.
      expect(await opened.page.textContent('#cdf-note')).toContain('no reference');
      const live = await keyColoursOnCanvas(opened.page, 'chart-cdf', 'key-cdf');
      expect(Object.keys(live)).toEqual(['#D55E00']);
      expect(live['#D55E00']).toBeGreaterThan(30);
      await opened.page.locator('#series-list .s-name', { hasText: `line=${HOSTILE_LINE}` }).click();
      await titleIs(opened, `${MODEL} @ ${VERSION} · line=${HOSTILE_LINE}`);
      await opened.page.fill('#filter', 'onerror');
      expect(await opened.page.locator('#series-list li:not([hidden])').count()).toBe(1);
      // Nothing ran and nothing was added: no dialog, no image, only the page's own two scripts.
      expect(opened.dialogs).toEqual([]);
      expect(await opened.page.locator('img').count()).toBe(0);
      expect(await opened.page.locator('script').count()).toBe(2);
      expect(await opened.page.title()).toBe('headroom · live margins');
      expect(opened.errors).toEqual([]);
    } finally {
      await opened.close();
    }
  });
});
