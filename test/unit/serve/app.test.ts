/**
 * The HTTP layer in process: createApp on a real `listen(0)` socket, asked with fetch. The source is a
 * plain object over real windows and a real reference (fixture.ts); Kafka is not part of this.
 */
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { compareToReference, wilsonInterval } from '../../../src/compare/index.js';
import { createApp, createMetrics } from '../../../src/serve/index.js';
import { parseExposition, value } from './exposition.js';
import { MINUTE, MODEL, ORIGIN, THRESHOLDS, VERSION, VIEWS, lowShare, world } from './fixture.js';

const w = world();
const registry = new Registry();
createMetrics({ registry, source: w.source, views: VIEWS, nowMs: () => w.nowMs });
const failures: unknown[] = [];
const app = createApp({ registry, source: w.source, views: VIEWS, nowMs: () => w.nowMs, onError: (e) => failures.push(e) });
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

const seriesPath = (model: string, version: string, segment: string): string =>
  `/api/series/${encodeURIComponent(model)}/${encodeURIComponent(version)}/${encodeURIComponent(segment)}`;

async function getJson(path: string) {
  const res = await fetch(base + path);
  const body = (await res.json()) as Record<string, unknown> & { error?: { code: string; message: string; parameter?: string } };
  return { res, body };
}

function expectJsonHeaders(res: Response): void {
  expect(res.headers.get('content-type')).toMatch(/^application\/json; charset=utf-8$/);
  expect(res.headers.get('x-content-type-options')).toBe('nosniff');
}

