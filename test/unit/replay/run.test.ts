/**
 * `headroom replay` over real files in a temp folder: the report files, corrupt lines and a truncated .gz
 * (counted, named, and the replay finishes), reference files of the replayed range, and the formats.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { buildReference, formatReference, parseReferenceText } from '../../../src/reference/index.js';
import { parseReplayOptions, runReplayCommand } from '../../../src/cli/replay-command.js';
import { parseReplayWindow, runReplay, TOTAL_WINDOW } from '../../../src/replay/index.js';
import type { ReplayReport } from '../../../src/replay/index.js';
import { decodeScoredEvent } from '../../../src/events/index.js';
import type { ScoredEvent } from '../../../src/events/index.js';
import { rng } from '../events/prng.js';

const dir = mkdtempSync(join(tmpdir(), 'headroom-replay-unit-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const T0 = Date.UTC(2026, 10, 30, 8);
const HOUR = 3_600_000;

interface Made {
  readonly line: string;
  readonly margin: number;
  readonly timeMs: number;
  readonly wire: string;
}

/** Events every 2 s for `hours` hours from T0; line 3 squeezed towards the boundary. Margins by DESIGN "Margins". */
function events(n: number, seed: number): Made[] {
  const r = rng(seed);
  return Array.from({ length: n }, (_, i) => {
    const line = String(1 + (i % 3));
    const p = Math.round((line === '3' ? 0.5 + (r.next() - 0.5) * 0.4 : r.next()) * 1000) / 1000;
    const timeMs = T0 + i * 2000;
    const wire = JSON.stringify({ id: `p-${i}`, model: 'parcel-damage', version: '2026.11.3', time: new Date(timeMs).toISOString(), score: { kind: 'probability', p }, segment: { line } });
    return { line, margin: Math.abs(2 * p - 1), timeMs, wire };
  });
}

function io() {
  const out: string[] = [];
  const err: string[] = [];
  return { out, err, io: { stdout: { write: (t: string) => out.push(t) }, stderr: { write: (t: string) => err.push(t) }, nowMs: () => Date.UTC(2026, 11, 2) } };
}

function readReport(out: string): ReplayReport {
  return JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')) as ReplayReport;
}

