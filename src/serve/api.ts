/**
 * The read-only JSON API over the watched series. Names in paths and answers come from events and are
 * untrusted: they only ever leave as JSON (see app.ts for the headers), never inside HTML.
 */
import { Router } from 'express';
import type { Request } from 'express';
import { formatDuration, parseDuration } from '../config/durations.js';
import { HeadroomError } from '../errors.js';
import type { MarginDistribution } from '../sketch/index.js';
import { seriesHistory } from './history.js';
import type { SeriesSnapshot, ViewSpec, WatchedSeriesSource } from './model.js';
import { viewReports, type ViewReport } from './report.js';

export interface ApiOptions {
  readonly source: WatchedSeriesSource;
  readonly views: readonly ViewSpec[];
  readonly quantiles: readonly number[];
  readonly nowMs: () => number;
}

export const MIN_CDF_POINTS = 2;
export const MAX_CDF_POINTS = 2000;
export const DEFAULT_CDF_POINTS = 200;

function badParameter(parameter: string, detail: string): HeadroomError {
  return new HeadroomError('HR_ERR_API_BAD_PARAMETER', `${parameter} ${detail}`, { context: { parameter } });
}

/** Where a loaded reference came from; the same fields in the list and in a series' own answer. */
function originJson(s: SeriesSnapshot) {
  const o = s.referenceOrigin;
  if (o === undefined) return {};
  return { version: o.version, createdAt: o.createdAt, loadedAt: new Date(o.loadedAtMs).toISOString(), file: o.file };
}

function referenceState(s: SeriesSnapshot) {
  return s.reference === undefined ? { state: 'none' as const } : { state: 'loaded' as const, ...originJson(s) };
}

function findSeries(source: WatchedSeriesSource, req: Request): SeriesSnapshot {
  const { model, version, segment } = req.params as Record<string, string>;
  for (const s of source.series()) if (s.model === model && s.version === version && s.segment === segment) return s;
  throw new HeadroomError('HR_ERR_API_NOT_FOUND', 'no series with that model, version and segment', { context: { model, version, segment } });
}

/** One query parameter as a single string; repeated (`?a=1&a=2`) or nested (`?a[b]=1`) is refused, not guessed at. */
function single(req: Request, name: string): string | undefined {
  const value = (req.query as Record<string, unknown>)[name];
  if (value === undefined) return undefined;
  if (typeof value !== 'string') throw badParameter(name, 'must be given once, as a plain value');
  return value;
}

function viewJson(v: ViewReport, nowMs: number) {
  const s = v.summary;
  const empty = s.count === 0;
  return {
    window: v.window,
    durationMs: v.durationMs,
    startMs: v.startMs,
    endMs: v.endMs,
    // How far the view's newest event lags the wall clock: a quiet series keeps its last stretch.
    ageSeconds: v.endMs === null ? null : Math.max(0, nowMs - v.endMs) / 1000,
    count: s.count,
    mean: empty ? null : s.mean,
    min: empty ? null : s.min,
    max: empty ? null : s.max,
    lowMargin: v.lowMargin,
    quantiles: v.quantiles,
    // PSI's open end bins (±Infinity) come out as null: JSON has no infinities.
    comparison: v.drift,
    labels: v.labels,
  };
}

function referenceJson(s: SeriesSnapshot) {
  const r = s.reference;
  if (r === undefined) return { state: 'none' as const };
  // `segment` may be `all` for a live `line=4`: the version-wide reference stands in for a segment it lacks.
  return { state: 'loaded' as const, ...originJson(s), segment: r.name, n: r.n, lowMargin: r.lowMargin, decileEdges: r.decileEdges };
}

/** [x, F(x)] on an even grid over [0, 1], where confidence margins live; an atom shows as a step between two points. */
function cdfPoints(d: MarginDistribution, points: number): [number, number][] {
  if (d.count === 0) return [];
  return Array.from({ length: points }, (_, i) => {
    const x = i / (points - 1);
    return [x, d.cdf(x)];
  });
}

