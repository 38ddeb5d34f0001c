/**
 * The cluster-wide read side of `headroom watch` with a shared checkpoint store: every partition of the
 * group, the ones this watcher owns from memory (live) and all others from their latest save on the
 * state topic, so any watcher can answer for the whole group. Counts are added and digests merged by the
 * same mergeView as the per-instance view; a partition stands in it once, whoever owns it.
 *
 * Other owners' figures are as old as their last save (checkpoint.interval) plus the refresh period; a
 * partition moving between watchers is never counted twice, since each key appears once. A save is
 * read and rebuilt only when it changed: by the store's revision when it has one (the Kafka store: the
 * record's offset, so an unchanged partition costs no gunzip or parse), else by its saved offsets.
 */
import type { Logger } from 'pino';
import { PartitionState } from '../state/index.js';
import type { CheckpointStore, PartitionStateJson, PartitionStateOptions } from '../state/index.js';

export interface ClusterViewOptions {
  readonly store: CheckpointStore;
  readonly group: string;
  /** The scored topics of this group; saves of other topics on the state topic are left out. */
  readonly topics: ReadonlySet<string>;
  readonly stateOptions: (topic: string, partition: number) => PartitionStateOptions;
  /** The states this watcher owns now, by `topic\0partition`. */
  readonly live: () => ReadonlyMap<string, PartitionState>;
  readonly log: Logger;
  readonly nowMs: () => number;
}

export interface ClusterView {
  /** Reads the state topic to its end and rebuilds the saved states that changed. */
  refresh(): Promise<void>;
  /** Live owned states plus the latest saved state of every other partition (as of the last refresh). */
  states(): readonly PartitionState[];
  /** Partitions in the view, and when it was last refreshed (null before the first). */
  info(): { readonly partitions: number; readonly refreshedAtMs: number | null };
}

interface Saved {
  readonly mark: string;
  readonly state: PartitionState;
}

const keyOf = (topic: string, partition: number): string => `${topic}\u0000${partition}`;
const markOf = (json: PartitionStateJson): string => `${json.nextOffset ?? ''}/${json.outcomes?.nextOffset ?? ''}`;

export function createClusterView(options: ClusterViewOptions): ClusterView {
  const { store, group } = options;
  let saved = new Map<string, Saved>();
  let refreshedAtMs: number | null = null;

  async function refresh(): Promise<void> {
    const next = new Map<string, Saved>();
    for (const { topic, partition } of await store.list(group)) {
      if (!options.topics.has(topic)) continue;
      const key = keyOf(topic, partition);
      const known = saved.get(key);
      const revision = store.revision?.(group, topic, partition);
      if (known !== undefined && revision !== undefined && known.mark === `r${revision}`) {
        next.set(key, known);
        continue;
      }
      const json = await store.load(group, topic, partition);
      if (json === undefined) continue;
      const mark = revision === undefined ? markOf(json) : `r${revision}`;
      if (known !== undefined && known.mark === mark) {
        next.set(key, known);
        continue;
      }
      try {
        next.set(key, { mark, state: PartitionState.fromState(json, options.stateOptions(topic, partition)) });
      } catch (error) {
        // Left out, and said: the owner of the partition refuses the same checkpoint (HR_ERR_WATCH_RESTORE).
        options.log.warn({ err: error, topic, partition }, 'saved state left out of the cluster view');
      }
    }
    saved = next;
    refreshedAtMs = options.nowMs();
  }

  function states(): readonly PartitionState[] {
    const live = options.live();
    const out = [...live.values()];
    for (const [key, { state }] of saved) if (!live.has(key)) out.push(state);
    return out;
  }

  return { refresh, states, info: () => ({ partitions: states().length, refreshedAtMs }) };
}
