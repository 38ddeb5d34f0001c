/**
 * What every CheckpointStore must do (src/state/checkpoint-store.ts), as one suite registered per
 * implementation: checkpoint-stores.test.ts runs it for the file and in-memory stores, and
 * test/integration/checkpoint-kafka-store.test.ts for the Kafka-topic store on the real broker. An implementation supplies a factory for a fresh, empty store and
 * two abilities only it has: reopening the same storage (a restart) and damaging a stored checkpoint.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import type { CheckpointStore } from '../../../src/state/checkpoint-store.js';
import { PartitionState } from '../../../src/state/partition-state.js';
import type { PartitionStateJson } from '../../../src/state/partition-state.js';
import { marginsOf, MIN, scored, T0 } from './events.js';

export interface StoreHarness {
  readonly store: CheckpointStore;
  /** A new store over the same storage, as after a restart. */
  reopen(): Promise<CheckpointStore>;
  /** Overwrites the stored checkpoint of a partition with `text`, as a damaged medium would. */
  damage(group: string, topic: string, partition: number, text: string): Promise<void>;
  /** Where the implementation's corrupt-checkpoint error must point (a path, a key). */
  readonly whereOf: (group: string, topic: string, partition: number) => string;
  cleanup(): Promise<void>;
}

/** A small real state of `topic`/`partition`, `n` events in. */
export function sampleState(topic: string, partition: number, n: number): PartitionStateJson {
  const s = new PartitionState({ topic, partition, models: [{ name: '*', segmentKeys: ['line'] }] });
  for (let i = 0; i < n; i += 1) {
    const e = scored((i % 10) / 10, { timeMs: T0 + i * 1000, segment: { line: String(i % 3) }, label: i % 2 === 0 ? 1 : 0 });
    s.apply(e, marginsOf(e), String(100 + i), T0 + 60 * MIN);
  }
  s.reject('not_json', String(100 + n));
  return s.toState();
}

async function rejection(p: Promise<unknown>): Promise<{ code?: string; message: string } | undefined> {
  try {
    await p;
  } catch (e) {
    return isHeadroomError(e) ? { code: e.code, message: e.message } : { message: String(e) };
  }
  return undefined;
}

