/** Reading real files from a temporary directory: every format gives the same events, bad lines are counted. */
import { mkdir, mkdtemp, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resolveDecodeLimits } from '../../../src/events/index.js';
import type { ScoredEvent } from '../../../src/events/index.js';
import { listInputFiles, readScoredEvents, RejectionTally } from '../../../src/sources/index.js';
import type { ReadOptions, SourceItem } from '../../../src/sources/index.js';
import { caughtAsync } from '../reference/events.js';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'headroom-sources-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function readAll(paths: string[], options?: ReadOptions): Promise<SourceItem[]> {
  const items: SourceItem[] = [];
  for await (const item of readScoredEvents(await listInputFiles(paths), options)) items.push(item);
  return items;
}

function eventsOf(items: SourceItem[]): ScoredEvent[] {
  return items.map((i) => {
    if (!i.result.ok) throw new Error(`line ${i.line}: ${i.result.reason} ${i.result.field} ${i.result.detail}`);
    return i.result.event;
  });
}

// Labels and segment values as strings, because a CSV cell is text: so both forms decode to equal events.
const WIRE = [
  { id: 'p-1,"a"', model: 'parcel-damage', version: '2026.11.3', time: '2026-12-01T10:00:00.123Z', score: { kind: 'probability', p: 0.91 }, label: '1', segment: { line: '2' } },
  { id: 'p-2', model: 'parcel-damage', version: '2026.11.3', time: '2026-12-01T10:00:01Z', score: { kind: 'logit', z: -2.3 }, segment: { line: '1', site: 'north' } },
  { id: 'p-3', model: 'parcel-damage', version: '2026.11.3', time: '2026-12-01T10:00:02Z', score: { kind: 'votes', sum: 1.7, total: 3.2 }, label: '0' },
  { id: 'p-4', model: 'parcel-damage', version: '2026.11.3', time: '2026-12-01T10:00:03Z', score: { kind: 'classes', values: { ok: 0.7, dented: 0.2, torn: 0.1 } }, label: 'dented' },
  { id: 'p-5', model: 'parcel-damage', version: '2026.11.3', time: '2026-12-01T10:00:04Z', score: { kind: 'margin', value: 0.42 }, segment: { line: '3' } },
];

