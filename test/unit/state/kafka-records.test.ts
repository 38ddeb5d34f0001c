/** The record layout of the Kafka checkpoint store: keys, chunking, the manifest check, clean-up. */
import { createHash, randomBytes } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { chunkKey, parseChunkKey, parseStateKey, planSave, staleChunkKeys, stateKey, statePartitionOf, unpackHead } from '../../../src/state/kafka-records.js';
import type { SavePlan, StoredRecord } from '../../../src/state/kafka-records.js';

function thrown(f: () => unknown): { code?: string; message: string } {
  try {
    f();
  } catch (e) {
    return isHeadroomError(e) ? { code: e.code, message: e.message } : { message: String(e) };
  }
  throw new Error('expected a throw');
}

/** The view a reader would build from a plan's records, each named by its place. */
function viewOf(plan: SavePlan): { head: StoredRecord; chunks: Map<string, StoredRecord> } {
  const chunks = new Map(plan.chunks.map((c, i) => [c.key, { value: c.value, kind: c.kind, where: `chunk@${i}` }] as const));
  return { head: { value: plan.head.value, kind: plan.head.kind, where: 'head@9' }, chunks };
}

describe('checkpoint keys', () => {
  it('round-trip awkward names, and no group or topic can reach into another key', () => {
    const cases: [string, string, number][] = [
      ['g', 'scores', 0],
      ['other group/..', 'x@y/../z', 12],
      ['a#b', 'c/d#1.2', 3],
      ['..', '.hidden', 0],
      ['größe', 'τopic%2F', 7],
    ];
    const keys = cases.map(([g, t, p]) => stateKey(g, t, p));
    expect(new Set(keys).size).toBe(cases.length);
    for (const [i, key] of keys.entries()) {
      expect(key.split('/')).toHaveLength(3);
      expect(key).not.toContain('#');
      const [group, topic, partition] = cases[i] as [string, string, number];
      expect(parseStateKey(key)).toEqual({ group, topic, partition });
    }
  });

  it('refuses keys headroom does not write: chunk keys, other spellings, strangers', () => {
    const key = stateKey('g', 'scores', 3);
    for (const other of [chunkKey(key, 'ab12', 0), 'g/scores/03', 'g/scores/-1', 'g/scores', 'g/sc%6Fres/3', 'g/%ZZ/3', 'filler', '']) {
      expect(parseStateKey(other), other).toBeUndefined();
    }
  });

  it('chunk keys name their checkpoint, save and index', () => {
    const key = stateKey('a#b', 'c', 1);
    expect(parseChunkKey(chunkKey(key, 'f00d', 17))).toEqual({ key, saveId: 'f00d', index: 17 });
    expect(parseChunkKey(key)).toBeUndefined();
    expect(parseChunkKey(`${key}#F00D.1`)).toBeUndefined();
    expect(parseChunkKey(`nokey#f00d.1`)).toBeUndefined();
  });

  it('a key and its chunks go to one partition of the state topic, spread over the partitions', () => {
    const seen = new Set<number>();
    for (let p = 0; p < 64; p += 1) {
      const at = statePartitionOf(stateKey('g', 'scores', p), 6);
      expect(at).toBe(statePartitionOf(stateKey('g', 'scores', p), 6));
      expect(at >= 0 && at < 6).toBe(true);
      seen.add(at);
    }
    expect(seen.size).toBe(6);
    expect(statePartitionOf('anything', 1)).toBe(0);
  });
});

