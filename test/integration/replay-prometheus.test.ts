/**
 * Backfill end to end: `headroom replay` writes metrics.om from a gzipped log, the real
 * `promtool tsdb create-blocks-from openmetrics` turns it into blocks, and a real Prometheus started on
 * those blocks answers range queries with the replayed figures, under the watcher's metric names.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { parseReplayOptions, runReplayCommand } from '../../src/cli/replay-command.js';
import type { ReplayReport } from '../../src/replay/index.js';
import { startPrometheus, type RunningPrometheus } from '../harness/prometheus.js';
import { rng } from '../unit/events/prng.js';

const HOUR = 3_600_000;
const HOURS = 4;
const PER_HOUR = 600;
const THETA = 0.25;

describe.skipIf(!inject('prometheusAvailable'))('replay metrics.om backfilled into a real Prometheus', () => {
  const dir = mkdtempSync(join(tmpdir(), 'headroom-replay-prom-'));
  let prometheus: RunningPrometheus | undefined;
  afterAll(async () => {
    await prometheus?.stop();
    rmSync(dir, { recursive: true, force: true });
  });

  it('answers a range query with the replayed low-margin shares and counts', async () => {
    // Four whole hours ending at least an hour ago: inside Prometheus' retention, clear of its head block.
    const first = Math.floor(Date.now() / HOUR) * HOUR - (HOURS + 2) * HOUR;
    const next = rng(11).next;
    const lines: string[] = [];
    const below = new Map<number, { low: number; n: number }>();
    for (let h = 0; h < HOURS; h += 1) {
      // Each hour line 3 gets less sure of itself, so every hour's share is different.
      const spread = 1 - h * 0.2;
      for (let i = 0; i < PER_HOUR; i += 1) {
        const p = Math.round((0.5 + (next() - 0.5) * spread) * 1000) / 1000;
        const t = first + h * HOUR + Math.floor((i * HOUR) / PER_HOUR);
        lines.push(JSON.stringify({ id: `b-${h}-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(t).toISOString(), score: { kind: 'probability', p }, segment: { line: '3' } }));
        const m = Math.abs(2 * p - 1); // DESIGN "Margins": |2p − 1|
        const cell = below.get(h) ?? { low: 0, n: 0 };
        below.set(h, { low: cell.low + (m < THETA ? 1 : 0), n: cell.n + 1 });
      }
    }
    lines.splice(7, 0, 'not json at all');
    const input = join(dir, 'line3.jsonl.gz');
    writeFileSync(input, gzipSync(`${lines.join('\n')}\n`));
    const out = join(dir, 'out');
    const err: string[] = [];
    await runReplayCommand(
      parseReplayOptions({ input: [input], out, window: '1h', thresholds: String(THETA), metricsStep: '1m', progress: false }),
      { stdout: { write: () => true }, stderr: { write: (t: string) => err.push(t) }, nowMs: () => Date.now() },
      {},
    );
    expect(err.join('')).toMatch(/rejected 1 of \d+ lines/);
    const report = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')) as ReplayReport;
    expect(report.windows.filter((w) => w.segment === 'line=3').map((w) => w.count)).toEqual(Array(HOURS).fill(PER_HOUR));

    const data = join(dir, 'tsdb');
    const made = spawnSync('promtool', ['tsdb', 'create-blocks-from', 'openmetrics', join(out, 'metrics.om'), data], { encoding: 'utf8' });
    expect(made.status, `${made.stdout}\n${made.stderr}`).toBe(0);

    prometheus = await startPrometheus([], { dataDir: data });
    const start = (first + HOUR) / 1000;
    const end = (first + (HOURS + 1) * HOUR) / 1000 - 60;
    const ratios = await prometheus.queryRange(`headroom_low_margin_ratio{window="1h",segment="line=3",threshold="${THETA}"}`, start, end, 300);
    expect(ratios).toHaveLength(1);
    const values = ratios[0]?.values ?? [];
    // Every 5 minutes from the end of the first hour: the figure of the hour that ended last.
    expect(values.length).toBe(Math.floor((end - start) / 300) + 1);
    for (const [t, v] of values) {
      const hour = Math.floor((t * 1000 - first) / HOUR) - 1;
      const cell = below.get(hour) as { low: number; n: number };
      expect(Number(v), `at ${new Date(t * 1000).toISOString()}`).toBeCloseTo(cell.low / cell.n, 12);
    }
    expect(new Set(values.map(([, v]) => v)).size).toBe(HOURS);

    const counts = await prometheus.queryRange('headroom_events_total{segment="all"}', end - 60, end, 60);
    expect(Number(counts[0]?.values.at(-1)?.[1])).toBe(HOURS * PER_HOUR);
  });
});
