/**
 * The live page with many series, in headless Chromium over createApp (no broker: a plain source over real
 * windows, test/unit/serve/fixture.ts). The list is updated in place by key each refresh rather than drawn
 * anew, series come and go in their sorted place, and only the chosen series' figures are fetched.
 * Nothing here times anything: it checks what the page does, not how fast.
 */
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import type { Browser } from 'playwright-core';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { SeriesSnapshot } from '../../src/serve/index.js';
import { createApp } from '../../src/serve/index.js';
import { launchChromium, openPage } from '../harness/browser.js';
import { MINUTE, T0, VIEWS, fakeSource, live, margins, spread } from '../unit/serve/fixture.js';

const SERIES = 120;

function snapshot(i: number): SeriesSnapshot {
  const values = margins(40, 100 + i, 1 + (i % 5) / 2);
  return { model: `model-${String(i % 12).padStart(2, '0')}`, version: '1', segment: i < 12 ? 'all' : `line=${String(i).padStart(3, '0')}`, events: 40, windows: live(spread(values, T0 + 50 * MINUTE, 15_000)).windows, reference: undefined };
}

interface Doc {
  querySelectorAll(s: string): ArrayLike<{ dataset: Record<string, string | undefined> }>;
  getElementById(id: string): { textContent: string | null } | null;
}
// Functions run inside the page cannot close over Node's scope: each takes the document this way.
type InPage = { document: Doc };

describe.skipIf(!inject('chromiumAvailable'))('the live page with many series', () => {
  const source = fakeSource(Array.from({ length: SERIES }, (_, i) => snapshot(i)));
  let server: Server;
  let base: string;
  let browser: Browser | undefined;

  beforeAll(async () => {
    const app = createApp({ registry: new Registry(), source, views: VIEWS, nowMs: () => T0 + 62 * MINUTE });
    server = await new Promise<Server>((resolve) => {
      const s = app.listen(0, '127.0.0.1', () => resolve(s));
    });
    base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await new Promise<void>((resolve, reject) => server.close((e) => (e ? reject(e) : resolve())));
  });

  it('updates the list in place by key, places new series in order, drops gone ones, and fetches figures for the chosen series only', async () => {
    const opened = await openPage(browser as Browser, `${base}/`, { waitFor: 'body[data-drawn="true"]' });
    try {
      expect(await opened.page.locator('#series-list li').count()).toBe(SERIES);
      // Opens on the first series (no alerts here), and draws it.
      expect(await opened.page.textContent('#detail-title')).toBe('model-00 @ 1 · all');
      // Mark every row's element; after the next refresh, each must still be the same element.
      await opened.page.evaluate(() => {
        Array.from((globalThis as unknown as InPage).document.querySelectorAll('#series-list li')).forEach((li, i) => {
          li.dataset.mark = String(i);
        });
      });
      const added = snapshot(SERIES);
      source.snapshots.push({ ...added, model: 'model-05', segment: 'line=000a' });
      const gone = source.snapshots.splice(20, 1)[0] as SeriesSnapshot;
      const before = await opened.page.textContent('#status');
      await opened.page.waitForFunction((b) => (globalThis as unknown as InPage).document.getElementById('status')?.textContent !== b, before, { timeout: 20_000 });
      const rows = await opened.page.evaluate(() => Array.from((globalThis as unknown as InPage).document.querySelectorAll('#series-list li')).map((li) => li.dataset.mark ?? 'new'));
      expect(rows).toHaveLength(SERIES);
      expect(rows.filter((m) => m === 'new')).toHaveLength(1);
      expect(new Set(rows).size).toBe(SERIES); // nothing drawn twice
      const names = await opened.page.locator('#series-list .s-name').allTextContents();
      expect(names).not.toContain(`${gone.model} · ${gone.segment}`);
      const fresh = names.indexOf('model-05 · line=000a');
      expect(names[fresh - 1]).toBe('model-05 · all');
      expect(rows[fresh]).toBe('new');
      // The figures asked for: only the chosen series', however many are listed.
      const detailPaths = new Set(opened.requests.filter((r) => r.includes('/api/series/')).map((r) => new URL(r).pathname.split('/').slice(3, 6).join('/')));
      expect([...detailPaths]).toEqual(['model-00/1/all']);
      expect(opened.errors).toEqual([]);
    } finally {
      await opened.close();
    }
  });
});
