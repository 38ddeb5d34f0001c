/**
 * A checkpoint store in memory, for tests of the watcher and other callers. It keeps the stored text,
 * not the object, so it behaves like a real store: later changes to a saved state do not leak in, and
 * load() returns a fresh object that went through the same checks. Two stores made over one `Backing`
 * see the same checkpoints, which is how a test "restarts" with it.
 */
import { checkGroup, checkKey, closedError, decodeCheckpoint, encodeCheckpoint, sortKeys } from './checkpoint-store.js';
import type { CheckpointKey, CheckpointStore } from './checkpoint-store.js';
import type { PartitionStateJson } from './partition-state.js';

export type MemoryBacking = Map<string, { readonly group: string; readonly topic: string; readonly partition: number; readonly text: string }>;

function keyOf(group: string, topic: string, partition: number): string {
  return JSON.stringify([group, topic, partition]);
}

export class MemoryCheckpointStore implements CheckpointStore {
  private closed: Promise<void> | undefined;

  constructor(readonly backing: MemoryBacking = new Map()) {}

  async load(group: string, topic: string, partition: number): Promise<PartitionStateJson | undefined> {
    this.open();
    checkKey(group, topic, partition);
    const entry = this.backing.get(keyOf(group, topic, partition));
    if (entry === undefined) return undefined;
    return decodeCheckpoint(entry.text, `memory checkpoint ${keyOf(group, topic, partition)}`, topic, partition);
  }

  async save(group: string, topic: string, partition: number, state: PartitionStateJson): Promise<void> {
    this.open();
    checkKey(group, topic, partition);
    const text = encodeCheckpoint(topic, partition, state);
    this.backing.set(keyOf(group, topic, partition), { group, topic, partition, text });
  }

  async list(group: string): Promise<CheckpointKey[]> {
    this.open();
    checkGroup(group);
    return sortKeys([...this.backing.values()].filter((e) => e.group === group).map(({ topic, partition }) => ({ topic, partition })));
  }

  close(): Promise<void> {
    this.closed ??= Promise.resolve();
    return this.closed;
  }

  /** Stores `text` as it is, as a damaged medium would; for tests of what callers do with a corrupt checkpoint. */
  damage(group: string, topic: string, partition: number, text: string): void {
    this.backing.set(keyOf(group, topic, partition), { group, topic, partition, text });
  }

  private open(): void {
    if (this.closed !== undefined) throw closedError();
  }
}
