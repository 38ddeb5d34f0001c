/**
 * Windows tested by what they answer: events go in at chosen event times, time moves on, and the
 * 5m / 1h / 24h views are asked what they hold after buckets rotate and after they are coarsened.
 */
import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { windowConfig } from '../../../src/sketch/window-config.js';
import { MarginWindows } from '../../../src/sketch/windows.js';
import { distributionKs, ExactSample, makeSamples, uniform } from './samples.js';
import { codeOf } from '../caught.js';

const MIN = 60_000;
const HOUR = 60 * MIN;
const T0 = Date.UTC(2026, 11, 1); // midnight, so minute k starts at T0 + k·MIN
const at = (minute: number, offsetMs = 0): number => T0 + minute * MIN + offsetMs;

/** One event per minute for minutes [0, minutes), margin (k mod 10)/10, each at 30 s into its minute. */
function oncePerMinute(minutes: number): MarginWindows {
  const w = new MarginWindows();
  for (let k = 0; k < minutes; k += 1) expect(w.add((k % 10) / 10, at(k, 30_000), at(k, 30_000))).toBe('added');
  return w;
}

describe('views before any event', () => {
  it('answer empty, with no start or end', () => {
    const v = new MarginWindows().view(5 * MIN);
    expect(v.summary.count).toBe(0);
    expect(v.startMs).toBeNull();
    expect(v.endMs).toBeNull();
    expect(v.summary.distribution.quantile(0.5)).toBeNaN();
  });
});

describe('fine buckets', () => {
  it('the 5m view holds the buckets overlapping the last five minutes of event time', () => {
    const w = new MarginWindows();
    for (let k = 0; k < 20; k += 1) for (let j = 0; j < 10; j += 1) w.add(k / 100, at(k, j * 5000), at(k, j * 5000));
    // Watermark 19:45; (14:45, 19:45] overlaps the buckets of minutes 14..19.
    const v = w.view(5 * MIN);
    expect(v.endMs).toBe(at(19, 45_000));
    expect(v.startMs).toBe(at(14));
    expect(v.summary.count).toBe(60);
    expect(v.summary.min).toBe(0.14);
    expect(v.summary.max).toBe(0.19);
    expect(v.summary.distribution.quantile(0.5)).toBe(0.16);
    expect(w.view(HOUR).summary.count).toBe(200);
  });

  it('moves on with event time: a later event leaves older minutes out of the 5m view', () => {
    const w = new MarginWindows();
    for (let k = 0; k < 20; k += 1) w.add(0.5, at(k), at(k));
    w.add(0.9, at(30), at(30));
    const v = w.view(5 * MIN);
    expect(v.summary.count).toBe(1);
    expect(v.summary.min).toBe(0.9);
    expect(w.view(HOUR).summary.count).toBe(21);
  });

  it('low-margin counts in the 1h view are exact', () => {
    const w = oncePerMinute(180);
    // Watermark in minute 179: the 1h view holds minutes 119..179; k mod 10 = 0 for 120, 130, ..., 170.
    const v = w.view(HOUR);
    expect(v.summary.count).toBe(61);
    expect(v.summary.countBelow(0.1)).toBe(6);
    expect(v.summary.countBelow(0.2)).toBe(12);
    expect(v.summary.lowMarginRatio(0.1)).toBe(6 / 61);
  });

  it('advance() moves the views on without events: a quiet series empties its 5m view', () => {
    const w = oncePerMinute(60);
    w.advance(at(70));
    expect(w.watermarkMs).toBe(at(70));
    expect(w.view(5 * MIN).summary.count).toBe(0);
    expect(w.view(HOUR).summary.count).toBe(50);
    w.advance(at(10)); // never backwards
    expect(w.watermarkMs).toBe(at(70));
  });
});

