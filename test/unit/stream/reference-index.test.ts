/**
 * The reload rules of ReferenceIndex.next (pure: reads in, new index out) on real references built from
 * margins chosen here, so every expected share is counted from the numbers: an update swaps the shares,
 * a failed read keeps the old ones and is counted, another version is added beside the old one, and the
 * index a reader already holds never changes under it.
 */
import { describe, expect, it } from 'vitest';
import { HeadroomError } from '../../../src/errors.js';
import { validateScoredEvent } from '../../../src/events/index.js';
import { buildReference, formatReference, parseReferenceText } from '../../../src/reference/index.js';
import type { LoadedReference } from '../../../src/reference/index.js';
import { ReferenceIndex } from '../../../src/stream/index.js';
import type { ReferenceRead } from '../../../src/stream/index.js';

const MODEL = 'parcel-damage';
const T0 = Date.UTC(2026, 10, 20, 6, 0, 0);

/** Margins with a known share below 0.1: `low` of `n` at 0.05, the rest at 0.6. */
function marginsWithLowShare(n: number, low: number): number[] {
  return Array.from({ length: n }, (_, i) => (i < low ? 0.05 : 0.6));
}

function built(margins: readonly number[], options: { model?: string; version?: string; createdAt?: string } = {}): LoadedReference {
  const model = options.model ?? MODEL;
  const version = options.version ?? '2026.11.3';
  const events = margins.map((value, i) => {
    const r = validateScoredEvent({ id: `r-${i}`, model, version, time: T0 + i, score: { kind: 'margin', value } });
    if (!r.ok) throw new Error(`test event invalid: ${r.reason}`);
    return r.event;
  });
  const file = buildReference(events, { createdAt: options.createdAt ?? '2026-11-20T00:00:00.000Z', source: 'unit test', thresholds: [0.1, 0.25] });
  return parseReferenceText(formatReference(file), `references/${model}.json`);
}

const ok = (reference: LoadedReference): ReferenceRead => ({ ok: true, reference });
const failed = (error: unknown): ReferenceRead => ({ ok: false, error });
const share = (index: ReferenceIndex, version = '2026.11.3', model = MODEL): number | undefined => index.segmentFor(model, version, 'all')?.lowMarginShare(0.1);

const SLOTS = [
  { model: MODEL, path: 'references/parcel-damage.json' },
  { model: 'doc-router', path: 'references/doc-router.json' },
];

function started(): ReferenceIndex {
  const { index, failures } = ReferenceIndex.configured(SLOTS).next(
    [ok(built(marginsWithLowShare(100, 10))), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))],
    1_000,
  );
  expect(failures).toEqual([]);
  return index;
}