export function createApiRouter(options: ApiOptions): Router {
  const { source, views, quantiles, nowMs } = options;
  const router = Router();

  router.get('/series', (_req, res) => {
    const series = [...source.series()]
      .map((s) => ({ model: s.model, version: s.version, segment: s.segment, events: s.events, reference: referenceState(s) }))
      .sort((a, b) => compareText(a.model, b.model) || compareText(a.version, b.version) || compareText(a.segment, b.segment));
    res.json({ series });
  });

  router.get('/series/:model/:version/:segment', (req, res) => {
    const s = findSeries(source, req);
    const now = nowMs();
    res.json({
      model: s.model,
      version: s.version,
      segment: s.segment,
      events: s.events,
      counters: s.windows.counters(),
      labelled: s.labelled ?? 0,
      thresholds: s.windows.config.thresholds,
      reference: referenceJson(s),
      views: viewReports(s, views, quantiles).map((v) => viewJson(v, now)),
    });
  });

  router.get('/series/:model/:version/:segment/cdf', (req, res) => {
    const windowName = single(req, 'window') ?? (views[0] as ViewSpec).name;
    const spec = views.find((v) => v.name === windowName);
    if (spec === undefined) throw badParameter('window', `must be one of the configured windows: ${views.map((v) => v.name).join(', ')}`);
    const pointsText = single(req, 'points');
    let points = DEFAULT_CDF_POINTS;
    if (pointsText !== undefined) {
      points = /^[0-9]{1,4}$/.test(pointsText) ? Number(pointsText) : Number.NaN;
      if (!(points >= MIN_CDF_POINTS && points <= MAX_CDF_POINTS)) throw badParameter('points', `must be an integer in [${MIN_CDF_POINTS}, ${MAX_CDF_POINTS}]`);
    }
    const s = findSeries(source, req);
    if (spec.durationMs > s.windows.config.retentionMs) throw badParameter('window', `is longer than this series keeps (${s.windows.config.retentionMs} ms)`);
    const live = s.windows.view(spec.durationMs).summary.distribution;
    res.json({
      model: s.model,
      version: s.version,
      segment: s.segment,
      window: spec.name,
      points,
      live: { count: live.count, points: cdfPoints(live, points) },
      reference:
        s.reference === undefined
          ? { state: 'none' as const }
          : { state: 'loaded' as const, segment: s.reference.name, count: s.reference.confidence.count, points: cdfPoints(s.reference.confidence, points) },
    });
  });

  router.get('/series/:model/:version/:segment/history', (req, res) => {
    const thresholdText = single(req, 'threshold');
    const bucketText = single(req, 'bucket');
    const s = findSeries(source, req);
    const config = s.windows.config;
    let thresholds = config.thresholds;
    if (thresholdText !== undefined) {
      const threshold = thresholdText.trim() === '' ? Number.NaN : Number(thresholdText);
      if (!config.thresholds.includes(threshold)) throw badParameter('threshold', `must be one of this series' thresholds: ${config.thresholds.join(', ')}`);
      thresholds = [threshold];
    }
    let bucketMs = config.bucketMs;
    if (bucketText !== undefined) {
      const parsed = parseDuration(bucketText);
      if (!parsed.ok) throw badParameter('bucket', parsed.detail);
      if (parsed.ms % config.bucketMs !== 0 || parsed.ms > config.retentionMs) {
        throw badParameter('bucket', `must be a whole number of this series' ${formatDuration(config.bucketMs)} buckets, up to ${formatDuration(config.retentionMs)}`);
      }
      bucketMs = parsed.ms;
    }
    res.json({ model: s.model, version: s.version, segment: s.segment, ...seriesHistory(s.windows, s.reference, thresholds, bucketMs) });
  });

  router.get('/labels', (_req, res) => {
    const report = source.labelJoin?.();
    res.json(report === undefined ? { outcomes: 0, labelledInline: 0, join: null, waiting: null } : report);
  });

  router.get('/alerts', (_req, res) => {
    const report = source.alerts?.();
    if (report === undefined) {
      res.json({ rules: [], alerts: [], recent: [] });
      return;
    }
    res.json({
      rules: report.rules.map((r) => ({ name: r.name, kind: r.kind, model: r.model, segmentKey: r.segmentKey })),
      alerts: report.alerts.map((a) => ({
        rule: a.rule,
        kind: a.kind,
        ...a.series,
        phase: a.phase,
        since: a.sinceMs === null ? null : new Date(a.sinceMs).toISOString(),
        value: a.reading?.value ?? null,
        fireLevel: a.reading?.fireLevel ?? null,
        clearLevel: a.reading?.clearLevel ?? null,
        verdict: a.reading?.verdict ?? null,
        ...(a.reading?.reason === undefined ? {} : { reason: a.reading.reason }),
      })),
      recent: report.recent.map((t) => ({ ...t, at: new Date(t.at).toISOString() })),
    });
  });

  return router;
}

/** By UTF-16 code units, not locale: the order must not depend on the machine. */
function compareText(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