describe('coarse buckets', () => {
  it('after 30 h the 24h view holds 1-hour buckets at its old end, and counts stay exact', () => {
    const w = oncePerMinute(30 * 60);
    // Watermark in minute 1799. Fine: minutes 1680..1799. Coarse: hours 5..27 (hour 5 still overlaps
    // (watermark − 24 h, watermark], hours 0..4 have expired). So the view holds minutes 300..1799.
    expect(w.bucketCounts()).toEqual({ fine: 120, coarse: 23 });
    const day = w.view(24 * HOUR);
    expect(day.startMs).toBe(at(300));
    expect(day.summary.count).toBe(1500);
    expect(day.summary.countBelow(0.1)).toBe(150);
    expect(day.summary.countBelow(0.2)).toBe(300);
    // Ten values, 150 of each: the digest holds them as atoms.
    expect(day.summary.distribution.quantile(0.5)).toBe(0.4);
    expect(day.summary.distribution.cdf(0.4)).toBe(0.5);
    expect(day.summary.distribution.cdfBelow(0.4)).toBe(0.4);
    expect(w.view(5 * MIN).summary.count).toBe(6);
    expect(w.view(HOUR).summary.count).toBe(61);
  });

  it('coarsened history keeps expiring as time moves on', () => {
    const w = oncePerMinute(30 * 60);
    w.advance(at(1799, 30_000) + 3 * HOUR);
    // Watermark in minute 1979: hours 8..29 remain, all coarse now; minutes 480..1799.
    expect(w.bucketCounts()).toEqual({ fine: 0, coarse: 22 });
    expect(w.view(24 * HOUR).summary.count).toBe(1320);
    expect(w.view(HOUR).summary.count).toBe(0);
  });

  it('a view longer than the fine span but shorter than 24 h is answered from both tiers', () => {
    const w = oncePerMinute(30 * 60);
    // 3 h: (minute 1619.5, 1799.5] overlaps fine minutes 1680..1799 and coarse hour 26 (minutes 1560..1619) and 27.
    const v = w.view(3 * HOUR);
    expect(v.startMs).toBe(at(1560));
    expect(v.summary.count).toBe(240);
  });

  it('the number of buckets stays bounded over days', () => {
    const w = new MarginWindows();
    let most = { fine: 0, coarse: 0 };
    for (let k = 0; k < 3 * 24 * 60; k += 1) {
      w.add(uniform(51, k), at(k), at(k));
      const b = w.bucketCounts();
      most = { fine: Math.max(most.fine, b.fine), coarse: Math.max(most.coarse, b.coarse) };
    }
    expect(most.fine).toBe(120);
    expect(most.coarse).toBeLessThanOrEqual(25);
    expect(w.view(24 * HOUR).summary.count).toBeLessThanOrEqual(25 * 60);
  });
});

describe('late and future events', () => {
  it('are counted, not added, and not silently dropped', () => {
    const w = new MarginWindows();
    expect(w.add(0.5, at(10), at(10))).toBe('added');
    expect(w.add(0.05, at(8) - 1, at(10))).toBe('late'); // older than watermark − 2 min
    expect(w.add(0.06, at(8), at(10))).toBe('added'); // exactly at the limit
    expect(w.add(0.07, at(15) + 1, at(10))).toBe('future'); // beyond nowMs + 5 min
    expect(w.watermarkMs).toBe(at(10));
    expect(w.add(0.08, at(15), at(10))).toBe('added');
    expect(w.watermarkMs).toBe(at(15));
    expect(w.counters()).toEqual({ added: 3, late: 1, future: 1 });
    const v = w.view(HOUR);
    expect(v.summary.count).toBe(3);
    expect(v.summary.countBelow(0.1)).toBe(2);
  });

  it('an event late by less than the lateness lands in its own, older bucket', () => {
    const w = new MarginWindows();
    w.add(0.5, at(10, 30_000), at(11));
    w.add(0.01, at(9, 10_000), at(11));
    // Watermark 10:30; the 1-minute view (9:30, 10:30] overlaps minutes 9 and 10 — but a 30 s view only minute 10.
    expect(w.view(30_000).summary.count).toBe(1);
    expect(w.view(MIN).summary.count).toBe(2);
  });

  it('refuses non-finite margins and times with an argument error, counting nothing', () => {
    const w = new MarginWindows();
    expect(codeOf(() => w.add(Number.NaN, at(1), at(1)))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => w.add(0.5, Number.NaN, at(1)))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => w.add(0.5, at(1), Infinity))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(w.counters()).toEqual({ added: 0, late: 0, future: 0 });
    expect(w.watermarkMs).toBeNull();
  });
});

describe('views are copies', () => {
  it('a view does not change when the windows do, nor the other way round', () => {
    const w = oncePerMinute(10);
    const v = w.view(HOUR);
    w.add(0.3, at(10), at(10));
    expect(v.summary.count).toBe(10);
    v.summary.add(0.7);
    expect(w.view(HOUR).summary.count).toBe(11);
  });

  it('refuses durations that are not positive or exceed the retention', () => {
    const w = oncePerMinute(10);
    expect(codeOf(() => w.view(0))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => w.view(25 * HOUR))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });
});

