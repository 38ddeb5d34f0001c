import { describe, expect, it } from 'vitest';
import { BernoulliCusum, CUSUM_STATE_FORMAT, bernoulliCusumArl } from '../../../src/compare/index.js';
import { isHeadroomError } from '../../../src/errors.js';
import { seededRandom } from './prng.js';

const L = true;
const H = false;

function expectCompareError(fn: () => unknown): void {
  try {
    fn();
    expect.unreachable();
  } catch (error) {
    expect(isHeadroomError(error) && error.code).toBe('HR_ERR_COMPARE_ARGUMENT');
  }
}

describe('BernoulliCusum increments and path, by hand', () => {
  // p0 = 0.1, p1 = 0.2: a low event adds ln(0.2/0.1) = ln 2 = 0.693147;
  // any other adds ln(0.8/0.9) = −0.117783.
  // Sequence L H H L L H L with h = 2:
  //   S = 0.693147, 0.575364, 0.457581, 1.150728, 1.843875, 1.726092, 2.419240 → signal at event 7.
  const config = { p0: 0.1, p1: 0.2, threshold: 2 };
  const expected = [0.693147, 0.575364, 0.457581, 1.150728, 1.843875, 1.726092, 2.41924];

  it('has the log-likelihood-ratio increments', () => {
    const c = BernoulliCusum.create(config);
    expect(c.lowIncrement).toBeCloseTo(0.693147, 6);
    expect(c.highIncrement).toBeCloseTo(-0.117783, 6);
  });

  it('follows S = max(0, S + increment) and signals at the first S >= h, then resets', () => {
    const c = BernoulliCusum.create(config);
    const seq = [L, H, H, L, L, H, L];
    const path: number[] = [];
    const signals: boolean[] = [];
    for (const x of seq) {
      signals.push(c.update(x));
      path.push(c.statistic);
    }
    expect(signals).toEqual([false, false, false, false, false, false, true]);
    path.slice(0, 6).forEach((s, i) => expect(s).toBeCloseTo(expected[i] as number, 6));
    expect(path[6]).toBe(0); // reset after the signal
    expect(c.signals).toBe(1);
    expect(c.toState().lastSignalEvent).toBe(7);
  });

  it('is reflected at 0: events above θ cannot push S below zero', () => {
    const c = BernoulliCusum.create(config);
    c.updateMany([H, H, H]);
    expect(c.statistic).toBe(0);
    c.update(L);
    expect(c.statistic).toBeCloseTo(0.693147, 6);
  });

  it('without reset keeps firing while S stays at or above h and counts one signal per crossing', () => {
    const c = BernoulliCusum.create({ ...config, resetOnSignal: false });
    expect(c.updateMany([L, H, H, L, L, H, L])).toBe(1);
    expect(c.statistic).toBeCloseTo(2.41924, 5);
    expect(c.firing).toBe(true);
    // 2.419240 − 0.117783 = 2.301457 and − 0.117783·3 = 2.065891: still firing.
    expect(c.updateMany([H, H, H])).toBe(3);
    expect(c.signals).toBe(1);
    // One more: 1.948108 < 2, the alert clears.
    expect(c.update(H)).toBe(false);
    expect(c.firing).toBe(false);
    expect(c.update(L)).toBe(true); // 2.641255: a second crossing
    expect(c.signals).toBe(2);
  });

  it('order within a batch matters: the same 3 lows of 8 end at different S', () => {
    const first = BernoulliCusum.create({ ...config, threshold: 10 });
    const last = BernoulliCusum.create({ ...config, threshold: 10 });
    first.updateMany([L, L, L, H, H, H, H, H]);
    last.updateMany([H, H, H, H, H, L, L, L]);
    expect(first.statistic).toBeCloseTo(3 * 0.693147 - 5 * 0.117783, 5);
    expect(last.statistic).toBeCloseTo(3 * 0.693147, 5);
  });
});

describe('BernoulliCusum state', () => {
  it('serialises to plain versioned JSON and resumes exactly where it stopped', () => {
    const random = seededRandom(7);
    const events = Array.from({ length: 3000 }, () => random() < 0.15);
    const whole = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 3 });
    whole.updateMany(events);

    const first = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 3 });
    first.updateMany(events.slice(0, 1234));
    const saved = JSON.parse(JSON.stringify(first.toState())) as unknown;
    expect((saved as { format: string }).format).toBe(CUSUM_STATE_FORMAT);
    const resumed = BernoulliCusum.restore(saved);
    resumed.updateMany(events.slice(1234));

    expect(resumed.toState()).toEqual(whole.toState());
    expect(whole.signals).toBeGreaterThan(0); // the sequence must exercise signals and resets
  });

  it('restores the firing flag of a chart without reset', () => {
    const c = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 1, resetOnSignal: false });
    c.updateMany([L, L]);
    const r = BernoulliCusum.restore(c.toState());
    expect(r.firing).toBe(true);
    expect(r.update(H)).toBe(true);
    expect(r.signals).toBe(1);
  });

  it('updateRun gives what the same events one by one give', () => {
    const random = seededRandom(11);
    for (const resetOnSignal of [true, false]) {
      const a = BernoulliCusum.create({ p0: 0.05, p1: 0.1, threshold: 2.5, resetOnSignal });
      const b = BernoulliCusum.create({ p0: 0.05, p1: 0.1, threshold: 2.5, resetOnSignal });
      let hitsA = 0;
      let hitsB = 0;
      for (let r = 0; r < 400; r++) {
        const low = random() < 0.3;
        const count = Math.floor(random() * 12);
        hitsA += a.updateRun(low, count);
        for (let i = 0; i < count; i++) if (b.update(low)) hitsB++;
      }
      expect(a.toState()).toEqual(b.toState());
      expect(hitsA).toBe(hitsB);
      expect(a.signals).toBeGreaterThan(0);
    }
  });

  it.each([
    ['wrong format', { format: 'headroom-cusum/2' }],
    ['negative statistic', { statistic: -1 }],
    ['signals without a last signal', { signals: 2, lastSignalEvent: null }],
    ['last signal after the last event', { signals: 1, lastSignalEvent: 99, events: 10 }],
    ['p0 of 0', { p0: 0 }],
  ])('restore rejects %s', (_name, patch) => {
    const good = BernoulliCusum.create({ p0: 0.1, p1: 0.2, threshold: 2 }).toState();
    expectCompareError(() => BernoulliCusum.restore({ ...good, ...patch }));
  });

  it.each([
    [{ p0: 0, p1: 0.2, threshold: 2 }],
    [{ p0: 0.1, p1: 0.1, threshold: 2 }],
    [{ p0: 0.1, p1: 1, threshold: 2 }],
    [{ p0: 0.1, p1: 0.2, threshold: 0 }],
  ])('create rejects %o', (config) => {
    expectCompareError(() => BernoulliCusum.create(config));
  });
});

