/**
 * What a newcomer sees: `headroom demo --speed 60` (the CLI, no broker), its page in headless Chromium.
 * Before the scenario's drift the page loads with no console error and draws a live and a reference
 * curve; after it, line 3's alert shows on the page. The last screenshot is the README's picture
 * (test-artifacts/demo-page.png).
 */
import { readFileSync } from 'node:fs';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { keyColoursOnCanvas, launchChromium, openPage } from '../harness/browser.js';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { until } from '../harness/wait.js';

describe.skipIf(!inject('chromiumAvailable'))('headroom demo in headless Chromium', () => {
  let demo: RunningCli | undefined;
  let browser: Browser | undefined;
  let base = '';

  beforeAll(async () => {
    demo = spawnHeadroom(['demo', '--speed', '60', '--port', '0', '--duration', '30m']);
    await until('the demo to print its page address', () => /page:\s+http:\/\/127\.0\.0\.1:\d+\//.test(demo?.stdout() ?? ''), 90_000);
    base = (/page:\s+(http:\/\/127\.0\.0\.1:\d+)\//.exec(demo.stdout()) as RegExpExecArray)[1] as string;
    browser = await launchChromium();
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    demo?.child.kill('SIGTERM');
    if (demo !== undefined) await demo.exited;
  });

  it('loads without errors, draws live against reference, and shows line 3 firing after the drift', async () => {
    const opened = await openPage(browser as Browser, `${base}/`, { waitFor: 'body[data-drawn="true"]', viewport: { width: 1280, height: 900 } });
    try {
      expect(await opened.page.locator('#series-list li').count()).toBeGreaterThanOrEqual(4); // all + three lines
      const cdf = await keyColoursOnCanvas(opened.page, 'chart-cdf', 'key-cdf');
      expect(Object.keys(cdf)).toHaveLength(2); // the live curve and the reference's
      for (const [colour, n] of Object.entries(cdf)) expect(n, `CDF curve ${colour}`).toBeGreaterThan(30);

      // The drift starts at 03:00 of scenario time (3 s of wall time at 60x); the page refreshes itself.
      await opened.page.waitForFunction(
        () => {
          const doc = (globalThis as unknown as { document: { querySelectorAll(s: string): ArrayLike<{ textContent: string | null }> } }).document;
          return Array.from(doc.querySelectorAll('#raised-list li')).some((li) => (li.textContent ?? '').includes('line=3') && (li.textContent ?? '').includes('firing'));
        },
        undefined,
        { timeout: 90_000 },
      );
      const raised = await opened.page.locator('#raised-list li').allTextContents();
      expect(raised.every((t) => t.includes('line=3'))).toBe(true); // lines 1 and 2 stay calm
      // The picture: line 3 chosen, its curves and its alerts.
      await opened.page.locator('#series-list .s-name', { hasText: /^parcel-damage · line=3$/ }).click();
      await opened.page.waitForFunction(() => {
        const doc = (globalThis as unknown as { document: { querySelectorAll(s: string): ArrayLike<unknown> } }).document;
        return doc.querySelectorAll('#alerts-body .phase.firing').length > 0;
      });
      const line3 = await keyColoursOnCanvas(opened.page, 'chart-cdf', 'key-cdf');
      for (const [colour, n] of Object.entries(line3)) expect(n, `line 3 CDF curve ${colour}`).toBeGreaterThan(30);
      const path = await opened.screenshot('demo-page');
      expect(readFileSync(path).subarray(1, 4).toString()).toBe('PNG');
      expect(opened.errors).toEqual([]);
      const origin = new URL(base).origin;
      expect(opened.requests.filter((r) => new URL(r).origin !== origin)).toEqual([]);
    } finally {
      await opened.close();
    }
  }, 150_000);
});
