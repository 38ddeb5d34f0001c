/**
 * The live page's files as createApp serves them: the right bytes with the right type, a policy that lets
 * only the server's own scripts run, nothing from node_modules but uPlot's build, and a start that fails
 * naming the file when the page was not built. The page in a browser: test/integration/page.test.ts.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createRequire } from 'node:module';
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CAUTIONS } from '../../../src/replay/html.js';
import { createApp } from '../../../src/serve/index.js';
import { PAGE_CSP, PAGE_DIR } from '../../../src/serve/page.js';
import { caught } from '../caught.js';
import { VIEWS, world } from './fixture.js';

const w = world();
const uplot = dirname(createRequire(import.meta.url).resolve('uplot/package.json'));
let server: Server;
let base: string;

beforeAll(async () => {
  const app = createApp({ registry: new Registry(), source: w.source, views: VIEWS, nowMs: () => w.nowMs });
  server = await new Promise<Server>((resolve) => {
    const s = app.listen(0, '127.0.0.1', () => resolve(s));
  });
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  await new Promise<void>((resolve, reject) => server.close((e) => (e ? reject(e) : resolve())));
});

describe('the page and its assets', () => {
  it.each([
    ['/', join(PAGE_DIR, 'index.html'), 'text/html; charset=utf-8'],
    ['/assets/page.js', join(PAGE_DIR, 'page.js'), 'text/javascript; charset=utf-8'],
    ['/assets/page.css', join(PAGE_DIR, 'page.css'), 'text/css; charset=utf-8'],
    ['/assets/uPlot.iife.min.js', join(uplot, 'dist/uPlot.iife.min.js'), 'text/javascript; charset=utf-8'],
    ['/assets/uPlot.min.css', join(uplot, 'dist/uPlot.min.css'), 'text/css; charset=utf-8'],
    ['/assets/uPlot.LICENSE.txt', join(uplot, 'LICENSE'), 'text/plain; charset=utf-8'],
  ])('%s is the file %s, as %s, under the page policy', async (path, file, type) => {
    const res = await fetch(base + path);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toBe(type);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(res.headers.get('content-security-policy')).toBe(PAGE_CSP);
    expect(Buffer.from(await res.arrayBuffer()).equals(readFileSync(file))).toBe(true);
  });

  it("lets only the server's own scripts, styles and API be loaded", () => {
    expect(PAGE_CSP).toContain("default-src 'none'");
    expect(PAGE_CSP).toContain("script-src 'self'");
    expect(PAGE_CSP).toContain("connect-src 'self'");
    expect(PAGE_CSP).not.toContain('unsafe');
  });

  it('serves no other file: not the page folder, not node_modules, not a path that climbs out', async () => {
    for (const path of ['/assets/index.html', '/assets/', '/page/page.js', '/assets/../package.json', '/assets/%2e%2e/package.json', '/assets/uPlot.esm.js', '/index.html']) {
      const res = await fetch(base + path);
      expect(res.status, path).toBe(404);
      expect(res.headers.get('content-type'), path).toMatch(/^application\/json/);
    }
  });

  it('JSON answers carry a policy that runs nothing', async () => {
    const res = await fetch(`${base}/api/series`);
    expect(res.headers.get('content-security-policy')).toBe("default-src 'none'; frame-ancestors 'none'");
  });

  it('holds the README cautions, word for word, and loads nothing from another origin', () => {
    const html = readFileSync(join(PAGE_DIR, 'index.html'), 'utf8');
    const text = html.replace(/\s+/g, ' ');
    expect(text).toContain(CAUTIONS);
    expect(readFileSync(new URL('../../../README.md', import.meta.url), 'utf8').replace(/\s+/g, ' ')).toContain(CAUTIONS);
    expect(html).not.toMatch(/(src|href)="(https?:)?\/\//);
    expect(html).not.toMatch(/<script>(?!<\/script>)/); // no inline script: the policy would refuse it
    expect(html).not.toMatch(/ style="/);
  });

  it('sets names from the API as text only in its script', () => {
    const script = readFileSync(join(PAGE_DIR, 'page.js'), 'utf8');
    for (const sink of ['innerHTML', 'outerHTML', 'insertAdjacentHTML', 'document.write', 'eval(', 'new Function']) expect(script, sink).not.toContain(sink);
  });
});

describe('a page that was not built', () => {
  it('stops createApp with HR_ERR_SERVE_PAGE_MISSING naming the file and the remedy', () => {
    const empty = mkdtempSync(join(tmpdir(), 'headroom-no-page-'));
    try {
      const error = caught(() => createApp({ registry: new Registry(), source: w.source, views: VIEWS, nowMs: () => w.nowMs, pageDir: empty }));
      expect(error.code).toBe('HR_ERR_SERVE_PAGE_MISSING');
      expect(error.message).toContain(join(empty, 'index.html'));
      expect(error.message).toContain('npm run build');
    } finally {
      rmSync(empty, { recursive: true, force: true });
    }
  });
});
