/**
 * `headroom replay` from a gzipped JSONL file against a bare read of the same file, side by side in one
 * run: `npx tsx test/bench/replay.ts [--n=1000000]`.
 *
 * - raw:    createReadStream → gunzip → split into lines (no decoding): the least any replay must do;
 * - replay: runReplay with 1h windows: decode, margins, routing (all, line=<n>, site=<s>), windows,
 *           comparisons with a reference, and report.json, report.csv, metrics.om and report.html written.
 * The two run in turn, twice each, and the faster run of each is reported, so a burst of load from
 * another process on the machine is less likely to colour one of them alone.
 */
import { createReadStream, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createGzip, createGunzip } from 'node:zlib';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import { buildReference, formatReference } from '../../src/reference/index.js';
import { decodeScoredEvent } from '../../src/events/index.js';
import type { ScoredEvent } from '../../src/events/index.js';
import { parseReplayWindow, runReplay } from '../../src/replay/index.js';

const n = Number(/--n=(\d+)/.exec(process.argv.join(' '))?.[1] ?? 1_000_000);
const dir = mkdtempSync(join(tmpdir(), 'headroom-bench-replay-'));

function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
}

function* lines(count: number, seed: number, startMs: number): Generator<string> {
  const rnd = lcg(seed);
  for (let i = 0; i < count; i += 1) {
    const line = String(1 + Math.floor(rnd() * 3));
    const p = Math.round((line === '3' ? 0.5 + (rnd() - 0.5) * 0.6 : rnd()) * 1e6) / 1e6;
    const event = { id: `p-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(startMs + i * 100).toISOString(), score: { kind: 'probability', p }, segment: { line, site: rnd() < 0.5 ? 'north' : 'south' } };
    yield `${JSON.stringify(event)}\n`;
  }
}

async function rawRead(path: string): Promise<number> {
  let count = 0;
  const gunzip = createReadStream(path, { highWaterMark: 256 * 1024 }).pipe(createGunzip({ chunkSize: 256 * 1024 }));
  let carry: Buffer | undefined;
  for await (const chunk of gunzip as AsyncIterable<Buffer>) {
    const buf = carry === undefined ? chunk : Buffer.concat([carry, chunk]);
    let from = 0;
    for (let at = buf.indexOf(10, from); at >= 0; at = buf.indexOf(10, from)) {
      if (buf.subarray(from, at).length > 0) count += 1;
      from = at + 1;
    }
    carry = from < buf.length ? buf.subarray(from) : undefined;
  }
  return count + (carry === undefined ? 0 : 1);
}

const start = Date.parse('2026-11-30T00:00:00Z');
const input = join(dir, 'events.jsonl.gz');
process.stdout.write(`writing ${n.toLocaleString('en')} events to a .gz file...\n`);
await pipeline(Readable.from(lines(n, 7, start)), createGzip(), (await import('node:fs')).createWriteStream(input));
const held = [...lines(20_000, 8, start)].map((l) => {
  const d = decodeScoredEvent(Buffer.from(l.trimEnd()));
  if (!d.ok) throw new Error(d.detail);
  return d.event;
});
const referencePath = join(dir, 'reference.json');
writeFileSync(referencePath, formatReference(buildReference(held as ScoredEvent[], { createdAt: '2026-11-29T00:00:00Z', segmentKeys: ['line', 'site'] })));
const silent = { write: () => true };

const rawMs: number[] = [];
const replayMs: number[] = [];
let windows = 0;
for (let round = 0; round < 2; round += 1) {
  let t = performance.now();
  const count = await rawRead(input);
  rawMs.push(performance.now() - t);
  if (count !== n) throw new Error(`raw read found ${count} lines, expected ${n}`);
  t = performance.now();
  const { report } = await runReplay(
    { inputs: [input], window: parseReplayWindow('1h'), out: join(dir, `out-${round}`), references: [referencePath], progress: false, metricsStepMs: 60_000 },
    { stdout: silent, stderr: silent, nowMs: () => Date.now() },
  );
  replayMs.push(performance.now() - t);
  if (report.totals.events !== n) throw new Error(`replay counted ${report.totals.events} events, expected ${n}`);
  windows = new Set(report.windows.map((w) => w.start)).size;
}
const raw = Math.min(...rawMs);
const replay = Math.min(...replayMs);
const rate = (ms: number): string => `${Math.round(n / (ms / 1000)).toLocaleString('en')} events/s`;
console.log(`events: ${n.toLocaleString('en')} in one .gz JSONL file, ${windows} windows of 1h, 6 series (all, line=1..3, site=north|south)`);
console.log(`raw gunzip + line split: ${(raw / 1000).toFixed(2)} s  ${rate(raw)}  (runs: ${rawMs.map((x) => (x / 1000).toFixed(2)).join(', ')} s)`);
console.log(`headroom replay:         ${(replay / 1000).toFixed(2)} s  ${rate(replay)}  (runs: ${replayMs.map((x) => (x / 1000).toFixed(2)).join(', ')} s)`);
console.log(`ratio replay / raw: ${(replay / raw).toFixed(1)}x the time (replay runs at ${((raw / replay) * 100).toFixed(1)}% of the raw read's rate)`);
rmSync(dir, { recursive: true, force: true });