describe('bernoulliCusumArl', () => {
  it('is exact where every low signals at once: h <= ln(p1/p0) gives a geometric run, ARL = 1/p', () => {
    expect(bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: 0.5 })).toBeCloseTo(10, 9);
    expect(bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: 0.5 }, { rate: 0.25 })).toBeCloseTo(4, 9);
  });

  it('has converged in its lattice at the default resolution (50 vs 200 within 0.1 %)', () => {
    const coarse = bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: 3 });
    const fine = bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: 3 }, { resolution: 200 });
    expect(Math.abs(coarse - fine) / fine).toBeLessThan(1e-3);
  });

  // Monte Carlo of BernoulliCusum itself, seeded. The tolerance is 4 standard errors of the sample
  // mean, and the test also requires that 4 SE is under 5 % of the ARL, so it cannot pass by being loose.
  it.each([
    ['ARL0, watching for a doubling', { p0: 0.1, p1: 0.2, threshold: 3 }, 0.1, 6000],
    ['ARL1, after the doubling', { p0: 0.1, p1: 0.2, threshold: 3 }, 0.2, 6000],
    ['ARL0 at a small p0', { p0: 0.02, p1: 0.04, threshold: 2 }, 0.02, 8000],
    ['ARL0, watching for a fall (p1 < p0)', { p0: 0.2, p1: 0.1, threshold: 2 }, 0.2, 6000],
  ] as const)('%s agrees with a seeded Monte Carlo', (_name, config, rate, runs) => {
    const random = seededRandom(20_261_201);
    let sum = 0;
    let sumSq = 0;
    for (let r = 0; r < runs; r++) {
      const chart = BernoulliCusum.create(config);
      let n = 1;
      while (!chart.update(random() < rate)) n++;
      sum += n;
      sumSq += n * n;
    }
    const mean = sum / runs;
    const se = Math.sqrt((sumSq / runs - mean * mean) / (runs - 1));
    const arl = bernoulliCusumArl(config, { rate });
    expect(4 * se).toBeLessThan(0.05 * arl);
    expect(Math.abs(mean - arl)).toBeLessThanOrEqual(4 * se);
  });

  // An alert's false-alarm rate is one per 10⁶–10⁸ events, far beyond a Monte Carlo here; what can be
  // checked is that the chain converges there and agrees with itself at a finer lattice, and that
  // ln ARL0 keeps growing about one per unit of h, as the log-likelihood-ratio chart's does (Wald's bound
  // ARL0 >= e^h).
  it('converges for an ARL0 of 10⁷ and agrees with a finer lattice within 0.5 %', () => {
    const config = { p0: 0.05, p1: 0.1, threshold: 12 };
    const coarse = bernoulliCusumArl(config, { resolution: 10 });
    const fine = bernoulliCusumArl(config, { resolution: 20 });
    expect(coarse).toBeGreaterThan(1e7);
    expect(coarse).toBeGreaterThan(Math.exp(12));
    expect(Math.abs(coarse - fine) / fine).toBeLessThan(5e-3);
    const lower = bernoulliCusumArl({ ...config, threshold: 11 }, { resolution: 10 });
    expect(Math.log(coarse / lower)).toBeGreaterThan(0.9);
    expect(Math.log(coarse / lower)).toBeLessThan(1.1);
  });

  it('grows with the threshold and shrinks when the true rate rises', () => {
    const base = { p0: 0.1, p1: 0.2 };
    expect(bernoulliCusumArl({ ...base, threshold: 4 })).toBeGreaterThan(bernoulliCusumArl({ ...base, threshold: 3 }));
    expect(bernoulliCusumArl({ ...base, threshold: 3 }, { rate: 0.15 })).toBeLessThan(bernoulliCusumArl({ ...base, threshold: 3 }));
  });

  it('rejects bad arguments', () => {
    expectCompareError(() => bernoulliCusumArl({ p0: 0.1, p1: 0.1, threshold: 3 }));
    expectCompareError(() => bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: -1 }));
    expectCompareError(() => bernoulliCusumArl({ p0: 0.1, p1: 0.2, threshold: 3 }, { rate: 2 }));
  });
});
