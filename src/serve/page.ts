/**
 * The live page at `/`: one HTML file, one script, one style sheet (src/serve/page, copied beside the
 * compiled code as dist/serve/page by `npm run build`), and uPlot's browser build and CSS from the
 * installed `uplot` package. Nothing comes from another origin. The files are read once, when the app is
 * made, so a broken install fails the start instead of the first visit, and each answer is a fixed set of
 * bytes with its own type: no directory is served, so no path can reach another file.
 *
 * The page reads only the JSON API. Names from events reach it only as JSON and are set with textContent;
 * the Content-Security-Policy below lets no inline script, no other origin and no plugin run anyway.
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Router } from 'express';
import { HeadroomError } from '../errors.js';

/** Where the page's own files are: beside this module, in src/serve (tsx) and in dist/serve alike. */
export const PAGE_DIR = join(dirname(fileURLToPath(import.meta.url)), 'page');

export const PAGE_CSP = [
  "default-src 'none'",
  "script-src 'self'",
  "style-src 'self'",
  "connect-src 'self'",
  "img-src 'self' data:",
  "base-uri 'none'",
  "form-action 'none'",
  "frame-ancestors 'none'",
].join('; ');

interface Asset {
  readonly type: string;
  readonly body: Buffer;
}

const TYPES = { html: 'text/html; charset=utf-8', js: 'text/javascript; charset=utf-8', css: 'text/css; charset=utf-8', txt: 'text/plain; charset=utf-8' } as const;

function read(path: string, remedy: string): Buffer {
  try {
    return readFileSync(path);
  } catch (error) {
    throw new HeadroomError('HR_ERR_SERVE_PAGE_MISSING', `${path}: ${error instanceof Error ? error.message : String(error)}; ${remedy}`, { cause: error });
  }
}

/** The page's files by the path they are served at; throws HR_ERR_SERVE_PAGE_MISSING naming the first one missing. */
export function loadPageAssets(dir: string = PAGE_DIR): ReadonlyMap<string, Asset> {
  const own = (file: string, type: string): Asset => ({ type, body: read(join(dir, file), 'run `npm run build`, which copies src/serve/page to dist/serve/page') });
  let uplot: string;
  try {
    uplot = dirname(createRequire(import.meta.url).resolve('uplot/package.json'));
  } catch (error) {
    throw new HeadroomError('HR_ERR_SERVE_PAGE_MISSING', `uplot is not installed where headroom can find it; reinstall headroom's dependencies`, { cause: error });
  }
  const library = (file: string, type: string): Asset => ({ type, body: read(join(uplot, file), "reinstall headroom's dependencies") });
  return new Map([
    ['/', own('index.html', TYPES.html)],
    ['/assets/page.js', own('page.js', TYPES.js)],
    ['/assets/page.css', own('page.css', TYPES.css)],
    ['/assets/uPlot.iife.min.js', library('dist/uPlot.iife.min.js', TYPES.js)],
    ['/assets/uPlot.min.css', library('dist/uPlot.min.css', TYPES.css)],
    // uPlot is MIT: its notice goes along with the copy the page serves.
    ['/assets/uPlot.LICENSE.txt', library('LICENSE', TYPES.txt)],
  ]);
}

export function createPageRouter(assets: ReadonlyMap<string, Asset>): Router {
  const router = Router();
  for (const [path, asset] of assets) {
    router.get(path, (_req, res) => {
      res.set('Content-Type', asset.type);
      res.set('Content-Security-Policy', PAGE_CSP);
      res.set('Referrer-Policy', 'no-referrer');
      res.send(asset.body);
    });
  }
  return router;
}
