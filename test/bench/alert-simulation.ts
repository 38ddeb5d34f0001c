/**
 * How fast the early-warning CUSUM sees a doubling of the low-margin share, and how often it cries wolf,
 * beside a plain fixed-window threshold, on the same simulated events:
 *
 *     node --import tsx test/bench/alert-simulation.ts [--p0=0.05] [--factor=2] [--arl0=1e7]
 *         [--stationary=1e9] [--runs=2000] [--seed=1]
 *
 * Streams: the low-margin indicator of each event is Bernoulli(p0), independent. Stationary: `stationary`
 * events at p0, counting alarms (every detector restarts after an alarm). Step: p0 up to event τ, then
 * factor × p0; τ = 20,000 + a uniform offset below 10,000, so bucket and window edges fall anywhere;
 * delay = events from τ up to and including the alarm (alarms before τ are ignored; the detector restarts
 * and goes on). The stream is drawn as geometric gaps between lows, which is the same Bernoulli stream.
 *
 * Detectors:
 * - CUSUM, event by event: BernoulliCusum (src/compare), h from cusumThreshold for ARL0 = `arl0`;
 * - CUSUM, bucket feed: the watcher's feed (src/alerts/early-warning.ts), one batchStep per closed bucket
 *   of B events, same h. At 1-minute buckets B = 60 × the series' events per second;
 * - fixed window: alarm when more than c of the W events of a window (back to back, not sliding) are low,
 *   c the least count whose false-alarm rate is at most the CUSUM's claimed one (binomial tail), or at
 *   most 1 per 10⁶ events.
 */
import { batchStep, cusumThreshold } from '../../src/alerts/index.js';
import { binomialPmf } from '../../src/compare/binomial-pmf.js';
import { BernoulliCusum, bernoulliCusumArl } from '../../src/compare/index.js';
import { seededRandom } from '../unit/compare/prng.js';

const args = new Map(
  process.argv.slice(2).map((a) => {
    const [k, v] = a.replace(/^--/, '').split('=');
    return [k ?? '', v ?? ''] as const;
  }),
);
const p0 = Number(args.get('p0') ?? 0.05);
const factor = Number(args.get('factor') ?? 2);
const arl0Target = Number(args.get('arl0') ?? 1e7);
const stationaryEvents = Number(args.get('stationary') ?? 1e9);
const runs = Number(args.get('runs') ?? 2000);
const seed = Number(args.get('seed') ?? 1);
const p1 = factor * p0;

/** Consumes the stream as runs of events at or above θ, each followed by one low (or not, at a cut). */
interface Detector {
  readonly name: string;
  /** `highs` events above θ, then a low if `low`; returns the 1-based index (within this call) of the first alarm, or 0. */
  feed(highs: number, low: boolean): number;
}

function eventCusum(h: number): Detector {
  let chart = BernoulliCusum.create({ p0, p1, threshold: h });
  return {
    name: 'CUSUM, event by event',
    feed(highs, low) {
      chart.updateRun(false, highs); // only lows push S up, so a run of highs never alarms
      if (low && chart.update(true)) {
        chart = BernoulliCusum.create({ p0, p1, threshold: h });
        return highs + 1;
      }
      return 0;
    },
  };
}

function bucketCusum(h: number, size: number): Detector {
  let s = 0;
  let filled = 0;
  let lows = 0;
  return {
    name: `CUSUM, buckets of ${size.toLocaleString('en')}`,
    feed(highs, low) {
      let alarm = 0;
      let done = 0;
      const total = highs + (low ? 1 : 0);
      while (done < total) {
        const take = Math.min(size - filled, total - done);
        // The low, if any, is the last event of this call.
        if (low && done + take === total) lows++;
        filled += take;
        done += take;
        if (filled === size) {
          s = batchStep(s, size, lows, p0, p1, h);
          if (s >= h && alarm === 0) alarm = done;
          if (s >= h) s = 0;
          filled = 0;
          lows = 0;
        }
      }
      return alarm;
    },
  };
}

function fixedWindow(width: number, limit: number, label: string): Detector {
  let filled = 0;
  let lows = 0;
  return {
    name: `fixed window ${width.toLocaleString('en')}, > ${limit} low (${label})`,
    feed(highs, low) {
      let alarm = 0;
      let done = 0;
      const total = highs + (low ? 1 : 0);
      while (done < total) {
        const take = Math.min(width - filled, total - done);
        if (low && done + take === total) lows++;
        filled += take;
        done += take;
        if (filled === width) {
          if (lows > limit && alarm === 0) alarm = done;
          filled = 0;
          lows = 0;
        }
      }
      return alarm;
    },
  };
}

/** Least c with (10⁶ / W) · P(Bin(W, p0) > c) <= perMillion. */
function windowLimit(width: number, perMillion: number): number {
  let tail = 1;
  for (let c = 0; c <= width; c++) {
    tail -= binomialPmf(c, width, width * p0, width * (1 - p0));
    if ((1e6 / width) * Math.max(tail, 0) <= perMillion) return c;
  }
  return width;
}

