/**
 * Bytes one series holds for 24 h of history at 1,000 events/s, serialised and on the heap:
 *
 *     node --expose-gc --import tsx test/bench/sketch-memory.ts [--rate=1000] [--hours=26]
 *         [--shape=continuous|discrete] [--fineSpanMin=120] [--compression=200]
 *
 * One MarginWindows (default config: 1-min buckets for 2 h, 1-h buckets to 24 h) is fed `rate` events per
 * second of event time for `hours` (26 h by default, so both tiers are full), then:
 * - serialised: the length of JSON.stringify(toState()), the checkpoint the watcher writes, and gzipped;
 * - heap, live: heapUsed + arrayBuffers after vs before building and feeding it (after gc), current
 *   buffers included;
 * - heap, restored: the same for 20 copies made with fromState(), per copy (compacted buckets, the
 *   steady state);
 * and, for the compare side, how long the 5m / 1h / 24h views take to merge.
 * Without --expose-gc the heap figures are skipped.
 */
import { gzipSync } from 'node:zlib';
import { MarginWindows } from '../../src/sketch/windows.js';
import { uniform } from '../unit/sketch/samples.js';

const args = new Map(
  process.argv.slice(2).map((a) => {
    const [k, v] = a.replace(/^--/, '').split('=');
    return [k ?? '', v ?? ''] as const;
  }),
);
const rate = Number(args.get('rate') ?? 1000);
const hours = Number(args.get('hours') ?? 26);
const shape = args.get('shape') ?? 'continuous';
const fineSpanMin = args.has('fineSpanMin') ? Number(args.get('fineSpanMin')) : undefined;
const compression = args.has('compression') ? Number(args.get('compression')) : undefined;
const gc = (globalThis as { gc?: () => void }).gc;

/** Typed arrays keep their bytes outside the JS heap, so heapUsed alone would miss the centroids. */
function heap(): number {
  gc?.();
  gc?.();
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

/** Beta(8, 1) (bunched near 1, like a confident classifier), or a discrete mix with atoms at 0 and 1. */
function margin(i: number): number {
  const u = uniform(1, i);
  if (shape === 'discrete') {
    if (u < 0.3) return 1;
    if (u < 0.35) return 0;
    if (u < 0.5) return Math.round(uniform(2, i) * 20) / 20;
  }
  return uniform(3, i) ** 0.125;
}

const T0 = Date.UTC(2026, 11, 1);
const events = Math.round(rate * hours * 3600);
const stepMs = 1000 / rate;

const before = heap();
const w = new MarginWindows({
  ...(fineSpanMin === undefined ? {} : { fineSpanMs: fineSpanMin * 60_000 }),
  ...(compression === undefined ? {} : { compression }),
});
const t0 = process.hrtime.bigint();
for (let i = 0; i < events; i += 1) {
  const t = T0 + Math.floor(i * stepMs);
  w.add(margin(i), t, t);
}
const feedNs = Number(process.hrtime.bigint() - t0);
const live = heap() - before;

const viewMs: Record<string, number> = {};
for (const [name, d] of [['5m', 300_000], ['1h', 3_600_000], ['24h', 86_400_000]] as const) {
  const reps = 5;
  const s = process.hrtime.bigint();
  for (let r = 0; r < reps; r += 1) w.view(d);
  viewMs[name] = Number(process.hrtime.bigint() - s) / reps / 1e6;
}

const state = w.toState();
const text = JSON.stringify(state);
let centroids = 0;
for (const b of [...state.fine, ...state.coarse]) centroids += b.summary.digest.centroids.length;

const base = heap();
const copies = Array.from({ length: 20 }, () => MarginWindows.fromState(JSON.parse(text)));
const restored = (heap() - base) / copies.length;

const kb = (b: number): string => `${(b / 1024).toFixed(0)} KiB`;
console.log(`${events.toLocaleString('en')} events (${rate}/s for ${hours} h, ${shape} margins), ${(feedNs / events).toFixed(0)} ns per add`);
console.log(`buckets: ${state.fine.length} fine + ${state.coarse.length} coarse, ${centroids} centroids in all`);
const gzipped = gzipSync(text).length;
console.log(`config: fineSpanMs ${w.config.fineSpanMs}, compression ${w.config.compression}, scale ${w.config.scale}`);
console.log(`serialised state: ${text.length.toLocaleString('en')} bytes (${kb(text.length)}; gzip ${kb(gzipped)})`);
if (gc === undefined) {
  console.log('heap: run with node --expose-gc to measure');
} else {
  console.log(`heap, live series: ${kb(live)}; restored copy: ${kb(restored)} per series`);
}
console.log(`view merge time: 5m ${viewMs['5m']?.toFixed(1)} ms, 1h ${viewMs['1h']?.toFixed(1)} ms, 24h ${viewMs['24h']?.toFixed(1)} ms`);
console.log(`counted: ${JSON.stringify(w.counters())}; copies held: ${copies.length}`);
