/**
 * The low-margin share over time: seriesHistory on real windows (fixture.ts keeps every margin, so each
 * bucket's counts are recomputed from the numbers), and GET .../history over a real socket.
 */
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import { Registry } from 'prom-client';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { wilsonInterval } from '../../../src/compare/index.js';
import { MarginWindows } from '../../../src/sketch/index.js';
import { createApp } from '../../../src/serve/index.js';
import { seriesHistory } from '../../../src/serve/history.js';
import { MINUTE, MODEL, T0, THRESHOLDS, VERSION, VIEWS, live, margins, spread, world } from './fixture.js';

const HOUR = 60 * MINUTE;
const w = world();

/** Each added margin's bucket (by `width`, epoch-aligned) and the counts expected there. */
function expectedBuckets(added: readonly { margin: number; timeMs: number }[], width: number) {
  const byStart = new Map<number, number[]>();
  for (const p of added) {
    const start = Math.floor(p.timeMs / width) * width;
    byStart.set(start, [...(byStart.get(start) ?? []), p.margin]);
  }
  return [...byStart.entries()].sort((a, b) => a[0] - b[0]);
}

describe('seriesHistory', () => {
  it('gives each minute bucket its exact count, low counts, shares and Wilson intervals, oldest first', () => {
    const h = seriesHistory(w.main.windows, w.ref.segmentFor('all'), THRESHOLDS, MINUTE);
    const expected = expectedBuckets(w.main.added, MINUTE);
    expect(h.bucketMs).toBe(MINUTE);
    expect(h.thresholds).toEqual(THRESHOLDS);
    expect(h.buckets.map((b) => [b.startMs, b.endMs, b.count])).toEqual(expected.map(([start, ms]) => [start, start + MINUTE, ms.length]));
    h.buckets.forEach((b, i) => {
      const ms = (expected[i] as [number, number[]])[1];
      b.lowMargin.forEach((l, j) => {
        const theta = THRESHOLDS[j] as number;
        const low = ms.filter((m) => m < theta).length;
        const wilson = wilsonInterval(low, ms.length);
        expect(l).toEqual({ threshold: theta, low, share: low / ms.length, lower: wilson.lower, upper: wilson.upper });
      });
    });
    // The recent minute is the one whose margins sank (fixture: power 1.8 against 0.7).
    const last = h.buckets[h.buckets.length - 1];
    expect(last?.startMs).toBe(T0 + 60 * MINUTE);
    expect(last?.lowMargin[1]?.share).toBeGreaterThan(h.buckets[0]?.lowMargin[1]?.share as number);
  });

  it("states the reference's share and interval at each θ, or that there is none", () => {
    const ref = w.ref.segmentFor('all');
    const h = seriesHistory(w.main.windows, ref, [0.25], MINUTE);
    const entry = ref?.lowMargin.find((l) => l.threshold === 0.25);
    expect(h.reference).toEqual({ state: 'loaded', n: 3000, lowMargin: [{ threshold: 0.25, share: entry?.share, lower: entry?.lower, upper: entry?.upper }] });
    expect(h.buckets[0]?.lowMargin.map((l) => l.threshold)).toEqual([0.25]);
    expect(seriesHistory(w.plain.windows, undefined, THRESHOLDS, MINUTE).reference).toEqual({ state: 'none' });
  });

  it('adds minute buckets up into wider epoch-aligned ones, with the span of what they hold', () => {
    const h = seriesHistory(w.main.windows, undefined, [0.1], 15 * MINUTE);
    const expected = expectedBuckets(w.main.added, 15 * MINUTE);
    expect(h.buckets.map((b) => b.count)).toEqual(expected.map(([, ms]) => ms.length));
    expect(h.buckets.map((b) => b.lowMargin[0]?.low)).toEqual(expected.map(([, ms]) => ms.filter((m) => m < 0.1).length));
    // Minutes 0-14, 15-19 (the last minute with events), then minute 60.
    expect(h.buckets.map((b) => [b.startMs, b.endMs])).toEqual([
      [T0, T0 + 15 * MINUTE],
      [T0 + 15 * MINUTE, T0 + 20 * MINUTE],
      [T0 + 60 * MINUTE, T0 + 61 * MINUTE],
    ]);
  });

  it('gives an hour bucket of older history as it is when narrower buckets are asked, and adds them up for wider ones', () => {
    // One event a minute for 4 hours: the first two hours are folded into hour buckets, cut at the fine span.
    const values = margins(240, 31, 1);
    const long = live(spread(values, T0, MINUTE));
    const narrow = seriesHistory(long.windows, undefined, [0.25], 5 * MINUTE);
    const spans = narrow.buckets.map((b) => b.endMs - b.startMs);
    const fineStart = T0 + 239 * MINUTE - 2 * HOUR + MINUTE;
    expect(narrow.buckets[0]).toMatchObject({ startMs: T0, endMs: T0 + HOUR, count: 60 });
    expect(narrow.buckets[1]).toMatchObject({ startMs: T0 + HOUR, endMs: fineStart, count: fineStart / MINUTE - T0 / MINUTE - 60 });
    expect(spans.slice(2).every((s) => s <= 5 * MINUTE)).toBe(true);
    expect(narrow.buckets.reduce((n, b) => n + b.count, 0)).toBe(240);
    for (let i = 1; i < narrow.buckets.length; i += 1) expect(narrow.buckets[i]?.startMs).toBe(narrow.buckets[i - 1]?.endMs);
    const wide = seriesHistory(long.windows, undefined, [0.25], 2 * HOUR);
    expect(wide.buckets.map((b) => [b.startMs, b.endMs, b.count])).toEqual([
      [T0, T0 + 2 * HOUR, 120],
      [T0 + 2 * HOUR, T0 + 4 * HOUR, 120],
    ]);
    expect(wide.buckets.map((b) => b.lowMargin[0]?.low)).toEqual([values.slice(0, 120), values.slice(120)].map((v) => v.filter((m) => m < 0.25).length));
  });

  it('is empty for windows that never saw an event', () => {
    expect(seriesHistory(new MarginWindows({ thresholds: THRESHOLDS }), undefined, THRESHOLDS, MINUTE).buckets).toEqual([]);
  });
});