const h = cusumThreshold(p0, p1, arl0Target);
const arl0 = bernoulliCusumArl({ p0, p1, threshold: h }, { resolution: 10 });
const arl1 = bernoulliCusumArl({ p0, p1, threshold: h }, { rate: p1, resolution: 10 });
const claimedPerMillion = 1e6 / arl0;
const limitSame = (w: number): number => windowLimit(w, claimedPerMillion);
const detectors = (): Detector[] => [
  eventCusum(h),
  bucketCusum(h, 100),
  bucketCusum(h, 1_000),
  bucketCusum(h, 10_000),
  fixedWindow(1_000, limitSame(1_000), 'same false-alarm budget'),
  fixedWindow(2_000, limitSame(2_000), 'same false-alarm budget'),
  fixedWindow(1_000, windowLimit(1_000, 1), '1 per 10⁶ budget'),
];

const logHigh = (p: number): number => Math.log1p(-p);
/** Events at or above θ before the next low: geometric on {0, 1, ...}. */
const gap = (random: () => number, p: number): number => Math.floor(Math.log(1 - random()) / logHigh(p));

function stationary(): number[] {
  const random = seededRandom(seed);
  const ds = detectors();
  const alarms = ds.map(() => 0);
  let events = 0;
  while (events < stationaryEvents) {
    const g = Math.min(gap(random, p0), stationaryEvents - events);
    const low = events + g < stationaryEvents;
    ds.forEach((d, i) => {
      if (d.feed(g, low) > 0) alarms[i] = (alarms[i] as number) + 1;
    });
    events += g + (low ? 1 : 0);
  }
  return alarms.map((a) => (a / events) * 1e6);
}

function delays(): number[][] {
  const random = seededRandom(seed + 1);
  const out: number[][] = detectors().map(() => []);
  const cap = 500_000;
  for (let r = 0; r < runs; r++) {
    const ds = detectors();
    const tau = 20_000 + Math.floor(random() * 10_000);
    const open = new Set(ds.map((_, i) => i));
    let events = 0;
    while (open.size > 0 && events < tau + cap) {
      const before = events < tau;
      let g = gap(random, before ? p0 : p1);
      let low = true;
      // The rate changes at τ: cut the run there and draw afresh at p1 (geometric gaps forget the past).
      if (before && events + g >= tau) {
        g = tau - events;
        low = false;
      }
      for (const i of [...open]) {
        const at = (ds[i] as Detector).feed(g, low);
        if (at > 0 && events + at > tau) {
          (out[i] as number[]).push(events + at - tau);
          open.delete(i);
        }
      }
      events += g + (low ? 1 : 0);
    }
    for (const i of open) (out[i] as number[]).push(Infinity);
  }
  return out;
}

function quantile(xs: readonly number[], q: number): number {
  const sorted = [...xs].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.floor(q * (sorted.length - 1) + 0.5))] as number;
}

const t0 = process.hrtime.bigint();
const rates = stationary();
const t1 = process.hrtime.bigint();
const delay = delays();
const t2 = process.hrtime.bigint();

const fmt = (n: number): string => (Number.isFinite(n) ? Math.round(n).toLocaleString('en') : 'none');
console.log(`p0 ${p0} → ${p1} (×${factor}); CUSUM h = ${h.toFixed(3)} for ARL0 ${arl0Target.toExponential(0)}: bernoulliCusumArl gives ARL0 ${arl0.toExponential(3)} ` +
  `(${claimedPerMillion.toFixed(3)} false alarms per 10⁶ events) and a mean delay of ${arl1.toFixed(0)} events from S = 0`);
console.log(`stationary: ${stationaryEvents.toExponential(1)} events (${(Number(t1 - t0) / 1e9).toFixed(1)} s); step: ${runs} runs (${(Number(t2 - t1) / 1e9).toFixed(1)} s); seed ${seed}\n`);
const names = detectors().map((d) => d.name);
const width = Math.max(...names.map((n) => n.length));
console.log(`${'detector'.padEnd(width)}  false alarms / 10⁶   delay median   mean     p90`);
names.forEach((name, i) => {
  const d = delay[i] as number[];
  const finite = d.filter(Number.isFinite);
  const mean = finite.reduce((a, b) => a + b, 0) / Math.max(1, finite.length);
  const missed = d.length - finite.length;
  console.log(
    `${name.padEnd(width)}  ${(rates[i] as number).toFixed(3).padStart(19)}   ${fmt(quantile(d, 0.5)).padStart(12)}   ${fmt(mean).padStart(6)}  ${fmt(quantile(d, 0.9)).padStart(6)}` +
      (missed > 0 ? `  (${missed} runs undetected)` : ''),
  );
});
