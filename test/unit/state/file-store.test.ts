/** What only the file store has: its files, names, and what a crash mid-save leaves behind. */
import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { dirname, join, relative, sep } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { decodeName, encodeName, FileCheckpointStore } from '../../../src/state/file-store.js';
import { sampleState } from './checkpoint-store-contract.js';

describe('FileCheckpointStore', () => {
  let dir: string;
  let store: FileCheckpointStore;
  beforeEach(async () => {
    dir = await mkdtemp(join(tmpdir(), 'headroom-file-store-'));
    store = new FileCheckpointStore({ dir });
  });
  afterEach(async () => {
    await store.close();
    await rm(dir, { recursive: true, force: true });
  });

  it('a torn write (temp file written, never renamed) leaves the old checkpoint readable and is not listed', async () => {
    await store.save('g', 'scores', 3, sampleState('scores', 3, 10));
    const path = store.pathOf('g', 'scores', 3);
    const newer = JSON.stringify(sampleState('scores', 3, 50));
    // What a crash between write and rename leaves: a half-written temp file beside the checkpoint.
    await writeFile(`${path}.tmp-4242-1`, newer.slice(0, newer.length / 2));
    expect((await store.load('g', 'scores', 3))?.counts.events).toBe(10);
    expect(await store.list('g')).toEqual([{ topic: 'scores', partition: 3 }]);
    // The next save goes through despite the stray file.
    await store.save('g', 'scores', 3, sampleState('scores', 3, 50));
    expect((await store.load('g', 'scores', 3))?.counts.events).toBe(50);
  });

  it('a save leaves exactly one file per partition, the JSON of the state, and no temp files', async () => {
    await Promise.all([0, 1, 2].map((p) => store.save('g', 'orders.scored', p, sampleState('orders.scored', p, 5))));
    await store.save('g', 'orders.scored', 1, sampleState('orders.scored', 1, 6));
    const names = (await readdir(join(dir, 'g'))).sort();
    expect(names).toEqual(['orders.scored@0.json', 'orders.scored@1.json', 'orders.scored@2.json']);
    const text = await readFile(join(dir, 'g', 'orders.scored@1.json'), 'utf8');
    expect(JSON.parse(text).counts.events).toBe(6);
  });

  it('every group and topic name makes one path segment inside the directory, and decodes back', () => {
    const names = ['..', '.', '.hidden', 'a/b', 'a\\b', 'x@y', '100%', 'naïve ☃', 'C:', 'spaces here', 'a.b-c_D9'];
    for (const name of names) {
      const encoded = encodeName(name);
      expect(encoded, name).toMatch(/^[A-Za-z0-9_%-][A-Za-z0-9_.%-]*$/);
      expect(decodeName(encoded), name).toBe(name);
      const path = store.pathOf(name, name, 7);
      const inside = relative(dir, path).split(sep);
      expect(inside, name).toHaveLength(2);
      expect(dirname(path), name).toBe(join(dir, encoded));
    }
    expect(new Set(names.map(encodeName)).size).toBe(names.length);
  });

  it('refuses names too long for a file', () => {
    const fail = (f: () => unknown): string | undefined => {
      try {
        f();
      } catch (e) {
        return isHeadroomError(e) ? e.code : String(e);
      }
      return undefined;
    };
    expect(fail(() => store.pathOf('g', 'x'.repeat(249), 0))).toBe('HR_ERR_STATE_ARGUMENT');
    expect(fail(() => store.pathOf('g'.repeat(180), 'x'.repeat(180), 0))).toBeUndefined();
  });

  it('a directory that cannot be written gives HR_ERR_CHECKPOINT_IO naming the path', async () => {
    const blocked = join(dir, 'not-a-dir');
    await writeFile(blocked, 'a file where the directory should be');
    const bad = new FileCheckpointStore({ dir: blocked });
    let error: unknown;
    try {
      await bad.save('g', 'scores', 0, sampleState('scores', 0, 1));
    } catch (e) {
      error = e;
    }
    expect(isHeadroomError(error) && error.code).toBe('HR_ERR_CHECKPOINT_IO');
    expect(String((error as Error).message)).toContain(blocked);
    await bad.close();
  });

  it('close waits for a save under way', async () => {
    const saving = store.save('g', 'scores', 0, sampleState('scores', 0, 200));
    await store.close();
    const again = new FileCheckpointStore({ dir });
    expect((await again.load('g', 'scores', 0))?.counts.events).toBe(200);
    await saving;
    await again.close();
  });
});