/** Events over `hours`, a few out of order within the lateness, a few too late. */
function busyStream(hours: number, perMinute: number, key: number): { t: number; x: number }[] {
  const out: { t: number; x: number }[] = [];
  const n = hours * 60 * perMinute;
  const xs = makeSamples('discrete', key, n);
  for (let i = 0; i < n; i += 1) {
    const jitter = (uniform(key + 1, i) - 0.75) * 2 * MIN; // up to 1.5 min early, 0.5 min late
    const late = i % 997 === 0 ? -10 * MIN : 0;
    out.push({ t: T0 + Math.floor((i * (hours * HOUR)) / n + jitter + late), x: xs[i] as number });
  }
  return out;
}

function expectSameViews(a: MarginWindows, b: MarginWindows): void {
  for (const d of [5 * MIN, HOUR, 24 * HOUR]) {
    const va = a.view(d);
    const vb = b.view(d);
    expect(vb.startMs).toBe(va.startMs);
    expect(vb.endMs).toBe(va.endMs);
    expect(vb.summary.toState()).toEqual(va.summary.toState());
    for (const q of [0.01, 0.3, 0.5, 0.9]) expect(vb.summary.distribution.quantile(q)).toBe(va.summary.distribution.quantile(q));
  }
}

describe('state', () => {
  it('a window restored from its serialised state answers as the original, then and after more events', () => {
    const events = busyStream(28, 20, 61);
    const split = Math.floor(events.length * 0.8);
    const original = new MarginWindows();
    for (const e of events.slice(0, split)) original.add(e.x, e.t, e.t);
    const text = JSON.stringify(original.toState());
    const restored = MarginWindows.fromState(JSON.parse(text));
    expect(restored.counters()).toEqual(original.counters());
    expect(original.counters().late).toBeGreaterThan(0);
    expect(restored.watermarkMs).toBe(original.watermarkMs);
    expectSameViews(original, restored);
    for (const e of events.slice(split)) {
      expect(restored.add(e.x, e.t, e.t)).toBe(original.add(e.x, e.t, e.t));
    }
    expectSameViews(original, restored);
    expect(restored.toState()).toEqual(original.toState());
  });
});

describe('merging the windows of two partitions', () => {
  it('equals one window fed both streams: counts exactly, quantiles within tolerance', () => {
    const perMinute = 200;
    const xs = makeSamples('beta82', 71, 3 * 60 * perMinute);
    const single = new MarginWindows();
    const a = new MarginWindows();
    const b = new MarginWindows();
    const times: number[] = [];
    xs.forEach((x, i) => {
      const t = T0 + Math.floor((i * MIN) / perMinute);
      times.push(t);
      single.add(x, t, t);
      (i % 2 === 0 ? a : b).add(x, t, t);
    });
    const bBefore = b.toState();
    a.merge(b);
    expect(b.toState()).toEqual(bBefore);
    expect(a.counters()).toEqual(single.counters());
    expect(a.watermarkMs).toBe(single.watermarkMs);
    for (const d of [5 * MIN, HOUR, 24 * HOUR]) {
      const vm = a.view(d).summary;
      const vs = single.view(d).summary;
      expect(vm.count).toBe(vs.count);
      expect(vm.countBelow(0.1)).toBe(vs.countBelow(0.1));
      expect(vm.countBelow(0.2)).toBe(vs.countBelow(0.2));
      expect(vm.min).toBe(vs.min);
      expect(vm.max).toBe(vs.max);
      expect(vm.sum).toBeCloseTo(vs.sum, 6);
      // The view's events, by the documented rule: buckets overlapping (watermark − d, watermark].
      const from = (single.watermarkMs as number) - d;
      const inView = xs.filter((_, i) => Math.floor((times[i] as number) / MIN) * MIN + MIN > from);
      expect(inView.length).toBe(vs.count);
      const exact = new ExactSample(inView);
      for (const q of [0.01, 0.1, 0.5, 0.9, 0.99]) expect(exact.rankError(vm.distribution.quantile(q), q)).toBeLessThanOrEqual(0.002);
      expect(distributionKs(vm.distribution, vs.distribution)).toBeLessThanOrEqual(0.004);
    }
  });

  it('combines windows whose watermarks differ by hours, folding the older one’s fine buckets', () => {
    const early = oncePerMinute(3 * 60);
    const late = new MarginWindows();
    for (let k = 5 * 60; k < 6 * 60; k += 1) late.add(0.95, at(k), at(k));
    early.merge(late);
    expect(early.watermarkMs).toBe(at(359));
    expect(early.bucketCounts().fine).toBeLessThanOrEqual(120);
    expect(early.view(24 * HOUR).summary.count).toBe(240);
    expect(early.view(HOUR).summary.count).toBe(60);
    expect(early.view(HOUR).summary.min).toBe(0.95);
  });

  it('refuses windows with another config', () => {
    const a = new MarginWindows();
    const b = new MarginWindows({ thresholds: [0.3] });
    expect(codeOf(() => a.merge(b))).toBe('HR_ERR_SKETCH_ARGUMENT');
    expect(codeOf(() => a.merge(a))).toBe('HR_ERR_SKETCH_ARGUMENT');
  });
});