describe('GET /api/series/:model/:version/:segment/history', () => {
  const app = createApp({ registry: new Registry(), source: w.source, views: VIEWS, nowMs: () => w.nowMs });
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
  const historyPath = (query: string, model = MODEL, version = VERSION, segment = 'all'): string =>
    `/api/series/${encodeURIComponent(model)}/${encodeURIComponent(version)}/${encodeURIComponent(segment)}/history${query}`;
  const get = async (path: string) => {
    const res = await fetch(base + path);
    return { res, body: (await res.json()) as Record<string, unknown> & { error?: { code: string; parameter?: string; message: string } } };
  };

  it("answers every θ at the series' own bucket by default, as seriesHistory does", async () => {
    const { res, body } = await get(historyPath(''));
    expect(res.status).toBe(200);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(body).toEqual({ model: MODEL, version: VERSION, segment: 'all', ...JSON.parse(JSON.stringify(seriesHistory(w.main.windows, w.ref.segmentFor('all'), THRESHOLDS, MINUTE))) });
  });

  it('takes one θ and a wider bucket', async () => {
    const { res, body } = await get(historyPath('?threshold=0.25&bucket=15m'));
    expect(res.status).toBe(200);
    expect(body.thresholds).toEqual([0.25]);
    expect(body.bucketMs).toBe(15 * MINUTE);
    expect((body.buckets as { count: number }[]).map((b) => b.count)).toEqual([300, 100, 300]);
  });

  it('answers 400 naming the parameter for a θ the series does not count, or a bucket it cannot give', async () => {
    for (const [query, parameter] of [
      ['?threshold=0.3', 'threshold'],
      ['?threshold=', 'threshold'],
      ['?threshold=abc', 'threshold'],
      ['?threshold=0.1&threshold=0.25', 'threshold'],
      ['?bucket=90s', 'bucket'],
      ['?bucket=2d', 'bucket'],
      ['?bucket=5', 'bucket'],
    ] as const) {
      const { res, body } = await get(historyPath(query));
      expect(res.status, query).toBe(400);
      expect(body.error?.code, query).toBe('HR_ERR_API_BAD_PARAMETER');
      expect(body.error?.parameter, query).toBe(parameter);
    }
  });

  it('answers 404 for an unknown series', async () => {
    const { res, body } = await get(historyPath('', 'no-such-model'));
    expect(res.status).toBe(404);
    expect(body.error?.code).toBe('HR_ERR_API_NOT_FOUND');
  });
});
