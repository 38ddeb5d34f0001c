import { describe, expect, it } from 'vitest';
import { ALERT_DEFAULTS, batchStep, cusumThreshold, feedEarlyWarning, parseAlertsSection } from '../../../src/alerts/index.js';
import type { ClosedBucket, EarlyWarningRule } from '../../../src/alerts/index.js';
import { BernoulliCusum, bernoulliCusumArl } from '../../../src/compare/index.js';
import { caught } from '../caught.js';
import { seededRandom } from '../compare/prng.js';

const rule = parseAlertsSection({ rules: [{ name: 'early', kind: 'earlyWarning', threshold: 0.1 }] }).rules[0] as EarlyWarningRule;
const fixedH = () => 4;
const bucket = (m: number, count: number, low: number): ClosedBucket => ({ startMs: m * 60_000, endMs: (m + 1) * 60_000, count, low });

describe('batchStep', () => {
  it('adds k·ln(p1/p0) + (n − k)·ln((1 − p1)/(1 − p0)), reflected at 0 and held at h', () => {
    // p0 = 0.1, p1 = 0.2: ln 2 = 0.693147 per low, ln(0.8/0.9) = −0.117783 per other event.
    expect(batchStep(0, 10, 3, 0.1, 0.2, 5)).toBeCloseTo(3 * 0.693147 - 7 * 0.117783, 6);
    expect(batchStep(0.5, 10, 0, 0.1, 0.2, 5)).toBe(0);
    expect(batchStep(4.5, 10, 5, 0.1, 0.2, 5)).toBe(5);
  });

  it('ends a bucket at or below where the same events one by one end (reflection only at bucket ends)', () => {
    const random = seededRandom(9);
    let batch = 0;
    const events = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 1e9 });
    for (let b = 0; b < 500; b++) {
      let low = 0;
      for (let i = 0; i < 20; i++) {
        const x = random() < 0.12;
        if (x) low++;
        events.update(x);
      }
      batch = batchStep(batch, 20, low, 0.1, 0.2, 1e9);
      expect(batch).toBeLessThanOrEqual(events.statistic + 1e-9);
    }
  });
});

describe('cusumThreshold and the documented defaults', () => {
  it('gives the default rule (5 % reference share, doubling) one false alarm per 10⁷ events, per bernoulliCusumArl', () => {
    const p0 = 0.05;
    const h = cusumThreshold(p0, p0 * ALERT_DEFAULTS.riseFactor, ALERT_DEFAULTS.inControlEvents);
    const arl0 = bernoulliCusumArl({ p0, p1: 2 * p0, threshold: h }, { resolution: 10 });
    expect(Math.abs(arl0 / 1e7 - 1)).toBeLessThan(0.015);
    // The claimed false-alarm rate per 10⁶ in-control events, and the mean delay after a doubling.
    expect((1e6 / arl0).toFixed(2)).toBe('0.10');
    const arl1 = bernoulliCusumArl({ p0, p1: 2 * p0, threshold: h }, { rate: 2 * p0, resolution: 10 });
    expect(arl1).toBeGreaterThan(400);
    expect(arl1).toBeLessThan(700);
  }, 60_000);

  // A seeded Monte Carlo of the charts at an ARL0 small enough to simulate: event by event (BernoulliCusum,
  // the chart bernoulliCusumArl describes) it matches within 4 standard errors; fed in buckets of 50 it
  // alarms no more often (its mean run length is at least the claim, minus 4 standard errors).
  it('matches a seeded Monte Carlo event by event, and bucket feeding is no more alarm-prone', () => {
    const p0 = 0.05;
    const target = 2000;
    const h = cusumThreshold(p0, 2 * p0, target);
    const claimed = bernoulliCusumArl({ p0, p1: 2 * p0, threshold: h });
    expect(Math.abs(claimed / target - 1)).toBeLessThan(0.01);
    const random = seededRandom(20_261_202);
    const runs = 3000;
    const single: number[] = [];
    const batched: number[] = [];
    for (let r = 0; r < runs; r++) {
      const chart = BernoulliCusum.create({ p0, p1: 2 * p0, threshold: h });
      let n = 1;
      while (!chart.update(random() < p0)) n++;
      single.push(n);
      let s = 0;
      let events = 0;
      for (;;) {
        let low = 0;
        for (let i = 0; i < 50; i++) if (random() < p0) low++;
        events += 50;
        s = batchStep(s, 50, low, p0, 2 * p0, h);
        if (s >= h) break;
      }
      batched.push(events);
    }
    const stats = (xs: number[]) => {
      const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
      const sd = Math.sqrt(xs.reduce((a, b) => a + (b - mean) ** 2, 0) / (xs.length - 1));
      return { mean, se: sd / Math.sqrt(xs.length) };
    };
    const a = stats(single);
    expect(4 * a.se).toBeLessThan(0.1 * claimed);
    expect(Math.abs(a.mean - claimed)).toBeLessThanOrEqual(4 * a.se);
    const b = stats(batched);
    expect(b.mean).toBeGreaterThanOrEqual(claimed - 4 * b.se);
  }, 60_000);

  it('finds h for large reference shares too, where the lattice moves ARL0 in jumps wider than 1 %', () => {
    // p0 ≈ 0.26 made the secant circle without settling (seen on a real stream); now: the smallest h that reaches the target.
    for (const p0 of [0.25866666666666666, 0.4]) {
      const h = cusumThreshold(p0, 2 * p0, 1e6);
      const arl = (t: number): number => bernoulliCusumArl({ p0, p1: 2 * p0, threshold: t }, { resolution: 10 });
      expect(arl(h)).toBeGreaterThanOrEqual(1e6 * 0.99);
      expect(arl(h)).toBeLessThan(1e6 * 1.1);
      expect(arl(h * 0.98)).toBeLessThan(arl(h));
    }
  });

  it('refuses p1 <= p0 and, below 1/p0 events, gives the one-low threshold', () => {
    expect(caught(() => cusumThreshold(0.1, 0.1, 1000)).code).toBe('HR_ERR_ALERT_ARGUMENT');
    expect(cusumThreshold(0.01, 0.02, 50)).toBeCloseTo(Math.log(2), 12);
  });
});

