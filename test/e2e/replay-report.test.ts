/**
 * report.html end to end: a real replay over a generated log (a drifting line, and model and segment names
 * that try to break out of the page's script), then the file opened from disk in a real headless Chromium.
 * The page must load nothing, log no error, draw every chart (the colours of its key are on the canvas),
 * show the hostile names as text, and leave a screenshot in test-artifacts/replay-report.png.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { parseReplayWindow, runReplay } from '../../src/replay/index.js';
import type { ReplayReport } from '../../src/replay/index.js';
import { keyColoursOnCanvas as pageKeyColours, launchChromium, openPage } from '../harness/browser.js';
import type { OpenedPage } from '../harness/browser.js';
import { rng } from '../unit/events/prng.js';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 10, 24, 6);
const HOURS = 12;
const HOSTILE = '</script><script>window.__owned=1</script><img src=x onerror="window.__owned=2">';

/** One event every 12 s per line; line 3 grows unsure of itself from hour 5 on. */
function logLines(seed: number, hours: number, drift: boolean): string[] {
  const r = rng(seed);
  const out: string[] = [];
  for (let t = T0; t < T0 + hours * HOUR; t += 4_000) {
    const i = out.length;
    const line = String(1 + (i % 3));
    const hour = Math.floor((t - T0) / HOUR);
    const squeeze = drift && line === '3' && hour >= 5 ? Math.max(0.25, 1 - (hour - 4) * 0.12) : 1;
    const p = Math.round((0.5 + (r.next() - 0.5) * squeeze) * 1000) / 1000;
    out.push(JSON.stringify({ id: `e-${seed}-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(t).toISOString(), score: { kind: 'probability', p }, segment: { line } }));
    if (drift && i % 40 === 0) {
      out.push(JSON.stringify({ id: `h-${i}`, model: HOSTILE, version: 'v1', time: new Date(t).toISOString(), score: { kind: 'probability', p: r.next() }, segment: { line: '1' } }));
      out.push(JSON.stringify({ id: `s-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(t).toISOString(), score: { kind: 'probability', p: r.next() }, segment: { line: HOSTILE } }));
    }
  }
  return out;
}

/** Pixels of a chart's canvas within a small distance of each colour of the chart's key. */
async function keyColoursOnCanvas(opened: OpenedPage, chartId: string, keyId: string): Promise<Record<string, number>> {
  return pageKeyColours(opened.page, chartId, keyId);
}

describe.skipIf(!inject('chromiumAvailable'))('report.html in headless Chromium', () => {
  const dir = mkdtempSync(join(tmpdir(), 'headroom-report-html-'));
  const out = join(dir, 'out');
  let browser: Browser | undefined;
  let report: ReplayReport;
  let html: string;

  beforeAll(async () => {
    const held = logLines(2, 6, false).map((line) => {
      const d = decodeScoredEvent(Buffer.from(line));
      if (!d.ok) throw new Error(d.detail);
      return d.event as ScoredEvent;
    });
    const refPath = join(dir, 'reference.json');
    writeFileSync(refPath, formatReference(buildReference(held, { createdAt: '2026-11-20T00:00:00Z', thresholds: [0.1, 0.25], segmentKeys: ['line'] })));
    const input = join(dir, 'scores.jsonl');
    writeFileSync(input, `${logLines(1, HOURS, true).join('\n')}\n`);
    const written = await runReplay(
      { inputs: [input], window: parseReplayWindow('1h'), out, references: [refPath], progress: false, metricsStepMs: 0 },
      { stdout: { write: () => true }, stderr: { write: () => true }, nowMs: () => Date.UTC(2026, 11, 2) },
    );
    html = join(out, 'report.html');
    expect(written.written).toContain(html);
    report = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')) as ReplayReport;
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('opens from disk with no error, fetches nothing, draws every chart and leaves a screenshot', async () => {
    const opened = await openPage(browser as Browser, html, { waitFor: 'body[data-drawn="true"]', viewport: { width: 1280, height: 900 } });
    try {
      expect(opened.errors).toEqual([]);
      expect(opened.requests).toEqual([pathToFileURL(html).href]);
      // It opens on the series furthest from its reference: line 3, which drifts.
      const worst = [...report.windows].filter((w) => w.ks !== null).sort((a, b) => (b.ks?.statistic ?? 0) - (a.ks?.statistic ?? 0))[0];
      expect(worst?.segment).toBe('line=3');
      expect(await opened.page.textContent('#series-title')).toBe('parcel-damage @ 2026.11.3 · line=3');
      expect(await opened.page.locator('#windows-body tr').count()).toBe(report.windows.filter((w) => w.segment === 'line=3').length);
      // Distinct colours: one per θ (live and reference share it); KS, Wasserstein, PSI; the reference CDF and at least one window's.
      for (const [chart, key, colours] of [['chart-low-margin', 'key-low-margin', 2], ['chart-drift', 'key-drift', 3], ['chart-cdf', 'key-cdf', 2]] as const) {
        const found = await keyColoursOnCanvas(opened, chart, key);
        expect(Object.keys(found).length, chart).toBeGreaterThanOrEqual(colours);
        for (const [colour, n] of Object.entries(found)) expect(n, `${chart} ${colour}`).toBeGreaterThan(30);
      }
      expect(await opened.page.textContent('#caution')).toContain('a statistical signal, not a verdict');
      const path = await opened.screenshot('replay-report');
      expect(readFileSync(path).subarray(1, 4).toString()).toBe('PNG');
    } finally {
      await opened.close();
    }
  });

  it('shows model and segment names that hold </script> as text, and runs none of them', async () => {
    const opened = await openPage(browser as Browser, html, { waitFor: 'body[data-drawn="true"]' });
    try {
      const options = await opened.page.locator('#series-select option').allTextContents();
      const hostileModel = options.findIndex((o) => o.startsWith(HOSTILE));
      const hostileSegment = options.findIndex((o) => o.endsWith(`line=${HOSTILE}`));
      expect(hostileModel).toBeGreaterThanOrEqual(0);
      expect(hostileSegment).toBeGreaterThanOrEqual(0);
      await opened.page.selectOption('#series-select', { index: hostileModel });
      expect(await opened.page.textContent('#series-title')).toBe(`${HOSTILE} @ v1 · all`);
      // No reference for that model: its share is drawn, its drift says why there is none.
      const found = await keyColoursOnCanvas(opened, 'chart-low-margin', 'key-low-margin');
      expect(Object.values(found).length).toBeGreaterThanOrEqual(2);
      for (const n of Object.values(found)) expect(n).toBeGreaterThan(30);
      expect(await opened.page.textContent('#note-drift')).toContain('no reference');
      await opened.page.selectOption('#series-select', { index: hostileSegment });
      expect(await opened.page.textContent('#series-title')).toBe(`parcel-damage @ 2026.11.3 · line=${HOSTILE}`);
      expect(await opened.page.textContent('#overview-body')).toContain(HOSTILE);
      expect(await opened.page.evaluate(() => (globalThis as unknown as { __owned?: number }).__owned)).toBeUndefined();
      expect(await opened.page.locator('img').count()).toBe(0);
      expect(opened.errors).toEqual([]);
      expect(opened.requests).toHaveLength(1);
    } finally {
      await opened.close();
    }
  });
});
