/**
 * `headroom reference` in-process (runReference with captured output: fast, and every message can be
 * checked) and as the real binary in a child process (exit codes, stderr, --help).
 */
import { spawnSync } from 'node:child_process';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseReferenceOptions, parseThresholds, runReference } from '../../../src/cli/reference-command.js';
import { exitCodeOf } from '../../../src/errors.js';
import { loadReferenceFile } from '../../../src/sources/index.js';
import { caught, caughtAsync } from '../reference/events.js';

const ROOT = fileURLToPath(new URL('../../../', import.meta.url));
const NOW = new Date('2026-12-02T08:30:00.000Z');

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'headroom-cli-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function scored(i: number, model = 'parcel-damage', version = '2026.11.3'): string {
  const p = ((i * 37) % 101) / 100;
  return JSON.stringify({ id: `p-${i}`, model, version, time: 1764583200000 + i, score: { kind: 'probability', p }, label: i % 3 === 0 ? 1 : 0, segment: { line: String(1 + (i % 3)) } });
}

async function input(name: string, lines: string[]): Promise<string> {
  const path = join(dir, name);
  await writeFile(path, `${lines.join('\n')}\n`);
  return path;
}

function io() {
  const stdout: string[] = [];
  const stderr: string[] = [];
  return {
    stdout,
    stderr,
    io: { stdout: { write: (t: string) => stdout.push(t) }, stderr: { write: (t: string) => stderr.push(t), isTTY: false }, now: () => NOW },
  };
}

const options = (raw: Record<string, unknown>) => parseReferenceOptions({ thresholds: '0.1,0.25', progress: true, ...raw });

describe('option checks', () => {
  it.each([
    ['abc', '"abc" is not a number'],
    ['0.1,,0.2', '"" is not a number'],
    ['0', '0 is not in (0, 1)'],
    ['0.5,1', '1 is not in (0, 1)'],
    ['-0.1', '-0.1 is not in (0, 1)'],
    ['0.2,0.2', '0.2,0.2 names a threshold twice'],
  ])('--thresholds %s is refused', (text, detail) => {
    const error = caught(() => parseThresholds(text));
    expect(error.code).toBe('HR_ERR_CLI_USAGE');
    expect(error.message).toContain(`--thresholds: ${detail}`);
  });

  it('sorts good thresholds', () => {
    expect(parseThresholds('0.25, 0.05,0.1')).toEqual([0.05, 0.1, 0.25]);
  });

  it('names the flag of every other bad value', () => {
    const base = { input: ['x.jsonl'], out: 'r.json' };
    expect(caught(() => options({ ...base, segmentKeys: 'line,a=b' })).message).toContain('--segment-keys: "a=b"');
    expect(caught(() => options({ ...base, segmentKeys: 'line,line' })).message).toContain('--segment-keys');
    expect(caught(() => options({ ...base, compression: '5' })).message).toContain('--compression: "5" is not a whole number in [10, 10000]');
    expect(caught(() => options({ ...base, maxSegmentValues: '2.5' })).message).toContain('--max-segment-values');
    expect(caught(() => options({ ...base, model: '' })).message).toContain('--model: must not be empty');
    expect(caught(() => options({ out: 'r.json' })).message).toContain('--input');
    expect(exitCodeOf(caught(() => options({ ...base, thresholds: 'x' })))).toBe(64);
  });
});

