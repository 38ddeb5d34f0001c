/**
 * Where partition states are kept between runs. A small interface so that the file store (one
 * instance), the in-memory store (tests of callers) and the compacted-Kafka-topic store (several
 * instances, kafka-store.ts) are interchangeable; test/unit/state/checkpoint-store-contract.ts is what each
 * one must pass.
 *
 * The contract, for every implementation:
 * - save() is atomic per partition: after a crash, load() returns the last completed save or an older
 *   one, never a mix. It resolves only once the state is durable.
 * - load() of a partition never saved resolves to undefined. A stored checkpoint that cannot be read
 *   back (not JSON, wrong format, another partition's) rejects with HR_ERR_CHECKPOINT_CORRUPT naming
 *   where it is: a corrupt checkpoint is refused, never silently replaced by an empty state, since
 *   starting empty would quietly lose every aggregate. The caller (the watcher) decides: stop, or let an
 *   operator remove the checkpoint.
 * - Saves of different partitions may run at once. Saves of one partition should not overlap (the
 *   watcher saves a partition after each batch, in order); if they do, one of them wins whole.
 * - close() is idempotent (it returns the same promise) and waits for saves under way; after it,
 *   every call rejects with HR_ERR_CHECKPOINT_CLOSED.
 *
 * The store checks the envelope of a state (parsePartitionState); the windows inside are checked when
 * PartitionState.fromState() restores them.
 */
import { HeadroomError, isHeadroomError } from '../errors.js';
import { badArgument } from './fail.js';
import { parsePartitionState } from './partition-state.js';
import type { PartitionStateJson } from './partition-state.js';

export interface CheckpointKey {
  readonly topic: string;
  readonly partition: number;
}

export interface CheckpointStore {
  /**
   * True when other instances write to this store too (the Kafka-topic store): a partition handed over
   * mid-run must then be restored from the store's latest save, not from a copy loaded at start.
   */
  readonly shared?: boolean;
  load(group: string, topic: string, partition: number): Promise<PartitionStateJson | undefined>;
  save(group: string, topic: string, partition: number, state: PartitionStateJson): Promise<void>;
  /**
   * Optional: a token that changes whenever the partition's checkpoint does (undefined: none), as of the
   * last list() or load(); lets a reader of every partition (the cluster view) skip unchanged ones.
   */
  revision?(group: string, topic: string, partition: number): string | undefined;
  /** The partitions of `group` that have a checkpoint, sorted by topic and partition. */
  list(group: string): Promise<CheckpointKey[]>;
  close(): Promise<void>;
}

/**
 * Runs `work` as one of a store's calls under way (`pending`), so close() can wait for it; refused once
 * the store is closing. The same bookkeeping for every store.
 */
export function trackCall<T>(pending: Set<Promise<unknown>>, closing: boolean, work: () => Promise<T>): Promise<T> {
  if (closing) return Promise.reject(closedError());
  const promise = work();
  pending.add(promise);
  const forget = (): void => {
    pending.delete(promise);
  };
  promise.then(forget, forget);
  return promise;
}

export function sortKeys(keys: CheckpointKey[]): CheckpointKey[] {
  return keys.sort((a, b) => (a.topic < b.topic ? -1 : a.topic > b.topic ? 1 : a.partition - b.partition));
}

export function checkGroup(group: string): void {
  if (typeof group !== 'string' || group === '') throw badArgument('group', 'must be a non-empty consumer group id', group);
}

/** Refuses names no store can key on; the same rule for every implementation. */
export function checkKey(group: string, topic: string, partition: number): void {
  checkGroup(group);
  if (typeof topic !== 'string' || topic === '') throw badArgument('topic', 'must be a non-empty topic name', topic);
  if (!Number.isSafeInteger(partition) || partition < 0) throw badArgument('partition', 'must be a non-negative whole number', partition);
}

/** The stored text of a state; refuses a state saved under another partition's key (a caller's mistake). */
export function encodeCheckpoint(topic: string, partition: number, state: PartitionStateJson): string {
  if (state === null || typeof state !== 'object' || state.topic !== topic || state.partition !== partition) {
    throw badArgument('state', `must be the state of ${topic}[${partition}], got one of ${String(state?.topic)}[${String(state?.partition)}]`);
  }
  return JSON.stringify(state);
}

/** Text read back from a store, checked; `where` (a path, a topic offset) goes into the error. */
export function decodeCheckpoint(text: string, where: string, topic: string, partition: number): PartitionStateJson {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw corrupt(where, 'is not JSON (a torn or damaged write?)', error);
  }
  let state: PartitionStateJson;
  try {
    state = parsePartitionState(value, 'checkpoint');
  } catch (error) {
    throw corrupt(where, isHeadroomError(error) ? error.message.replace(/^[^:]*: /, '') : String(error), error);
  }
  if (state.topic !== topic || state.partition !== partition) {
    throw corrupt(where, `holds ${state.topic}[${state.partition}], not ${topic}[${partition}]`);
  }
  return state;
}

export function corrupt(where: string, detail: string, cause?: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_CHECKPOINT_CORRUPT', `${where} ${detail}; remove it to start this partition afresh`, {
    context: { where },
    ...(cause === undefined ? {} : { cause }),
  });
}

export function closedError(): HeadroomError {
  return new HeadroomError('HR_ERR_CHECKPOINT_CLOSED', 'close() was called; make a new store');
}