describe('config', () => {
  it('defaults: 1-min buckets for 2 h, 1-h buckets to 24 h, 2 min lateness', () => {
    const c = windowConfig();
    expect(c.bucketMs).toBe(MIN);
    expect(c.fineSpanMs).toBe(2 * HOUR);
    expect(c.coarseBucketMs).toBe(HOUR);
    expect(c.retentionMs).toBe(24 * HOUR);
    expect(c.latenessMs).toBe(2 * MIN);
  });

  it.each([
    [{ bucketMs: 0 }, 'bucketMs'],
    [{ coarseBucketMs: 90_000 }, 'coarseBucketMs'],
    [{ fineSpanMs: 90_000 }, 'fineSpanMs'],
    [{ latenessMs: 2 * HOUR }, 'latenessMs'],
    [{ retentionMs: HOUR }, 'retentionMs'],
    [{ compression: 1 }, 'compression'],
    [{ thresholds: [0.1, Number.NaN] }, 'thresholds[1]'],
  ])('refuses %o naming %s', (options, field) => {
    try {
      windowConfig(options);
      expect.unreachable();
    } catch (e) {
      expect(isHeadroomError(e) && e.code).toBe('HR_ERR_SKETCH_ARGUMENT');
      expect(isHeadroomError(e) && e.context.field).toBe(field);
    }
  });
});

describe('bucket history', () => {
  it('is empty before any event', () => {
    expect(new MarginWindows().bucketHistory()).toEqual([]);
  });

  it('lists every bucket oldest first with exact counts below each θ, spans cut where the fine span begins', () => {
    // 3 h of one event a minute: minutes 0..59 and part of 60..119 folded into hour buckets, the rest fine.
    const w = oncePerMinute(180);
    const history = w.bucketHistory();
    const watermark = at(179, 30_000);
    const fineStart = at(179) - 2 * HOUR + MIN; // minute 60
    expect(w.watermarkMs).toBe(watermark);
    // Spans touch and never overlap; together they hold every event exactly once.
    for (let i = 1; i < history.length; i += 1) expect(history[i]?.startMs).toBe(history[i - 1]?.endMs);
    expect(history.reduce((n, b) => n + b.count, 0)).toBe(180);
    const coarse = history.filter((b) => b.endMs - b.startMs > MIN);
    expect(coarse.map((b) => [b.startMs, b.endMs])).toEqual([[at(0), fineStart]]);
    expect(coarse[0]?.count).toBe(60);
    const fine = history.filter((b) => b.endMs - b.startMs === MIN);
    expect(fine).toHaveLength(120);
    expect(fine[0]?.startMs).toBe(fineStart);
    // Margin of minute k is (k mod 10)/10; thresholds default to [0.1, 0.2]: below 0.1 is k ≡ 0, below 0.2 is k ≡ 0, 1 (mod 10).
    for (const b of fine) {
      const k = (b.startMs - T0) / MIN;
      expect(b.below).toEqual([k % 10 === 0 ? 1 : 0, k % 10 <= 1 ? 1 : 0]);
    }
    expect(coarse[0]?.below).toEqual([6, 12]);
  });

  it('keeps the counts of merged partitions exact per bucket', () => {
    const a = oncePerMinute(30);
    const b = oncePerMinute(30);
    a.merge(b);
    const history = a.bucketHistory();
    expect(history).toHaveLength(30);
    for (const h of history) expect(h.count).toBe(2);
  });
});