function csvCell(value: unknown): string {
  if (value === undefined) return '';
  const text = String(value);
  return /[",\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

function toCsv(wire: typeof WIRE): string {
  const header = ['id', 'model', 'version', 'time', 'score_kind', 'p', 'z', 'sum', 'total', 'margin', 'class:ok', 'class:dented', 'class:torn', 'label', 'segment:line', 'segment:site'];
  const rows = wire.map((w) => {
    const s = w.score as Record<string, unknown>;
    const values = (s.values ?? {}) as Record<string, number>;
    const seg = (w.segment ?? {}) as Record<string, string>;
    return [w.id, w.model, w.version, w.time, s.kind, s.p, s.z, s.sum, s.total, s.value, values.ok, values.dented, values.torn, w.label, seg.line, seg.site].map(csvCell).join(',');
  });
  return `${header.join(',')}\r\n${rows.join('\r\n')}\r\n`;
}

const jsonl = `${WIRE.map((w) => JSON.stringify(w)).join('\n')}\n`;

describe('every format gives the same events', () => {
  const contents: Record<string, () => string | Buffer> = {
    'events.jsonl': () => jsonl,
    'events.jsonl.gz': () => gzipSync(jsonl),
    'events.csv': () => toCsv(WIRE),
    'events.csv.gz': () => gzipSync(toCsv(WIRE)),
  };
  beforeAll(async () => {
    await mkdir(join(dir, 'formats'), { recursive: true });
    for (const [name, content] of Object.entries(contents)) await writeFile(join(dir, 'formats', name), content());
  });

  it.each(Object.keys(contents))('%s', async (name) => {
    const path = join(dir, 'formats', name);
    const items = await readAll([path]);
    const expected = eventsOf(await readAll([join(dir, 'formats', 'events.jsonl')]));
    expect(expected.map((e) => e.id)).toEqual(WIRE.map((w) => w.id));
    expect(eventsOf(items)).toEqual(expected);
    expect(items.map((i) => i.line)).toEqual(name.startsWith('events.csv') ? [2, 3, 4, 5, 6] : [1, 2, 3, 4, 5]);
    expect(items.every((i) => i.file === path)).toBe(true);
  });
});

describe('a directory', () => {
  it('stands for its event files, sorted by name, each read once', async () => {
    const d = join(dir, 'many');
    await mkdir(join(d, 'nested'), { recursive: true });
    await writeFile(join(d, 'b.csv.gz'), gzipSync(toCsv(WIRE.slice(0, 2))));
    await writeFile(join(d, 'a.jsonl'), `${JSON.stringify(WIRE[2])}\n`);
    await writeFile(join(d, 'notes.txt'), 'not events');
    await writeFile(join(d, 'nested', 'c.jsonl'), `${JSON.stringify(WIRE[3])}\n`);
    const files = await listInputFiles([d, join(d, 'a.jsonl')]);
    expect(files.map((f) => [f.path, f.format, f.gzip])).toEqual([
      [join(d, 'a.jsonl'), 'jsonl', false],
      [join(d, 'b.csv.gz'), 'csv', true],
    ]);
    expect(eventsOf(await readAll([d])).map((e) => e.id)).toEqual(['p-3', 'p-1,"a"', 'p-2']);
  });

  it('without event files, or a path that does not exist, is refused', async () => {
    await mkdir(join(dir, 'empty'), { recursive: true });
    expect((await caughtAsync(() => listInputFiles([join(dir, 'empty')]))).code).toBe('HR_ERR_INPUT_EMPTY');
    const missing = await caughtAsync(() => listInputFiles([join(dir, 'nope.jsonl')]));
    expect(missing.code).toBe('HR_ERR_INPUT_UNREADABLE');
    expect(missing.message).toContain('no such file or directory');
  });
});

describe('bad lines', () => {
  it('are results, counted by reason with the first place each happened', async () => {
    const path = join(dir, 'mixed.jsonl');
    const valid = JSON.stringify(WIRE[0]);
    const lines = [valid, 'not json', '[1]', JSON.stringify({ ...WIRE[0], score: { kind: 'probability', p: 2 } }), '', 'nope', `{"pad":"${'x'.repeat(300)}"}`, valid];
    await writeFile(path, lines.join('\n'));
    const items = await readAll([path], { limits: resolveDecodeLimits({ maxBytes: 200 }) });
    const tally = new RejectionTally();
    for (const item of items) if (!item.result.ok) tally.add(item.result, item.file, item.line);
    expect(items.filter((i) => i.result.ok).map((i) => i.line)).toEqual([1, 8]);
    expect(tally.total).toBe(5);
    expect(tally.summary().map((r) => [r.reason, r.count, r.first.line])).toEqual([
      ['not_json', 2, 2],
      ['not_object', 1, 3],
      ['probability_out_of_range', 1, 4],
      ['too_large', 1, 7],
    ]);
    expect(tally.summary()[2]?.first).toMatchObject({ file: path, field: 'score.p' });
  });

  it('in CSV: a row with the wrong number of fields', async () => {
    const path = join(dir, 'short.csv');
    await writeFile(path, `id,model,version,time,score_kind,p\np-1,parcel-damage,v1,0,probability,0.4\np-2,parcel-damage,v1,0\n`);
    const items = await readAll([path]);
    expect(items.map((i) => (i.result.ok ? 'ok' : i.result.reason))).toEqual(['ok', 'csv_field_count']);
  });
});

describe('a .gz file cut short', () => {
  it('is an error naming the last line reached, after the lines before it', async () => {
    const body = Array.from({ length: 4000 }, (_, i) => JSON.stringify({ ...WIRE[0], id: `p-${i}`, score: { kind: 'probability', p: (i % 100) / 100 } })).join('\n');
    const whole = gzipSync(`${body}\n`);
    const path = join(dir, 'cut.jsonl.gz');
    await writeFile(path, whole.subarray(0, Math.floor(whole.length / 2)));
    const items: SourceItem[] = [];
    const error = await caughtAsync(async () => {
      for await (const item of readScoredEvents(await listInputFiles([path]))) items.push(item);
    });
    expect(error.code).toBe('HR_ERR_INPUT_TRUNCATED');
    expect(items.length).toBeGreaterThan(100);
    expect(items.length).toBeLessThan(4000);
    expect(items.every((item, i) => item.result.ok && item.line === i + 1)).toBe(true);
    expect(error.context).toMatchObject({ file: path, line: items.length });
    expect(error.message).toContain(`after line ${items.length}`);
  });

  it('and a file that is not gzip at all is unreadable, not truncated', async () => {
    const path = join(dir, 'plain.jsonl.gz');
    await writeFile(path, jsonl);
    const error = await caughtAsync(() => readAll([path]));
    expect(error.code).toBe('HR_ERR_INPUT_UNREADABLE');
    expect(error.message).toContain('not valid gzip data');
  });
});

describe('read options', () => {
  it('give events without a time the fallback the caller chooses, per file', async () => {
    const path = join(dir, 'timeless.jsonl');
    const { time: _time, ...timeless } = WIRE[0] as Record<string, unknown>;
    await writeFile(path, `${JSON.stringify(timeless)}\n`);
    const [withFallback] = eventsOf(await readAll([path], { fallbackTimeMs: (f) => (f.path === path ? 1234 : undefined) }));
    expect(withFallback?.timeMs).toBe(1234);
    const [without] = await readAll([path]);
    expect(without?.result).toMatchObject({ ok: false, reason: 'missing_field', field: 'time' });
  });

  it('report every byte read from disk, compressed bytes for .gz', async () => {
    for (const [name, content] of [['counted.jsonl', jsonl], ['counted.csv.gz', gzipSync(toCsv(WIRE))]] as const) {
      const path = join(dir, name);
      await writeFile(path, content);
      let bytes = 0;
      await readAll([path], { onBytes: (n) => (bytes += n) });
      expect(bytes).toBe((await stat(path)).size);
    }
  });
});
