/**
 * A real headless Chromium for page tests: the Debian package's binary driven by playwright-core, with
 * the flags DESIGN.md names. Opens a URL or a file, waits for a selector, keeps every console error,
 * uncaught page error and request the page made, and saves screenshots under test-artifacts/ (gitignored)
 * so a person can look at what a test saw.
 *
 * Availability is checked once per run by a vitest global setup (chromiumGuard): without the binary the
 * tests that need it are skipped and the setup says so; under CI=true that is a failure instead.
 */
import { existsSync, mkdirSync } from 'node:fs';
import { dirname, isAbsolute, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import type { Browser, ConsoleMessage, Page } from 'playwright-core';
import { HeadroomError } from '../../src/errors.js';

export const CHROMIUM_PATH = '/usr/bin/chromium';
export const CHROMIUM_ARGS: readonly string[] = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'];
export const ARTIFACTS_DIR = resolve(dirname(fileURLToPath(import.meta.url)), '../../test-artifacts');

/** For a vitest global setup: true when Chromium is there; false (and a log line) when not; throws under CI. */
export function chromiumGuard(log: (line: string) => void, env: NodeJS.ProcessEnv = process.env, path = CHROMIUM_PATH): boolean {
  if (existsSync(path)) return true;
  const message = `${path} not found (Debian package chromium: apt-get install --no-install-recommends chromium)`;
  if (env.CI === 'true' || env.CI === '1') throw new HeadroomError('HR_ERR_HARNESS_CHROMIUM_UNAVAILABLE', `${message}; under CI this is a failure, not a skip`);
  log(`${message}: the tests that need a browser will be skipped`);
  return false;
}

export async function launchChromium(): Promise<Browser> {
  return chromium.launch({ executablePath: CHROMIUM_PATH, args: [...CHROMIUM_ARGS], headless: true });
}

export interface OpenOptions {
  /** CSS selector that must be present (attached) before openPage returns. */
  readonly waitFor?: string;
  readonly viewport?: { readonly width: number; readonly height: number };
  readonly timeoutMs?: number;
}

export interface OpenedPage {
  readonly page: Page;
  /** Console messages of type error and uncaught page errors, in order, each prefixed by its kind. */
  readonly errors: readonly string[];
  /** Every URL the page requested, the page itself included. */
  readonly requests: readonly string[];
  /** Full-page PNG into test-artifacts/NAME.png; returns the path. */
  screenshot(name: string): Promise<string>;
  close(): Promise<void>;
}

/** `target` is a URL (http:, https:, file:, data:) or a path to a local file. */
export async function openPage(browser: Browser, target: string, options: OpenOptions = {}): Promise<OpenedPage> {
  const url = /^[a-z][a-z0-9+.-]*:/i.test(target) && !isAbsolute(target) ? target : pathToFileURL(resolve(target)).href;
  const context = await browser.newContext({ viewport: options.viewport ?? { width: 1280, height: 900 } });
  const page = await context.newPage();
  const errors: string[] = [];
  const requests: string[] = [];
  page.on('console', (message: ConsoleMessage) => {
    if (message.type() === 'error') errors.push(`console: ${message.text()}`);
  });
  page.on('pageerror', (error) => errors.push(`page: ${error.message}`));
  page.on('request', (request) => requests.push(request.url()));
  const timeout = options.timeoutMs ?? 30_000;
  await page.goto(url, { waitUntil: 'load', timeout });
  if (options.waitFor !== undefined) await page.waitForSelector(options.waitFor, { state: 'attached', timeout });
  return {
    page,
    errors,
    requests,
    screenshot: async (name) => {
      mkdirSync(ARTIFACTS_DIR, { recursive: true });
      const path = join(ARTIFACTS_DIR, `${name}.png`);
      await page.screenshot({ path, fullPage: true });
      return path;
    },
    close: () => context.close(),
  };
}

/** The little of the DOM keyColoursOnCanvas uses; typed here so the Node program needs no DOM lib. */
interface PageDocument {
  querySelector(selector: string): { width: number; height: number; getContext(kind: '2d'): { getImageData(x: number, y: number, w: number, h: number): { data: ArrayLike<number> } } } | null;
  querySelectorAll(selector: string): ArrayLike<{ dataset: Record<string, string | undefined> }>;
}

/**
 * Pixels of the canvas in `#chartId` within a small distance of each colour of the key `#keyId` (the
 * `data-colour` of its `.swatch`es): a curve in the key that was not drawn counts 0.
 */
export async function keyColoursOnCanvas(page: Page, chartId: string, keyId: string): Promise<Record<string, number>> {
  return page.evaluate(
    ([chart, key]) => {
      const doc = (globalThis as unknown as { document: PageDocument }).document;
      const canvas = doc.querySelector(`#${chart} canvas`);
      const colours = Array.from(doc.querySelectorAll(`#${key} .swatch`)).map((s) => s.dataset.colour ?? '');
      const out: Record<string, number> = {};
      if (canvas === null) return out;
      const pixels = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
      for (const colour of colours) {
        const [r, g, b] = [1, 3, 5].map((i) => parseInt(colour.slice(i, i + 2), 16)) as [number, number, number];
        let n = 0;
        for (let i = 0; i < pixels.length; i += 4) {
          if ((pixels[i + 3] as number) > 200 && Math.abs((pixels[i] as number) - r) + Math.abs((pixels[i + 1] as number) - g) + Math.abs((pixels[i + 2] as number) - b) < 40) n += 1;
        }
        out[colour] = n;
      }
      return out;
    },
    [chartId, keyId] as const,
  );
}
