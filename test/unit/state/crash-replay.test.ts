/**
 * The crash-safety protocol of src/state/partition-state.ts, simulated: a watcher processes batches,
 * checkpoints (state + next offset) at random points, commits to "Kafka" after a checkpoint, and
 * crashes at random points (mid-batch, or between checkpoint and commit), losing its in-memory state.
 * On restart it restores the last checkpoint and seeks to the checkpoint's offset. The final counts
 * must equal one clean pass exactly.
 */
import { describe, expect, it } from 'vitest';
import { PartitionState } from '../../../src/state/partition-state.js';
import type { PartitionStateOptions } from '../../../src/state/partition-state.js';
import { MemoryCheckpointStore } from '../../../src/state/memory-store.js';
import { rng } from '../events/prng.js';
import { marginsOf, MIN, stream, T0 } from './events.js';
import type { Message } from './events.js';

const OPTIONS: PartitionStateOptions = { topic: 'scores', partition: 4, models: [{ name: 'fraud', segmentKeys: ['line', 'shift'], maxSeries: 10 }, { name: 'churn', segmentKeys: ['line'] }] };
const NOW = T0 + 365 * 24 * 60 * MIN;
const GROUP = 'headroom';

function applyOne(state: PartitionState, m: Message, offset: number): boolean {
  if (m.kind === 'event') return state.apply(m.event, marginsOf(m.event), String(offset), NOW) !== 'duplicate';
  return state.reject(m.reason, String(offset));
}

/** Every exact figure: partition counts, and per series its counts, window counters and exact view figures. */
function exactFigures(state: PartitionState): unknown {
  return {
    counts: state.counts(),
    nextOffset: state.nextOffset,
    watermarkMs: state.watermarkMs,
    series: state.series().map((s) => {
      const day = s.windows.view(24 * 60 * MIN).summary;
      return [s.model, s.version, s.segment, s.events, s.labelled, s.wrong, s.windows.counters(), day.count, day.countBelow(0.1), day.countBelow(0.2), day.min, day.max];
    }),
  };
}

type Seek = 'checkpoint' | 'committed' | 'committed, ignoring the checkpoint';

interface Run {
  readonly state: PartitionState;
  readonly crashes: number;
  readonly checkpoints: number;
  readonly duplicates: number;
}

async function crashyRun(messages: readonly Message[], seed: number, seek: Seek): Promise<Run> {
  const r = rng(seed);
  const store = new MemoryCheckpointStore();
  let committed = 0; // Kafka's committed offset: lags the checkpoint whenever a crash comes between the two
  let state = new PartitionState(OPTIONS);
  let position = 0;
  let crashes = 0;
  let checkpoints = 0;
  let duplicates = 0;
  const restart = async (): Promise<void> => {
    crashes += 1;
    const saved = seek === 'committed, ignoring the checkpoint' ? undefined : await store.load(GROUP, OPTIONS.topic, OPTIONS.partition);
    // Through JSON text, as from a real store: nothing of the lost object survives.
    state = saved === undefined ? new PartitionState(OPTIONS) : PartitionState.fromState(JSON.parse(JSON.stringify(saved)), OPTIONS);
    position = seek === 'checkpoint' && state.nextOffset !== null ? Number(state.nextOffset) : committed;
  };
  while (position < messages.length) {
    const end = Math.min(messages.length, position + 1 + r.int(60));
    const crashAt = r.chance(0.2) ? position + r.int(end - position) : -1;
    let crashed = false;
    for (let i = position; i < end; i += 1) {
      if (i === crashAt) {
        crashed = true;
        break;
      }
      if (!applyOne(state, messages[i] as Message, i)) duplicates += 1;
    }
    if (crashed) {
      await restart();
      continue;
    }
    position = end;
    if (r.chance(0.5)) {
      await store.save(GROUP, OPTIONS.topic, OPTIONS.partition, state.toState());
      checkpoints += 1;
      if (r.chance(0.2)) {
        await restart(); // after the checkpoint, before the commit
        continue;
      }
      committed = Number(state.nextOffset);
    }
  }
  return { state, crashes, checkpoints, duplicates };
}

describe('crash and replay', () => {
  const messages = stream(2026, 1500);
  const clean = new PartitionState(OPTIONS);
  messages.forEach((m, i) => applyOne(clean, m, i));

  for (const seed of [1, 2, 3, 4]) {
    it(`seed ${seed}: restoring the checkpoint and seeking to its offset counts every message exactly once`, async () => {
      const run = await crashyRun(messages, seed, 'checkpoint');
      expect(run.crashes).toBeGreaterThan(3);
      expect(run.checkpoints).toBeGreaterThan(3);
      expect(run.duplicates).toBe(0); // seeking to the stored offset never re-reads what the state holds
      expect(exactFigures(run.state)).toEqual(exactFigures(clean));
    });
  }

  it('seeking to the lagging committed offset re-reads messages; the offset guard keeps the counts exact', async () => {
    const run = await crashyRun(messages, 5, 'committed');
    expect(run.duplicates).toBeGreaterThan(0);
    expect(exactFigures(run.state)).toEqual(exactFigures(clean));
  });

  it('control: without the checkpoint (state lost, resume at the committed offset) counts are lost, and the comparison sees it', async () => {
    const run = await crashyRun(messages, 1, 'committed, ignoring the checkpoint');
    expect(run.state.counts().events).toBeLessThan(clean.counts().events);
    expect(exactFigures(run.state)).not.toEqual(exactFigures(clean));
  });
});