describe('probes and /metrics over a real socket', () => {
  it('serves the registry at /metrics with its content type, figures included', async () => {
    const res = await fetch(`${base}/metrics`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toBe(registry.contentType);
    const { samples } = parseExposition(await res.text());
    expect(value(samples, 'headroom_events_total', { model: MODEL, version: VERSION, segment: 'all' })).toBe(705);
    expect(value(samples, 'headroom_low_margin_ratio', { model: MODEL, version: VERSION, segment: 'all', window: '5m', threshold: '0.1' })).toBe(
      lowShare(w.recent, 0.1),
    );
  });

  it('answers /healthz while alive', async () => {
    const { res, body } = await getJson('/healthz');
    expect(res.status).toBe(200);
    expect(body).toEqual({ status: 'alive' });
  });

  it('answers /readyz 200 when ready and 503 with the reasons when not', async () => {
    const ok = await getJson('/readyz');
    expect(ok.res.status).toBe(200);
    expect(ok.body).toEqual({ ready: true, reasons: [] });
    w.source.ready = { ready: false, reasons: ['partition scores-1 is restoring'] };
    try {
      const not = await getJson('/readyz');
      expect(not.res.status).toBe(503);
      expectJsonHeaders(not.res);
      expect(not.body).toEqual({ ready: false, reasons: ['partition scores-1 is restoring'] });
    } finally {
      w.source.ready = { ready: true, reasons: [] };
    }
  });
});

describe('GET /api/series', () => {
  it('lists every series, sorted, with its event count and its reference: loaded (which, since when) or none', async () => {
    const { res, body } = await getJson('/api/series');
    expect(res.status).toBe(200);
    expectJsonHeaders(res);
    const loaded = { state: 'loaded', version: VERSION, createdAt: ORIGIN.createdAt, loadedAt: new Date(ORIGIN.loadedAtMs).toISOString(), file: 'current' };
    expect(body.series).toEqual([
      { model: 'doc-router', version: '7', segment: 'all', events: 120, reference: { state: 'none' } },
      { model: MODEL, version: VERSION, segment: 'all', events: 705, reference: loaded },
      { model: MODEL, version: VERSION, segment: 'line=9', events: 50, reference: loaded },
    ]);
  });
});

interface ViewBody {
  window: string;
  count: number;
  endMs: number | null;
  ageSeconds: number | null;
  lowMargin: { threshold: number; live: { successes: number; trials: number; share: number | null; lower: number; upper: number }; referenceShare: number | null }[];
  quantiles: { q: number; live: number | null; reference: number | null }[];
  comparison: { ks: { statistic: number; pValue: number | null }; psi: { value: number }; wasserstein: number } | null;
}

describe('GET /api/series/:model/:version/:segment', () => {
  it('shows each view with Wilson intervals on the exact shares and the comparison with the reference', async () => {
    const { res, body } = await getJson(seriesPath(MODEL, VERSION, 'all'));
    expect(res.status).toBe(200);
    expectJsonHeaders(res);
    expect(body.reference).toMatchObject({ state: 'loaded', segment: 'all', n: 3000, version: VERSION, createdAt: ORIGIN.createdAt, file: 'current' });
    const views = body.views as ViewBody[];
    expect(views.map((v) => v.window)).toEqual(['5m', '1h', '24h']);
    const five = views[0] as ViewBody;
    expect(five.count).toBe(300);
    expect(five.ageSeconds).toBe((w.nowMs - (w.main.windows.watermarkMs as number)) / 1000);
    expect(five.lowMargin.map((l) => l.threshold)).toEqual(THRESHOLDS);
    for (const l of five.lowMargin) {
      const low = w.recent.filter((m) => m < l.threshold).length;
      expect(l.live).toEqual(wilsonInterval(low, 300));
      expect(l.live.share).toBe(lowShare(w.recent, l.threshold));
    }
    const ref = w.ref.segmentFor('all');
    const live = w.main.windows.view(5 * MINUTE).summary;
    const counts = THRESHOLDS.map((threshold) => ({ threshold, low: live.countBelow(threshold), count: live.count }));
    const expected = compareToReference(live.distribution, ref.confidence, ref.compareOptions(counts));
    expect(five.comparison?.ks.statistic).toBe(expected.ks?.statistic);
    expect(five.comparison?.ks.pValue).toBe(expected.ks?.pValue);
    expect(five.comparison?.psi.value).toBe(expected.psi?.value);
    expect(five.comparison?.wasserstein).toBe(expected.wasserstein);
    expect(five.lowMargin.map((l) => l.referenceShare)).toEqual(expected.lowMargin.map((l) => l.referenceShare));
    expect(five.comparison?.ks.statistic).toBeGreaterThan(0.15);
  });

  it('states reference "none" and no comparison for a series without one, but still the shares', async () => {
    const { res, body } = await getJson(seriesPath('doc-router', '7', 'all'));
    expect(res.status).toBe(200);
    expect(body.reference).toEqual({ state: 'none' });
    const views = body.views as ViewBody[];
    expect(views.every((v) => v.comparison === null)).toBe(true);
    expect(views[0]?.lowMargin[0]?.live.trials).toBe(120);
    expect(views[0]?.lowMargin[0]?.referenceShare).toBeNull();
    expect(views[0]?.quantiles.every((q) => q.live !== null && q.reference === null)).toBe(true);
  });

  it('shows an empty window as empty: no comparison, null shares, vacuous interval', async () => {
    const { body } = await getJson(seriesPath(MODEL, VERSION, 'line=9'));
    const [five, , day] = body.views as ViewBody[];
    expect(five?.count).toBe(0);
    expect(five?.comparison).toBeNull();
    expect(five?.lowMargin[0]?.live).toMatchObject({ share: null, lower: 0, upper: 1 });
    expect(day?.count).toBe(50);
    expect(day?.comparison).not.toBeNull();
    // Its own segment has no reference; the version-wide one stands in, and the answer says which.
    expect(body.reference).toMatchObject({ state: 'loaded', segment: 'all' });
  });

  it('answers 404 with a JSON error for an unknown series', async () => {
    const { res, body } = await getJson(seriesPath(MODEL, VERSION, 'line=404'));
    expect(res.status).toBe(404);
    expectJsonHeaders(res);
    expect(body.error?.code).toBe('HR_ERR_API_NOT_FOUND');
    expect(body.error?.message).toMatch(/no series/);
  });

  it('answers 404 with a JSON error, not an HTML page, for an unknown route', async () => {
    const { res, body } = await getJson('/api/nothing/<b>here</b>');
    expect(res.status).toBe(404);
    expectJsonHeaders(res);
    expect(body.error?.code).toBe('HR_ERR_API_NOT_FOUND');
  });

  it('answers 400 in JSON for a path that is not valid percent-encoding', async () => {
    const { res, body } = await getJson('/api/series/%E0%A4%A/x/y');
    expect(res.status).toBe(400);
    expectJsonHeaders(res);
    expect(body.error?.code).toBe('HR_ERR_API_BAD_PARAMETER');
  });
});

describe('names from events', () => {
  it('come back only as JSON, whatever they hold', async () => {
    const odd = '<script>alert("x")</script>/../&';
    const first = w.source.snapshots[0];
    if (first === undefined) throw new Error('fixture has no series');
    w.source.snapshots.push({ ...first, model: odd, segment: 'line=<i>' });
    try {
      const { res, body } = await getJson(seriesPath(odd, VERSION, 'line=<i>'));
      expect(res.status).toBe(200);
      expectJsonHeaders(res);
      expect(body.model).toBe(odd);
      expect(body.segment).toBe('line=<i>');
      const list = await getJson('/api/series');
      expect((list.body.series as { model: string }[]).map((s) => s.model)).toContain(odd);
    } finally {
      w.source.snapshots.pop();
    }
  });
});

describe('GET /api/series/:model/:version/:segment/cdf', () => {
  const cdfPath = (query: string, segment = 'all', model = MODEL): string => `${seriesPath(model, VERSION, segment)}/cdf${query}`;

  it('gives live and reference CDFs as [x, F(x)] points on an even grid over [0, 1]', async () => {
    const { res, body } = await getJson(cdfPath('?window=5m&points=11'));
    expect(res.status).toBe(200);
    expectJsonHeaders(res);
    const live = body.live as { count: number; points: [number, number][] };
    const reference = body.reference as { state: string; segment: string; points: [number, number][] };
    const d = w.main.windows.view(5 * MINUTE).summary.distribution;
    expect(live.count).toBe(300);
    expect(live.points).toHaveLength(11);
    live.points.forEach(([x, f], i) => {
      expect(x).toBe(i / 10);
      expect(f).toBe(d.cdf(x));
    });
    expect(live.points[10]).toEqual([1, 1]);
    // margins of exactly 0 are an atom: F(0) is their share, not 0.
    expect(live.points[0]?.[1]).toBe(w.recent.filter((m) => m === 0).length / 300);
    expect(reference.state).toBe('loaded');
    expect(reference.points.map(([x, f]) => [x, f])).toEqual(live.points.map(([x]) => [x, w.ref.segmentFor('all').confidence.cdf(x)]));
    // The live margins are lower: their CDF lies above the reference's in the middle.
    expect((live.points[3] as [number, number])[1]).toBeGreaterThan((reference.points[3] as [number, number])[1]);
  });

  it('defaults to the first window and 200 points, and accepts the bounds 2 and 2000', async () => {
    const plain = await getJson(cdfPath(''));
    expect(plain.body.window).toBe('5m');
    expect((plain.body.live as { points: unknown[] }).points).toHaveLength(200);
    for (const n of [2, 2000]) {
      const { res, body } = await getJson(cdfPath(`?window=24h&points=${n}`));
      expect(res.status).toBe(200);
      expect((body.live as { points: unknown[] }).points).toHaveLength(n);
    }
  });

  it('states reference "none" for a series without one, and gives no points for an empty window', async () => {
    const none = await getJson(`${seriesPath('doc-router', '7', 'all')}/cdf?window=1h`);
    expect(none.body.reference).toEqual({ state: 'none' });
    const empty = await getJson(cdfPath('?window=5m', 'line=9'));
    expect(empty.body.live).toEqual({ count: 0, points: [] });
  });

  it.each([
    ['?window=7m', 'window'],
    ['?window=5m&window=1h', 'window'],
    ['?points=1', 'points'],
    ['?points=2001', 'points'],
    ['?points=2.5', 'points'],
    ['?points=1e2', 'points'],
    ['?points=abc', 'points'],
    ['?points=', 'points'],
  ])('answers 400 naming the parameter for %s', async (query, parameter) => {
    const { res, body } = await getJson(cdfPath(query));
    expect(res.status).toBe(400);
    expectJsonHeaders(res);
    expect(body.error?.code).toBe('HR_ERR_API_BAD_PARAMETER');
    expect(body.error?.parameter).toBe(parameter);
    expect(body.error?.message).toContain(parameter);
  });

  it('answers 404 for the CDF of an unknown series', async () => {
    const { res, body } = await getJson(cdfPath('?window=5m', 'line=404'));
    expect(res.status).toBe(404);
    expect(body.error?.code).toBe('HR_ERR_API_NOT_FOUND');
  });
});

describe('a failure that is not a HeadroomError', () => {
  it('answers a generic 500 in JSON and tells onError, without leaking the message', async () => {
    const broken = createApp({
      registry: new Registry(),
      source: { ...w.source, series: () => { throw new Error('secret internals'); } },
      views: VIEWS,
      nowMs: () => w.nowMs,
      onError: (e) => failures.push(e),
    });
    const s = await new Promise<Server>((resolve) => {
      const srv = broken.listen(0, '127.0.0.1', () => resolve(srv));
    });
    try {
      const res = await fetch(`http://127.0.0.1:${(s.address() as AddressInfo).port}/api/series`);
      const text = await res.text();
      expect(res.status).toBe(500);
      expect(JSON.parse(text)).toMatchObject({ error: { code: 'HR_ERR_API_INTERNAL' } });
      expect(text).not.toContain('secret');
      expect(failures.some((e) => e instanceof Error && e.message === 'secret internals')).toBe(true);
    } finally {
      await new Promise<void>((resolve) => s.close(() => resolve()));
    }
  });
});