describe('ReferenceIndex.next', () => {
  it('loads every file at start, each for its own model version, with its load time and state', () => {
    const index = started();
    expect(share(index)).toBe(10 / 100);
    expect(share(index, 'v7', 'doc-router')).toBe(25 / 50);
    expect(index.segmentFor(MODEL, 'other-version', 'all')).toBeUndefined();
    expect(index.origin(MODEL, '2026.11.3')).toEqual({ model: MODEL, version: '2026.11.3', createdAt: '2026-11-20T00:00:00.000Z', loadedAtMs: 1_000, file: 'current' });
    expect(index.report().files).toEqual([
      { model: MODEL, path: SLOTS[0]?.path, reloadErrors: 0, failing: false },
      { model: 'doc-router', path: SLOTS[1]?.path, reloadErrors: 0, failing: false },
    ]);
  });

  it('swaps in new contents of the same version as a new index, leaving the one a reader holds untouched', () => {
    const before = started();
    const docRouter = before.segmentFor('doc-router', 'v7', 'all');
    const { index, changes, failures } = before.next(
      [ok(built(marginsWithLowShare(200, 60), { createdAt: '2026-11-25T00:00:00.000Z' })), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))],
      2_000,
    );
    expect(failures).toEqual([]);
    expect(share(index)).toBe(60 / 200);
    expect(share(before)).toBe(10 / 100);
    expect(index.origin(MODEL, '2026.11.3')).toMatchObject({ createdAt: '2026-11-25T00:00:00.000Z', loadedAtMs: 2_000, file: 'current' });
    // The unchanged file is not "reloaded": same object, same load time, no change reported.
    expect(index.segmentFor('doc-router', 'v7', 'all')).toBe(docRouter);
    expect(index.origin('doc-router', 'v7')?.loadedAtMs).toBe(1_000);
    expect(changes).toEqual([
      { model: MODEL, version: '2026.11.3', path: SLOTS[0]?.path, change: 'updated', createdAt: '2026-11-25T00:00:00.000Z', previousCreatedAt: '2026-11-20T00:00:00.000Z' },
    ]);
  });

  it('keeps the previous reference when a file fails to read, reports the file and field, and counts each failure', () => {
    const before = started();
    const invalid = new HeadroomError('HR_ERR_REFERENCE_INVALID', 'references/parcel-damage.json: segments.all.n: expected number, got string', {
      context: { source: 'references/parcel-damage.json', field: 'segments.all.n' },
    });
    const once = before.next([failed(invalid), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))], 2_000);
    expect(share(once.index)).toBe(10 / 100);
    expect(once.changes).toEqual([]);
    expect(once.failures).toHaveLength(1);
    expect(once.failures[0]).toMatchObject({ model: MODEL, path: SLOTS[0]?.path, field: 'segments.all.n' });
    expect(once.failures[0]?.error.message).toContain('references/parcel-damage.json: segments.all.n');
    expect(once.index.origin(MODEL, '2026.11.3')).toMatchObject({ loadedAtMs: 1_000, file: 'reload-failed' });

    const missing = new HeadroomError('HR_ERR_INPUT_UNREADABLE', 'reference file references/parcel-damage.json: no such file', { context: { path: 'x' } });
    const twice = once.index.next([failed(missing), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))], 3_000);
    expect(share(twice.index)).toBe(10 / 100);
    expect(twice.failures[0]).toMatchObject({ field: '' });
    expect(twice.index.report().files[0]).toEqual({ model: MODEL, path: SLOTS[0]?.path, reloadErrors: 2, failing: true });
    expect(twice.index.report().files[1]).toEqual({ model: 'doc-router', path: SLOTS[1]?.path, reloadErrors: 0, failing: false });

    // Fixed again: the file's contents count, its state is current, the errors stay counted.
    const fixed = twice.index.next([ok(built(marginsWithLowShare(100, 40))), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))], 4_000);
    expect(share(fixed.index)).toBe(40 / 100);
    expect(fixed.index.origin(MODEL, '2026.11.3')?.file).toBe('current');
    expect(fixed.index.report().files[0]).toMatchObject({ reloadErrors: 2, failing: false });
  });

  it('refuses a file that now describes another model, keeping the one before', () => {
    const before = started();
    const { index, failures } = before.next([ok(built(marginsWithLowShare(100, 70), { model: 'doc-router', version: 'v7' })), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))], 2_000);
    expect(failures.map((f) => [f.model, f.field, f.error.code])).toEqual([[MODEL, 'model', 'HR_ERR_REFERENCE_INVALID']]);
    expect(failures[0]?.error.message).toContain('references/parcel-damage.json: model: is "doc-router"');
    expect(share(index)).toBe(10 / 100);
    expect(share(index, 'v7', 'doc-router')).toBe(25 / 50);
  });

  it('accepts any model for the "*" entry', () => {
    const { index, failures } = ReferenceIndex.configured([{ model: '*', path: 'references/any.json' }]).next([ok(built(marginsWithLowShare(10, 1), { model: 'cutter-jam', version: '3' }))], 5);
    expect(failures).toEqual([]);
    expect(share(index, '3', 'cutter-jam')).toBe(1 / 10);
  });

  it('adds a new version from the same file and keeps the old version for its own series, marked replaced', () => {
    const before = started();
    const { index, changes } = before.next(
      [ok(built(marginsWithLowShare(100, 30), { version: '2026.12.1', createdAt: '2026-12-01T00:00:00.000Z' })), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))],
      2_000,
    );
    expect(share(index, '2026.12.1')).toBe(30 / 100);
    expect(share(index, '2026.11.3')).toBe(10 / 100);
    expect(index.origin(MODEL, '2026.12.1')?.file).toBe('current');
    expect(index.origin(MODEL, '2026.11.3')?.file).toBe('replaced');
    expect(changes.map((c) => `${c.version}:${c.change}`)).toEqual(['2026.12.1:added', '2026.11.3:replaced']);
    expect(index.report().loaded.map((o) => `${o.version}:${o.file}`).sort()).toEqual(['2026.11.3:replaced', '2026.12.1:current', 'v7:current']);
    // The file rolled back: the old version is current again, and its load time is the one it had.
    const back = index.next([ok(built(marginsWithLowShare(100, 10))), ok(built(marginsWithLowShare(50, 25), { model: 'doc-router', version: 'v7' }))], 3_000);
    expect(back.index.origin(MODEL, '2026.11.3')).toMatchObject({ file: 'current', loadedAtMs: 1_000 });
    expect(back.index.origin(MODEL, '2026.12.1')?.file).toBe('replaced');
  });

  it('wraps a non-headroom read error into one that names the file', () => {
    const { failures } = ReferenceIndex.configured([SLOTS[0] as { model: string; path: string }]).next([failed(new Error('EACCES: permission denied'))], 0);
    expect(failures[0]?.error.code).toBe('HR_ERR_INPUT_UNREADABLE');
    expect(failures[0]?.error.message).toContain('references/parcel-damage.json: EACCES');
  });

  it('refuses a read list that does not match the configured files', () => {
    expect(() => ReferenceIndex.configured(SLOTS).next([], 0)).toThrow(RangeError);
  });
});
