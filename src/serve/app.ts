/**
 * The HTTP side of `headroom watch` and `headroom demo`: /metrics, liveness and readiness probes, the
 * read-only JSON API, and the live page over it at `/` (page.ts).
 * createApp returns the express app without listening (STYLE 10); the caller owns the server and its close.
 */
import express from 'express';
import type { Express } from 'express';
import type { Registry } from 'prom-client';
import { DEFAULT_QUANTILE_LEVELS } from '../compare/index.js';
import { createApiRouter } from './api.js';
import { errorHandler, notFound } from './errors-handler.js';
import type { ViewSpec, WatchedSeriesSource } from './model.js';
import { checkQuantiles, checkViews } from './options.js';
import { createPageRouter, loadPageAssets } from './page.js';

export interface AppDependencies {
  /** The registry createMetrics filled; served as it is at /metrics. */
  readonly registry: Registry;
  readonly source: WatchedSeriesSource;
  readonly views: readonly ViewSpec[];
  readonly nowMs: () => number;
  /** Quantile levels the API reports per view; default compare's DEFAULT_QUANTILE_LEVELS. */
  readonly quantiles?: readonly number[];
  /** Where the page's own files are; default src/serve/page beside the code (dist/serve/page once built). */
  readonly pageDir?: string;
  /** Told of every failure that is not a HeadroomError (a bug); default: nothing. Pass the component's logger. */
  readonly onError?: (error: unknown) => void;
  /** Every partition of the group (several watchers on a shared checkpoint store), served under /api/cluster. */
  readonly cluster?: WatchedSeriesSource;
}

export function createApp(deps: AppDependencies): Express {
  const views = checkViews(deps.views);
  const quantiles = checkQuantiles(deps.quantiles ?? DEFAULT_QUANTILE_LEVELS, 'quantiles');
  const app = express();
  app.disable('x-powered-by');
  // Names in answers come from events: browsers must take every answer for the type it states, and
  // nothing should keep a copy of figures that change with each event.
  app.use((_req, res, next) => {
    res.set('X-Content-Type-Options', 'nosniff');
    res.set('Cache-Control', 'no-store');
    // JSON opened on its own runs nothing; the page's own answers set the policy they need (page.ts).
    res.set('Content-Security-Policy', "default-src 'none'; frame-ancestors 'none'");
    next();
  });

  app.get('/metrics', async (_req, res) => {
    const text = await deps.registry.metrics();
    res.set('Content-Type', deps.registry.contentType).send(text);
  });
  app.get('/healthz', (_req, res) => {
    res.json({ status: 'alive' });
  });
  app.get('/readyz', (_req, res) => {
    const { ready, reasons } = deps.source.readiness();
    res.status(ready ? 200 : 503).json({ ready, reasons });
  });
  if (deps.cluster !== undefined) app.use('/api/cluster', createApiRouter({ source: deps.cluster, views, quantiles, nowMs: deps.nowMs }));
  app.use(createPageRouter(loadPageAssets(deps.pageDir)));
  app.use('/api', createApiRouter({ source: deps.source, views, quantiles, nowMs: deps.nowMs }));

  app.use(notFound);
  app.use(errorHandler(deps.onError ?? (() => undefined)));
  return app;
}