export function checkpointStoreContract(name: string, makeHarness: () => Promise<StoreHarness>): void {
  describe(`CheckpointStore contract: ${name}`, () => {
    let h: StoreHarness;
    beforeEach(async () => {
      h = await makeHarness();
    });
    afterEach(async () => {
      await h.store.close();
      await h.cleanup();
    });

    it('load of a partition never saved is undefined; list of an unknown group is empty', async () => {
      expect(await h.store.load('g', 'scores', 0)).toBeUndefined();
      expect(await h.store.list('g')).toEqual([]);
    });

    it('save then load gives the same state back, which restores', async () => {
      const state = sampleState('scores', 2, 40);
      await h.store.save('g', 'scores', 2, state);
      const back = await h.store.load('g', 'scores', 2);
      expect(back).toEqual(JSON.parse(JSON.stringify(state)));
      expect(back).not.toBe(state);
      const restored = PartitionState.fromState(back, { topic: 'scores', partition: 2, models: [{ name: '*', segmentKeys: ['line'] }] });
      expect(restored.nextOffset).toBe('141');
      expect(restored.counts().events).toBe(40);
    });

    it('a later save overwrites; later changes to a saved object do not leak into the store', async () => {
      const first = sampleState('scores', 0, 5);
      await h.store.save('g', 'scores', 0, first);
      (first as { nextOffset: string | null }).nextOffset = '999999';
      expect((await h.store.load('g', 'scores', 0))?.nextOffset).toBe('106');
      await h.store.save('g', 'scores', 0, sampleState('scores', 0, 30));
      expect((await h.store.load('g', 'scores', 0))?.nextOffset).toBe('131');
      expect(await h.store.list('g')).toEqual([{ topic: 'scores', partition: 0 }]);
    });

    it('keeps groups, topics and partitions apart, including awkward names, and lists them sorted', async () => {
      const keys: [string, string, number][] = [
        ['g', 'scores', 10],
        ['g', 'scores', 2],
        ['g', 'a.b-c_d', 0],
        ['g', 'x@y/../z', 1],
        ['other group/..', 'scores', 2],
        ['..', 'Scores', 2],
      ];
      for (const [group, topic, partition] of keys) await h.store.save(group, topic, partition, sampleState(topic, partition, partition + 1));
      expect(await h.store.list('g')).toEqual([
        { topic: 'a.b-c_d', partition: 0 },
        { topic: 'scores', partition: 2 },
        { topic: 'scores', partition: 10 },
        { topic: 'x@y/../z', partition: 1 },
      ]);
      expect(await h.store.list('other group/..')).toEqual([{ topic: 'scores', partition: 2 }]);
      for (const [group, topic, partition] of keys) {
        const back = await h.store.load(group, topic, partition);
        expect([back?.topic, back?.partition, back?.counts.events]).toEqual([topic, partition, partition + 1]);
      }
      expect(await h.store.load('g', 'scores', 3)).toBeUndefined();
    });

    it('concurrent saves of different partitions all land', async () => {
      const partitions = Array.from({ length: 16 }, (_, p) => p);
      await Promise.all(partitions.map((p) => h.store.save('g', 'scores', p, sampleState('scores', p, p + 1))));
      expect((await h.store.list('g')).map((k) => k.partition)).toEqual(partitions);
      const loaded = await Promise.all(partitions.map((p) => h.store.load('g', 'scores', p)));
      expect(loaded.map((s) => s?.counts.events)).toEqual(partitions.map((p) => p + 1));
    });

    it('checkpoints survive a reopen of the same storage', async () => {
      await h.store.save('g', 'scores', 1, sampleState('scores', 1, 12));
      await h.store.close();
      const again = await h.reopen();
      try {
        expect((await again.load('g', 'scores', 1))?.counts.events).toBe(12);
        expect(await again.list('g')).toEqual([{ topic: 'scores', partition: 1 }]);
      } finally {
        await again.close();
      }
    });

    it('a corrupt checkpoint is refused with HR_ERR_CHECKPOINT_CORRUPT naming where it is, not reset', async () => {
      await h.store.save('g', 'scores', 0, sampleState('scores', 0, 3));
      const damaged: [string, string][] = [
        ['not JSON', '{"format":"headroom-partition/1","topic":"sco'],
        ['wrong format', JSON.stringify({ ...sampleState('scores', 0, 3), format: 'headroom-partition/0' })],
        ['another partition', JSON.stringify(sampleState('scores', 1, 3))],
        ['a bad count', JSON.stringify({ ...sampleState('scores', 0, 3), counts: { events: 'many' } })],
      ];
      for (const [what, text] of damaged) {
        await h.damage('g', 'scores', 0, text);
        const f = await rejection(h.store.load('g', 'scores', 0));
        expect(f?.code, what).toBe('HR_ERR_CHECKPOINT_CORRUPT');
        expect(f?.message, what).toContain(h.whereOf('g', 'scores', 0));
      }
      // Still refused on the next try: nothing was silently replaced.
      expect((await rejection(h.store.load('g', 'scores', 0)))?.code).toBe('HR_ERR_CHECKPOINT_CORRUPT');
      // A new save replaces the damaged checkpoint.
      await h.store.save('g', 'scores', 0, sampleState('scores', 0, 4));
      expect((await h.store.load('g', 'scores', 0))?.counts.events).toBe(4);
    });

    it('refuses a state saved under another partition, and bad names', async () => {
      expect((await rejection(h.store.save('g', 'scores', 1, sampleState('scores', 0, 1))))?.code).toBe('HR_ERR_STATE_ARGUMENT');
      expect((await rejection(h.store.save('', 'scores', 0, sampleState('scores', 0, 1))))?.code).toBe('HR_ERR_STATE_ARGUMENT');
      expect((await rejection(h.store.load('g', 'scores', -1)))?.code).toBe('HR_ERR_STATE_ARGUMENT');
      expect(await h.store.load('g', 'scores', 1)).toBeUndefined();
    });

    it('close is idempotent and later calls are refused', async () => {
      const a = h.store.close();
      const b = h.store.close();
      expect(a).toBe(b);
      await a;
      expect((await rejection(h.store.load('g', 'scores', 0)))?.code).toBe('HR_ERR_CHECKPOINT_CLOSED');
      expect((await rejection(h.store.save('g', 'scores', 0, sampleState('scores', 0, 1))))?.code).toBe('HR_ERR_CHECKPOINT_CLOSED');
      expect((await rejection(h.store.list('g')))?.code).toBe('HR_ERR_CHECKPOINT_CLOSED');
    });
  });
}
