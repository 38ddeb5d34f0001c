/** The one CheckpointStore contract, run for each implementation. */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FileCheckpointStore } from '../../../src/state/file-store.js';
import { MemoryCheckpointStore } from '../../../src/state/memory-store.js';
import type { MemoryBacking } from '../../../src/state/memory-store.js';
import { checkpointStoreContract } from './checkpoint-store-contract.js';

checkpointStoreContract('FileCheckpointStore', async () => {
  const dir = await mkdtemp(join(tmpdir(), 'headroom-checkpoints-'));
  const store = new FileCheckpointStore({ dir });
  return {
    store,
    reopen: async () => new FileCheckpointStore({ dir }),
    damage: async (group, topic, partition, text) => writeFile(store.pathOf(group, topic, partition), text),
    whereOf: (group, topic, partition) => store.pathOf(group, topic, partition),
    cleanup: () => rm(dir, { recursive: true, force: true }),
  };
});

checkpointStoreContract('MemoryCheckpointStore', async () => {
  const backing: MemoryBacking = new Map();
  const store = new MemoryCheckpointStore(backing);
  return {
    store,
    reopen: async () => new MemoryCheckpointStore(backing),
    damage: async (group, topic, partition, text) => store.damage(group, topic, partition, text),
    whereOf: (group, topic, partition) => JSON.stringify([group, topic, partition]),
    cleanup: async () => undefined,
  };
});