describe('feedEarlyWarning', () => {
  it('reads unknown without a reference share, or with a share of 0', () => {
    expect(feedEarlyWarning(null, rule, { referenceShare: null, buckets: [bucket(0, 10, 1)] }, fixedH).reading.verdict).toBe('unknown');
    const zero = feedEarlyWarning(null, rule, { referenceShare: 0, buckets: [bucket(0, 10, 1)] }, fixedH);
    expect(zero.reading).toMatchObject({ verdict: 'unknown', reason: expect.stringMatching(/no margins below 0.1/) });
    expect(zero.state).toBeNull();
  });

  it('feeds in start order, counts a crossing inside a catch-up batch, and reads fire and clear levels', () => {
    // Buckets given out of order; the crossing is at the second (8 lows of 20 at p0 0.05: +8 ln 2 − 12·0.0541).
    const r = feedEarlyWarning(null, rule, { referenceShare: 0.05, buckets: [bucket(2, 200, 0), bucket(1, 20, 8), bucket(0, 20, 1)] }, fixedH);
    expect(r.state).toMatchObject({ h: 4, signals: 1, events: 240, lows: 9, fedThroughMs: 180_000 });
    expect(r.state?.statistic).toBeLessThan(4);
    expect(r.reading).toMatchObject({ verdict: 'above', value: 4, fireLevel: 4, clearLevel: 2 });
    const next = feedEarlyWarning(r.state, rule, { referenceShare: 0.05, buckets: [bucket(3, 1000, 50)] }, fixedH);
    expect(next.reading.verdict).toBe('below');
  });

  it('restarts the chart at 0 under a new reference share but does not feed old buckets again', () => {
    const first = feedEarlyWarning(null, rule, { referenceShare: 0.05, buckets: [bucket(0, 20, 3)] }, fixedH);
    expect(first.state?.statistic).toBeGreaterThan(0);
    const moved = feedEarlyWarning(first.state, rule, { referenceShare: 0.04, buckets: [bucket(0, 20, 3)] }, fixedH);
    expect(moved.state).toMatchObject({ p0: 0.04, p1: 0.08, statistic: 0, events: 20, fedThroughMs: 60_000 });
  });

  it('refuses overlapping buckets and impossible counts', () => {
    const fed = feedEarlyWarning(null, rule, { referenceShare: 0.05, buckets: [bucket(0, 20, 3)] }, fixedH);
    const overlap = { startMs: 30_000, endMs: 90_000, count: 5, low: 0 };
    expect(caught(() => feedEarlyWarning(fed.state, rule, { referenceShare: 0.05, buckets: [overlap] }, fixedH)).code).toBe('HR_ERR_ALERT_ARGUMENT');
    expect(caught(() => feedEarlyWarning(null, rule, { referenceShare: 0.05, buckets: [bucket(0, 5, 6)] }, fixedH)).message).toMatch(/buckets\[0\]/);
  });
});
