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
import { drawParcel, PARCEL_MODEL, PARCEL_VERSION, seededRandom } from '../../src/demo/parcels.js';

const dir = process.argv[2] ?? '/tmp/parcel-logs';
const random = seededRandom(1201);
const HOUR = 3_600_000;
mkdirSync(dir, { recursive: true });
for (const day of [24, 25]) {
  const start = Date.UTC(2026, 10, day);
  const lines: string[] = [];
  for (let t = start, i = 0; t < start + 24 * HOUR; t += 4_000, i++) {
    // Line 3 is the less sure one (src/demo/parcels.ts), and after noon on the 25th it gets worse by the hour.
    const { line, p } = drawParcel(random, (l) => (day === 25 && l === '3' ? Math.max(0, (t - (start + 12 * HOUR)) / HOUR) * 0.25 : 0));
    const id = `p-${day}-${String(i).padStart(6, '0')}`;
    lines.push(JSON.stringify({ id, model: PARCEL_MODEL, version: PARCEL_VERSION, time: new Date(t).toISOString(), score: { kind: 'probability', p }, segment: { line } }));
  }
  // A scanner glitch: one garbled line a day, which the replay counts and skips.
  lines.splice(1000, 0, `{"id":"p-${day}-glitch","model":"parcel-damage","score":`);
  const path = join(dir, `parcel-scores-2026-11-${day}.jsonl.gz`);
  writeFileSync(path, gzipSync(`${lines.join('\n')}\n`));
  process.stdout.write(`${path}: ${lines.length} lines\n`);
}