describe('runReference', () => {
  it('writes a valid reference and reports the bad lines by reason', async () => {
    const path = await input('good.jsonl', [...Array.from({ length: 300 }, (_, i) => scored(i)), 'not json', '{"id":"x"}', 'also not json']);
    const out = join(dir, 'refs', 'parcel.json');
    const { io: captured, stdout, stderr } = io();
    const written = await runReference(options({ input: [path], out, segmentKeys: 'line' }), captured);
    expect(written).toEqual([out]);
    expect(stdout).toEqual([`${out}\n`]);
    const reference = await loadReferenceFile(out);
    expect(reference.n).toBe(300);
    expect(reference.file.createdAt).toBe(NOW.toISOString());
    expect(reference.file.source).toBe(`1 file: ${path}`);
    expect([...reference.segments.keys()]).toEqual(['all', 'line=1', 'line=2', 'line=3']);
    const text = stderr.join('');
    expect(text).toContain('rejected 3 of 303 lines:');
    expect(text).toMatch(new RegExp(`not_json\\s+2\\s+${path.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}:301`));
    expect(text).toMatch(/missing_field\s+1\s+.*:302 \(model: /);
    expect(text).toContain(`wrote ${out}: parcel-damage@2026.11.3, 300 events, 4 segments`);
    // Written whole: no temporary file is left beside it.
    expect(await readdir(join(dir, 'refs'))).toEqual(['parcel.json']);
  });

  it('refuses to write a reference from zero valid events', async () => {
    const path = await input('bad.jsonl', ['nope', '{"id":"p-1","model":"m","version":"v","score":{"kind":"probability","p":7}}']);
    const out = join(dir, 'never.json');
    const { io: captured, stderr } = io();
    const error = await caughtAsync(() => runReference(options({ input: [path], out }), captured));
    expect(error.code).toBe('HR_ERR_INPUT_EMPTY');
    expect(error.message).toContain('all 2 lines were rejected or left out');
    expect(stderr.join('')).toContain('probability_out_of_range');
    await expect(readFile(out)).rejects.toThrow();
  });

  it('with several model versions and a file --out: refuses, listing them', async () => {
    const path = await input('two.jsonl', [scored(1), scored(2, 'parcel-damage', '2026.12.0'), scored(3), scored(4, 'label-reader', 'r7')]);
    const { io: captured } = io();
    const error = await caughtAsync(() => runReference(options({ input: [path], out: join(dir, 'one.json') }), captured));
    expect(error.code).toBe('HR_ERR_INPUT_AMBIGUOUS');
    expect(error.message).toContain('parcel-damage@2026.11.3 (2 events), parcel-damage@2026.12.0 (1 events), label-reader@r7 (1 events)');
    expect(error.message).toContain('--model/--version');
  });

  it('with several model versions and a directory --out: one file each', async () => {
    const path = join(dir, 'two.jsonl');
    const out = join(dir, 'per-model/');
    const { io: captured } = io();
    const written = await runReference(options({ input: [path], out }), captured);
    expect((await readdir(out)).sort()).toEqual(['label-reader@r7.json', 'parcel-damage@2026.11.3.json', 'parcel-damage@2026.12.0.json']);
    expect(written).toHaveLength(3);
    const r7 = await loadReferenceFile(join(out, 'label-reader@r7.json'));
    expect([r7.model, r7.version, r7.n]).toEqual(['label-reader', 'r7', 1]);
  });

  it('with --model and --version: only those events, the rest mentioned', async () => {
    const path = join(dir, 'two.jsonl');
    const out = join(dir, 'chosen.json');
    const { io: captured, stderr } = io();
    await runReference(options({ input: [path], out, model: 'parcel-damage', version: '2026.11.3' }), captured);
    expect((await loadReferenceFile(out)).n).toBe(2);
    expect(stderr.join('')).toContain('left out events of other model versions: parcel-damage@2026.12.0 (1), label-reader@r7 (1)');
  });

  it('replaces an existing reference whole', async () => {
    const out = join(dir, 'replaced.json');
    await writeFile(out, 'old');
    await runReference(options({ input: [join(dir, 'good.jsonl')], out }), io().io);
    expect((await loadReferenceFile(out)).n).toBe(300);
  });
});

describe('the headroom binary', () => {
  const tsx = join(ROOT, 'node_modules', '.bin', 'tsx');
  const run = (...args: string[]) => spawnSync(tsx, [join(ROOT, 'src', 'cli', 'main.ts'), ...args], { encoding: 'utf8', cwd: dir, timeout: 60_000 });

  it('writes a reference, exit 0, the path on stdout', async () => {
    await mkdir(join(dir, 'bin'), { recursive: true });
    const path = await input('bin/events.jsonl', Array.from({ length: 50 }, (_, i) => scored(i)));
    const result = run('reference', '--input', path, '--out', join(dir, 'bin', 'ref.json'), '--version', '2026.11.3', '--thresholds', '0.05,0.2');
    expect(result.stderr).toContain('wrote');
    expect(result.status).toBe(0);
    expect(result.stdout).toBe(`${join(dir, 'bin', 'ref.json')}\n`);
    const reference = await loadReferenceFile(join(dir, 'bin', 'ref.json'));
    expect(reference.thresholds).toEqual([0.05, 0.2]);
  }, 60_000);

  it('fails with a clear message and a non-zero exit on zero valid events, bad options and ambiguity', async () => {
    const empty = run('reference', '--input', await input('bin/bad.jsonl', ['nope']), '--out', join(dir, 'bin', 'x.json'));
    expect(empty.status).toBe(65);
    expect(empty.stderr).toMatch(/headroom: input holds no valid events: .*\[HR_ERR_INPUT_EMPTY\]/);
    const usage = run('reference', '--input', 'x.jsonl', '--out', 'y.json', '--thresholds', '0.1,2');
    expect(usage.status).toBe(64);
    expect(usage.stderr).toContain('--thresholds: 2 is not in (0, 1)');
    const ambiguous = run('reference', '--input', join(dir, 'two.jsonl'), '--out', join(dir, 'bin', 'y.json'));
    expect(ambiguous.status).toBe(64);
    expect(ambiguous.stderr).toContain('[HR_ERR_INPUT_AMBIGUOUS]');
  }, 60_000);

  it('--help lists every option and an example', () => {
    const help = run('reference', '--help');
    expect(help.status).toBe(0);
    for (const option of ['--input', '--out', '--model', '--version', '--thresholds', '--segment-keys', '--max-segment-values', '--compression', '--source', '--no-progress']) {
      expect(help.stdout).toContain(option);
    }
    expect(help.stdout).toContain('$ headroom reference --input');
    expect(run('--help').stdout).toContain('reference');
  }, 60_000);
});