describe('planSave and unpackHead', () => {
  const key = stateKey('g', 'scores', 0);

  it('a state that fits one chunk is one inline record at the key', () => {
    const packed = randomBytes(100);
    const plan = planSave(key, packed, 'a1', 100);
    expect(plan.chunks).toEqual([]);
    expect(plan.head).toEqual({ key, value: packed, kind: 'inline' });
    const { head } = viewOf(plan);
    expect(unpackHead(key, head, () => undefined)).toBe(packed);
  });

  it('a bigger one is split in order, and the manifest names save, count, bytes and SHA-256', () => {
    const packed = randomBytes(1000);
    const plan = planSave(key, packed, 'b2', 300);
    expect(plan.chunks.map((c) => [c.key, c.value.length, c.kind])).toEqual([
      [chunkKey(key, 'b2', 0), 300, 'chunk'],
      [chunkKey(key, 'b2', 1), 300, 'chunk'],
      [chunkKey(key, 'b2', 2), 300, 'chunk'],
      [chunkKey(key, 'b2', 3), 100, 'chunk'],
    ]);
    expect(plan.head.kind).toBe('manifest');
    expect(JSON.parse(plan.head.value.toString())).toEqual({
      format: 'headroom-checkpoint-manifest/1',
      saveId: 'b2',
      chunks: 4,
      bytes: 1000,
      sha256: createHash('sha256').update(packed).digest('hex'), // node:crypto, independent of the chunking
    });
    const { head, chunks } = viewOf(plan);
    expect(unpackHead(key, head, (k) => chunks.get(k)).equals(packed)).toBe(true);
  });

  it('refuses a bad chunk size or save id', () => {
    expect(thrown(() => planSave(key, randomBytes(10), 'ok', 0)).code).toBe('HR_ERR_STATE_ARGUMENT');
    expect(thrown(() => planSave(key, randomBytes(10), 'Not.Ok', 5)).code).toBe('HR_ERR_STATE_ARGUMENT');
  });

  it('a missing, deleted, foreign or altered chunk is corrupt, naming the manifest or the chunk', () => {
    const packed = randomBytes(900);
    const plan = planSave(key, packed, 'c3', 300);
    const cases: [string, (chunks: Map<string, StoredRecord>) => void, string, string][] = [
      ['missing', (c) => c.delete(chunkKey(key, 'c3', 1)), 'head@9', `names chunk ${chunkKey(key, 'c3', 1)}, which is not on the topic`],
      ['deleted', (c) => c.set(chunkKey(key, 'c3', 2), { value: null, kind: undefined, where: 'chunk@2' }), 'head@9', 'which is deleted'],
      ['foreign', (c) => c.set(chunkKey(key, 'c3', 0), { value: randomBytes(300), kind: 'inline', where: 'chunk@0' }), 'chunk@0', 'should be chunk 0 of save c3'],
      ['altered', (c) => c.set(chunkKey(key, 'c3', 0), { value: randomBytes(300), kind: 'chunk', where: 'chunk@0' }), 'head@9', 'SHA-256 does not match'],
      ['short', (c) => c.set(chunkKey(key, 'c3', 0), { value: randomBytes(299), kind: 'chunk', where: 'chunk@0' }), 'head@9', 'names 900 bytes but its chunks hold 899'],
    ];
    for (const [what, spoil, where, detail] of cases) {
      const { head, chunks } = viewOf(plan);
      spoil(chunks);
      const f = thrown(() => unpackHead(key, head, (k) => chunks.get(k)));
      expect(f.code, what).toBe('HR_ERR_CHECKPOINT_CORRUPT');
      expect(f.message, what).toContain(where);
      expect(f.message, what).toContain(detail);
    }
  });

  it('a head without the header, of an unknown kind, or with a bad manifest is corrupt', () => {
    const good = { format: 'headroom-checkpoint-manifest/1', saveId: 'd4', chunks: 1, bytes: 1, sha256: 'a'.repeat(64) };
    const heads: [StoredRecord, string][] = [
      [{ value: Buffer.from('{}'), kind: undefined, where: 'rec@w' }, 'has no headroom-checkpoint header'],
      [{ value: Buffer.from('{}'), kind: 'zstd-state', where: 'rec@w' }, 'has headroom-checkpoint "zstd-state"'],
      [{ value: Buffer.from('{"format"'), kind: 'manifest', where: 'rec@w' }, 'manifest that is not JSON'],
      [{ value: Buffer.from('7'), kind: 'manifest', where: 'rec@w' }, 'manifest that is not an object'],
      [{ value: Buffer.from(JSON.stringify({ ...good, format: 'x/2' })), kind: 'manifest', where: 'rec@w' }, 'manifest of format "x/2"'],
      [{ value: Buffer.from(JSON.stringify({ ...good, saveId: '../x' })), kind: 'manifest', where: 'rec@w' }, 'bad saveId'],
      [{ value: Buffer.from(JSON.stringify({ ...good, chunks: 0 })), kind: 'manifest', where: 'rec@w' }, 'bad chunk count 0'],
      [{ value: Buffer.from(JSON.stringify({ ...good, bytes: -1 })), kind: 'manifest', where: 'rec@w' }, 'bad byte count -1'],
      [{ value: Buffer.from(JSON.stringify({ ...good, sha256: 'xyz' })), kind: 'manifest', where: 'rec@w' }, 'bad sha256'],
    ];
    for (const [head, detail] of heads) {
      const f = thrown(() => unpackHead(key, head, () => undefined));
      expect([f.code, f.message.includes('rec@w '), f.message.includes(detail)], detail).toEqual(['HR_ERR_CHECKPOINT_CORRUPT', true, true]);
    }
  });
});

describe('staleChunkKeys', () => {
  const key = stateKey('g', 'scores', 0);
  const other = stateKey('g', 'scores', 1);

  it('deletes chunks of other saves written before the replaced head, and keeps later ones', () => {
    const chunks: [string, bigint][] = [
      [chunkKey(key, 'old', 0), 3n],
      [chunkKey(key, 'old', 1), 4n],
      [chunkKey(key, 'crashed', 0), 6n],
      [chunkKey(key, 'overlapping', 0), 12n], // after the replaced head (10): maybe a save under way elsewhere
      [chunkKey(key, 'new', 0), 14n],
      [chunkKey(other, 'old', 0), 2n],
      ['stranger#x.0', 1n],
    ];
    expect(staleChunkKeys(key, 'new', 10n, chunks)).toEqual([chunkKey(key, 'crashed', 0), chunkKey(key, 'old', 0), chunkKey(key, 'old', 1)]);
    // The next save replaces the head at 15: now the overlapping save's chunk is old too.
    expect(staleChunkKeys(key, 'newer', 15n, chunks)).toContain(chunkKey(key, 'overlapping', 0));
    expect(staleChunkKeys(key, 'newer', 15n, chunks)).toContain(chunkKey(key, 'new', 0));
  });

  it('deletes nothing on the first save of a key', () => {
    expect(staleChunkKeys(key, 'new', undefined, [[chunkKey(key, 'crashed', 0), 1n]])).toEqual([]);
  });
});