describe('replay of files', () => {
  const made = events(5_400, 1); // 3 hours
  const reference = (() => {
    const held = events(3_000, 2).map((m) => {
      const d = decodeScoredEvent(Buffer.from(m.wire));
      if (!d.ok) throw new Error(d.detail);
      return d.event;
    });
    return buildReference(held as ScoredEvent[], { createdAt: '2026-11-29T00:00:00Z', thresholds: [0.1, 0.25], segmentKeys: ['line'] });
  })();
  const refPath = join(dir, 'ref.json');
  writeFileSync(refPath, formatReference(reference));

  it('writes report.json with one entry per hour and series, the counts and shares of the events in it', async () => {
    const input = join(dir, 'hours.jsonl.gz');
    writeFileSync(input, gzipSync(`${made.map((m) => m.wire).join('\n')}\n`));
    const out = join(dir, 'hours-out');
    const { io: replayIo, out: stdout } = io();
    await runReplay({ inputs: [input], window: parseReplayWindow('1h'), out, references: [refPath], progress: false, metricsStepMs: 60_000 }, replayIo);
    expect(stdout.join('')).toBe(['report.json', 'report.csv', 'metrics.om', 'report.html'].map((f) => `${join(out, f)}\n`).join(''));
    const report = readReport(out);
    expect(report.format).toBe('headroom-report/1');
    expect(report.totals).toMatchObject({ lines: 5_400, events: 5_400, afterClose: 0, rejected: {} });
    expect(new Set(report.windows.map((w) => w.start))).toEqual(new Set([0, 1, 2].map((h) => new Date(T0 + h * HOUR).toISOString())));
    expect(new Set(report.windows.map((w) => w.segment))).toEqual(new Set(['all', 'line=1', 'line=2', 'line=3']));
    for (const w of report.windows) {
      const start = Date.parse(w.start);
      const inWindow = made.filter((m) => m.timeMs >= start && m.timeMs < start + HOUR && (w.segment === 'all' || w.segment === `line=${m.line}`));
      expect(Date.parse(w.end) - start).toBe(HOUR);
      expect(w.count, `${w.start} ${w.segment}`).toBe(inWindow.length);
      for (const l of w.lowMargin) {
        expect(l.live, `${w.start} ${w.segment} ${l.threshold}`).toBeCloseTo(inWindow.filter((m) => m.margin < l.threshold).length / inWindow.length, 12);
        expect(l.interval[0]).toBeLessThanOrEqual(l.live as number);
        expect(l.interval[1]).toBeGreaterThanOrEqual(l.live as number);
        expect(l.reference).toBe(reference.segments[w.segment]?.lowMargin.find((x) => x.threshold === l.threshold)?.share);
      }
      expect(w.reference).toBe('loaded');
      expect(w.ks?.statistic).toBeGreaterThan(0);
      expect(Object.keys(w.quantiles)).toEqual(['0.05', '0.1', '0.25', '0.5', '0.75', '0.9', '0.95']);
      expect(w.alerts).toEqual([]);
    }
    // Live and reference events come from one generator (line 3 squeezed in both), so every KS is small.
    expect(Math.max(...report.windows.map((w) => w.ks?.statistic ?? Number.NaN))).toBeLessThan(0.2);
    // The CDFs kept for report.html: per series the first hour, the last, and the one with the largest KS D.
    expect(report.cdfs.series.map((c) => c.segment)).toEqual(['all', 'line=1', 'line=2', 'line=3']);
    for (const c of report.cdfs.series) {
      const own = report.windows.filter((w) => w.segment === c.segment);
      const worst = own.reduce((a, b) => ((b.ks?.statistic ?? 0) > (a.ks?.statistic ?? 0) ? b : a));
      expect(c.windows.find((w) => w.picked.includes('first'))?.start).toBe(new Date(T0).toISOString());
      expect(c.windows.find((w) => w.picked.includes('last'))?.start).toBe(new Date(T0 + 2 * HOUR).toISOString());
      expect(c.windows.find((w) => w.picked.includes('worst-ks'))?.ks).toBe(worst.ks?.statistic);
      const first = c.windows[0];
      const inFirst = made.filter((m) => m.timeMs < T0 + HOUR && (c.segment === 'all' || c.segment === `line=${m.line}`));
      // Sketch CDF against the exact share of the hour's margins at or below 0.5: close, not equal.
      expect(first?.cdf[50]).toBeCloseTo(inFirst.filter((m) => m.margin <= 0.5).length / inFirst.length, 1);
      expect(c.reference).toHaveLength(101);
    }
    const csv = readFileSync(join(out, 'report.csv'), 'utf8').trimEnd().split('\n');
    expect(csv).toHaveLength(1 + report.windows.length);
    expect(csv[0]?.split(',').slice(0, 6)).toEqual(['start', 'end', 'model', 'version', 'segment', 'count']);
    expect(csv[1]?.split(',')[5]).toBe(String(report.windows[0]?.count));
  });

  it('counts corrupt lines by reason, keeps what a truncated .gz held before the cut, and finishes', async () => {
    const lines = made.slice(0, 3_000).map((m) => m.wire);
    lines.splice(100, 0, '{"id": "broken', '[1,2]', JSON.stringify({ id: 'x', model: 'parcel-damage', version: '1', score: { kind: 'probability', p: 1.5 } }));
    const good = join(dir, 'a-good.jsonl');
    writeFileSync(good, `${lines.join('\n')}\n`);
    const later = made.slice(3_000).map((m) => m.wire);
    const whole = gzipSync(`${later.join('\n')}\n`);
    const cut = join(dir, 'b-cut.jsonl.gz');
    writeFileSync(cut, whole.subarray(0, Math.floor(whole.length / 2)));
    const out = join(dir, 'cut-out');
    const { io: replayIo, err } = io();
    await runReplay({ inputs: [good, cut], window: TOTAL_WINDOW, out, references: [], progress: false, metricsStepMs: 0 }, replayIo);
    const report = readReport(out);
    expect(report.totals.rejected).toEqual({ not_json: 1, not_object: 1, probability_out_of_range: 1 });
    expect(report.totals.skipped).toHaveLength(1);
    expect(report.totals.skipped[0]?.source).toBe(cut);
    expect(report.totals.skipped[0]?.reason).toMatch(/gzip data ends early/);
    // Every event of the first file and a part of the cut one, each once.
    const all = report.windows.find((w) => w.segment === 'all');
    expect(all?.count).toBe(report.totals.events);
    expect(report.totals.events).toBeGreaterThan(3_000);
    expect(report.totals.events).toBeLessThan(5_400);
    const text = err.join('');
    expect(text).toMatch(/rejected 3 of \d+ lines/);
    expect(text).toMatch(/not_json\s+1\s+.*a-good\.jsonl:101/);
    expect(text).toContain(`skipped the rest of ${cut}`);
  });

  it('counts, and names, events of windows already reported when files are not in time order', async () => {
    const first = join(dir, 'late-1.jsonl');
    const second = join(dir, 'late-2.jsonl');
    writeFileSync(first, `${made.slice(1_800).map((m) => m.wire).join('\n')}\n`); // hours 2 and 3
    writeFileSync(second, `${made.slice(0, 1_800).map((m) => m.wire).join('\n')}\n`); // hour 1, after them
    const out = join(dir, 'late-out');
    const { io: replayIo, err } = io();
    await runReplay({ inputs: [first, second], window: parseReplayWindow('1h'), out, references: [], progress: false, metricsStepMs: 0 }, replayIo);
    const report = readReport(out);
    // Hour 2 was reported while the first file ran; the older hour 1 of the second file comes after it.
    expect(report.totals.afterClose).toBe(1_800);
    expect(report.windows.filter((w) => w.segment === 'all').map((w) => [w.start, w.count])).toEqual([
      [new Date(T0 + HOUR).toISOString(), 1_800],
      [new Date(T0 + 2 * HOUR).toISOString(), 1_800],
    ]);
    expect(err.join('')).toContain('skipped 1800 events whose 1h window had already been reported');
  });

  it('writes reference files of the replayed range that load back', async () => {
    const input = join(dir, 'emit.jsonl');
    writeFileSync(input, `${made.slice(0, 900).map((m) => m.wire).join('\n')}\n`);
    const refs = join(dir, 'emitted');
    const { io: replayIo, out: stdout } = io();
    await runReplay({ inputs: [input], window: TOTAL_WINDOW, out: join(dir, 'emit-out'), references: [], emitReference: refs, progress: false, metricsStepMs: 0 }, replayIo);
    const path = join(refs, 'parcel-damage@2026.11.3.json');
    expect(stdout.join('')).toContain(`${path}\n`);
    const loaded = parseReferenceText(readFileSync(path, 'utf8'), path);
    expect(loaded.n).toBe(900);
    expect([...loaded.segments.keys()].sort()).toEqual(['all', 'line=1', 'line=2', 'line=3']);
    expect(loaded.file.source).toMatch(/^replay of 1 file/);
  });
  it('takes models, thresholds, segment keys and references from a watch config, and counts unwatched models', async () => {
    const input = join(dir, 'configured.jsonl');
    const other = JSON.stringify({ id: 'o-1', model: 'label-reader', version: 'v12', time: new Date(T0).toISOString(), score: { kind: 'logit', z: 1 } });
    writeFileSync(input, `${[...made.slice(0, 1_800).map((m) => m.wire), other].join('\n')}\n`);
    const configPath = join(dir, 'watch.yaml');
    writeFileSync(
      configPath,
      JSON.stringify({
        kafka: { brokers: ['127.0.0.1:9092'], topics: ['parcel-scores'] },
        models: [{ name: 'parcel-damage', thresholds: [0.3], segmentKeys: [], reference: refPath }],
      }),
    );
    const out = join(dir, 'configured-out');
    const { io: replayIo } = io();
    await runReplayCommand(parseReplayOptions({ input: [input], config: configPath, window: 'total', out, progress: false }), replayIo, {});
    const report = readReport(out);
    // Only `all`: the config names no segment key; only θ = 0.3; label-reader is not configured.
    expect(report.windows.map((w) => [w.model, w.segment, w.count])).toEqual([['parcel-damage', 'all', 1_800]]);
    expect(report.windows[0]?.lowMargin.map((l) => l.threshold)).toEqual([0.3]);
    expect(report.windows[0]?.reference).toBe('loaded');
    expect(report.totals.unwatched).toBe(1);
    expect(report.totals).toMatchObject({ lines: 1_801, events: 1_800 });
  });
});
