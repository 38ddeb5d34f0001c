/**
 * The hot path against bare JSON.parse, side by side in one run: `npx tsx test/bench/throughput.ts [--n=1000000]`.
 *
 * Events: the parcel-inspection scenario (model parcel-damage, three sorting lines, mostly probability
 * scores, some logits and three-class scores, about one in four with a label), pre-encoded as UTF-8 bytes
 * as they arrive from Kafka. Each variant runs over the same bytes in alternating slices, and the median
 * of the slices is reported, so a burst of load from another process hits both alike.
 *
 * - baseline:  JSON.parse(utf8 decode(bytes)) — what any consumer must do with the same bytes;
 * - parse-str: JSON.parse of the pre-decoded string (a stricter baseline: it skips the UTF-8 step);
 * - pipeline:  decodeScoredEvent → measureMargins → MarginWindows.add for the series `all` and `line=<n>`.
 */
import { decodeScoredEvent } from '../../src/events/index.js';
import { measureMargins } from '../../src/margin/index.js';
import { MarginWindows } from '../../src/sketch/index.js';

const n = Number(/--n=(\d+)/.exec(process.argv.join(' '))?.[1] ?? 1_000_000);
const SLICES = 10;

function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
}

function makeEvents(count: number): { bytes: Uint8Array[]; strings: string[] } {
  const rnd = lcg(7);
  const encoder = new TextEncoder();
  const start = Date.parse('2026-12-01T08:00:00Z');
  const bytes: Uint8Array[] = [];
  const strings: string[] = [];
  for (let i = 0; i < count; i += 1) {
    const line = String(1 + Math.floor(rnd() * 3));
    const r = rnd();
    const score =
      r < 0.8
        ? { kind: 'probability', p: Math.round(rnd() * 1e6) / 1e6 }
        : r < 0.9
          ? { kind: 'logit', z: Math.round((rnd() * 12 - 6) * 1e4) / 1e4 }
          : (() => {
              const a = rnd();
              const b = rnd() * (1 - a);
              return { kind: 'classes', values: { intact: a, dented: b, torn: 1 - a - b } };
            })();
    const event: Record<string, unknown> = {
      id: `p-${i.toString().padStart(7, '0')}`,
      model: 'parcel-damage',
      version: '2026.11.3',
      time: new Date(start + i * 2).toISOString(),
      score,
      segment: { line, site: 'north' },
    };
    if (rnd() < 0.25 && score.kind !== 'classes') event.label = rnd() < 0.5 ? 1 : 0;
    const text = JSON.stringify(event);
    strings.push(text);
    bytes.push(encoder.encode(text));
  }
  return { bytes, strings };
}

const { bytes, strings } = makeEvents(n);
const decoder = new TextDecoder('utf-8', { fatal: true });
// Series routing as the watcher will do it: nested maps, so no key string is built per event.
const windows = new Map<string, Map<string, Map<string, MarginWindows>>>();
let seriesCount = 0;
function windowsFor(model: string, version: string, segment: string): MarginWindows {
  let byVersion = windows.get(model);
  if (byVersion === undefined) windows.set(model, (byVersion = new Map()));
  let bySegment = byVersion.get(version);
  if (bySegment === undefined) byVersion.set(version, (bySegment = new Map()));
  let w = bySegment.get(segment);
  if (w === undefined) {
    bySegment.set(segment, (w = new MarginWindows()));
    seriesCount += 1;
  }
  return w;
}
let sink = 0;
let rejected = 0;

const variants: Record<string, (from: number, to: number) => void> = {
  baseline: (from, to) => {
    for (let i = from; i < to; i += 1) sink += (JSON.parse(decoder.decode(bytes[i])) as { id: string }).id.length;
  },
  'parse-str': (from, to) => {
    for (let i = from; i < to; i += 1) sink += (JSON.parse(strings[i] as string) as { id: string }).id.length;
  },
  pipeline: (from, to) => {
    for (let i = from; i < to; i += 1) {
      const decoded = decodeScoredEvent(bytes[i] as Uint8Array);
      if (!decoded.ok) {
        rejected += 1;
        continue;
      }
      const e = decoded.event;
      const m = measureMargins(e.score, e.label);
      if (!m.ok) {
        rejected += 1;
        continue;
      }
      windowsFor(e.model, e.version, 'all').add(m.confidence, e.timeMs, e.timeMs);
      windowsFor(e.model, e.version, e.segment.line ?? '').add(m.confidence, e.timeMs, e.timeMs);
    }
  },
};

const timings: Record<string, number[]> = Object.fromEntries(Object.keys(variants).map((k) => [k, []]));
const sliceSize = Math.ceil(n / SLICES);
// Warm-up on the first slice, so the JIT has seen every variant before any slice is timed.
for (const run of Object.values(variants)) run(0, Math.min(20_000, n));
windows.clear();
seriesCount = 0;
for (let s = 0; s < SLICES; s += 1) {
  const from = s * sliceSize;
  const to = Math.min(n, from + sliceSize);
  for (const [name, run] of Object.entries(variants)) {
    const t0 = performance.now();
    run(from, to);
    timings[name]?.push((to - from) / ((performance.now() - t0) / 1000));
  }
}
const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)] ?? NaN;
const rate = Object.fromEntries(Object.entries(timings).map(([k, v]) => [k, median(v)])) as Record<string, number>;
const fmt = (x: number): string => `${(x / 1000).toFixed(0)}k events/s`;
console.log(`throughput over ${n.toLocaleString()} events (${SLICES} alternating slices, medians)`);
for (const [k, v] of Object.entries(rate)) console.log(`  ${k.padEnd(10)} ${fmt(v)}`);
console.log(`  ratio pipeline / baseline  (JSON.parse of the same bytes) = ${((rate.pipeline ?? 0) / (rate.baseline ?? 1)).toFixed(2)}  (target >= 0.6)`);
console.log(`  ratio pipeline / parse-str (JSON.parse of a ready string) = ${((rate.pipeline ?? 0) / (rate['parse-str'] ?? 1)).toFixed(2)}`);
console.log(`  series ${seriesCount}, rejected ${rejected}, checksum ${sink % 1000}`);
