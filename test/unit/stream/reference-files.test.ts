/**
 * The reference files on a real disk (a temp directory, no Kafka): load at start, reload after the file
 * is rewritten, keep the previous reference through a broken or missing file with one error line naming
 * the file and the field, and reload by itself when the file is replaced by rename (as deploys do).
 */
import { mkdtempSync, renameSync, rmSync, unlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pino } from 'pino';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.js';
import { validateScoredEvent } from '../../../src/events/index.js';
import { buildReference, formatReference } from '../../../src/reference/index.js';
import { createReferenceFiles } from '../../../src/stream/index.js';
import type { ReferenceFiles } from '../../../src/stream/index.js';

const MODEL = 'parcel-damage';
const VERSION = '2026.11.3';

/** A reference file whose share below 0.1 is `low / n`, counted here by construction. */
function referenceText(n: number, low: number, createdAt: string, model = MODEL): string {
  const events = Array.from({ length: n }, (_, i) => {
    const r = validateScoredEvent({ id: `r-${i}`, model, version: VERSION, time: 1_700_000_000_000 + i, score: { kind: 'margin', value: i < low ? 0.05 : 0.7 } });
    if (!r.ok) throw new Error(`test event invalid: ${r.reason}`);
    return r.event;
  });
  return formatReference(buildReference(events, { createdAt, source: 'unit test', thresholds: [0.1, 0.25] }));
}

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

async function until(what: string, check: () => boolean, timeoutMs = 10_000): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (performance.now() < deadline) {
    if (check()) return;
    await sleep(20);
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}

describe('createReferenceFiles', () => {
  const dirs: string[] = [];
  const opened: ReferenceFiles[] = [];
  afterEach(() => {
    for (const f of opened.splice(0)) f.close();
    for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
  });

  function setup() {
    const dir = mkdtempSync(join(tmpdir(), 'headroom-ref-files-'));
    dirs.push(dir);
    const path = join(dir, 'parcel-damage.json');
    writeFileSync(path, referenceText(100, 10, '2026-11-20T00:00:00.000Z'));
    const lines: Record<string, unknown>[] = [];
    const log = pino({ level: 'info' }, { write: (line: string) => void lines.push(JSON.parse(line) as Record<string, unknown>) });
    const { config } = parseConfig({ kafka: { brokers: ['127.0.0.1:9092'], topics: ['t'] }, models: [{ name: MODEL, reference: path }, { name: '*' }] }, 'test', {});
    let now = 1_000;
    const files = createReferenceFiles({ models: config.models, nowMs: () => now, log });
    opened.push(files);
    const share = (): number | undefined => files.current().segmentFor(MODEL, VERSION, 'all')?.lowMarginShare(0.1);
    return { dir, path, lines, files, share, tick: (ms: number) => (now += ms) };
  }

  it('loads at start and reloads new contents, logging what changed', async () => {
    const { path, lines, files, share, tick } = setup();
    await files.load();
    expect(share()).toBe(0.1);
    expect(lines.some((l) => l.msg === 'no reference configured: live metrics only, comparisons show "no reference"' && l.model === '*')).toBe(true);
    writeFileSync(path, referenceText(200, 70, '2026-11-27T00:00:00.000Z'));
    tick(5_000);
    const report = await files.reload('SIGHUP');
    expect(report.failures).toEqual([]);
    expect(share()).toBe(70 / 200);
    expect(files.current().origin(MODEL, VERSION)).toMatchObject({ loadedAtMs: 6_000, createdAt: '2026-11-27T00:00:00.000Z', file: 'current' });
    const done = lines.find((l) => l.msg === 'references reloaded');
    expect(done).toMatchObject({ why: 'SIGHUP', failed: [], changes: [`${MODEL} ${VERSION} updated (created 2026-11-20T00:00:00.000Z → 2026-11-27T00:00:00.000Z)`] });
  });

  it('keeps the previous reference through a broken file and a missing one, with one error line each naming file and field', async () => {
    const { path, lines, files, share } = setup();
    await files.load();
    writeFileSync(path, referenceText(100, 10, '2026-11-20T00:00:00.000Z').replace('"n": 100', '"n": "100"'));
    const broken = await files.reload();
    expect(share()).toBe(0.1);
    expect(broken.failures.map((f) => f.field)).toEqual(['n']);
    let errors = lines.filter((l) => l.level === 50);
    expect(errors).toHaveLength(1);
    expect(errors[0]).toMatchObject({ file: path, field: 'n', code: 'HR_ERR_REFERENCE_INVALID' });
    expect(String(errors[0]?.msg)).toContain(`${path}: n: expected number`);

    unlinkSync(path);
    const missing = await files.reload();
    expect(share()).toBe(0.1);
    expect(missing.failures[0]?.error.code).toBe('HR_ERR_INPUT_UNREADABLE');
    errors = lines.filter((l) => l.level === 50);
    expect(errors).toHaveLength(2);
    expect(String(errors[1]?.msg)).toContain(`${path}: no such file`);
    expect(files.current().report().files[0]).toMatchObject({ reloadErrors: 2, failing: true });
    expect(files.current().origin(MODEL, VERSION)?.file).toBe('reload-failed');
  });

  it('refuses to start on a file of another model, naming the file and the field', async () => {
    const { path, files } = setup();
    writeFileSync(path, referenceText(10, 1, '2026-11-20T00:00:00.000Z', 'doc-router'));
    await expect(files.load()).rejects.toThrow(`${path}: model: is "doc-router"`);
  });

  it('reloads by itself when the file is replaced by rename, once the writes settle', async () => {
    const { dir, path, files, share, lines } = setup();
    await files.load();
    files.watchFiles(100);
    const temp = join(dir, '.parcel-damage.json.tmp');
    writeFileSync(temp, referenceText(100, 45, '2026-11-28T00:00:00.000Z'));
    renameSync(temp, path);
    await until('the renamed file to be loaded', () => share() === 0.45);
    expect(lines.filter((l) => l.msg === 'references reloaded').map((l) => l.why)).toEqual(['file change']);

    // An unrelated file in the same directory changes nothing and reloads nothing.
    writeFileSync(join(dir, 'notes.txt'), 'not a reference');
    await sleep(400);
    expect(lines.filter((l) => l.msg === 'references reloaded')).toHaveLength(1);
  });
});
