/**
 * Two invented days of production scores of `parcel-damage`, as a log would keep them: one gzipped JSON
 * lines file per day, a parcel every 4 seconds on lines 1-3. On the second day (25 November), from 12:00 UTC, line 3's
 * camera fogs up a little more every hour, so the model grows less sure there: what `headroom replay`
 * should find. A fixed seed makes the same files every time.
 *
 *     npx tsx examples/parcel-damage/make-log.ts [out-dir]
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';

function seeded(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const dir = process.argv[2] ?? '/tmp/parcel-logs';
const random = seeded(1201);
const HOUR = 3_600_000;
mkdirSync(dir, { recursive: true });
for (const day of [24, 25]) {
  const start = Date.UTC(2026, 10, day);
  const lines: string[] = [];
  for (let t = start, i = 0; t < start + 24 * HOUR; t += 4_000, i++) {
    const line = String(1 + Math.floor(random() * 3));
    const damaged = random() < 0.12;
    // As in make-events.ts: line 3 is the less sure one, and after noon on the 25th it gets worse by the hour.
    const fog = day === 25 && line === '3' ? Math.max(0, (t - (start + 12 * HOUR)) / HOUR) * 0.25 : 0;
    const sureness = random() ** ((line === '3' ? 1.2 : 0.35) + fog);
    const p = Math.round((damaged ? 0.5 + 0.5 * sureness : 0.5 - 0.5 * sureness) * 1e4) / 1e4;
    const id = `p-${day}-${String(i).padStart(6, '0')}`;
    lines.push(JSON.stringify({ id, model: 'parcel-damage', version: '2026.11.3', time: new Date(t).toISOString(), score: { kind: 'probability', p }, segment: { line } }));
  }
  // A scanner glitch: one garbled line a day, which the replay counts and skips.
  lines.splice(1000, 0, `{"id":"p-${day}-glitch","model":"parcel-damage","score":`);
  const path = join(dir, `parcel-scores-2026-11-${day}.jsonl.gz`);
  writeFileSync(path, gzipSync(`${lines.join('\n')}\n`));
  process.stdout.write(`${path}: ${lines.length} lines\n`);
}
