/**
 * The read side of the watcher for src/serve: the owned partitions' states merged per series (mergeView),
 * each series faced with its model version's reference. Called at scrape or request time only.
 */
import type { PartitionInfo, Readiness, SeriesSnapshot, WatchedSeriesSource } from '../serve/index.js';
import { mergeView } from '../state/index.js';
import type { PartitionState } from '../state/index.js';
import type { ReferenceIndex } from './reference-index.js';

/** What the source reads from the watcher each time it is asked. */
export interface SourceView {
  /** The partition states this process owns now. */
  states(): readonly PartitionState[];
  readiness(): Readiness;
  partitions(): readonly PartitionInfo[];
}

/** `references` is asked once per call: a reload swapping the index meanwhile is seen by the next call, never by half of one. */
export function createSeriesSource(view: SourceView, references: () => ReferenceIndex): WatchedSeriesSource {
  return {
    series(): Iterable<SeriesSnapshot> {
      const index = references();
      return mergeView(view.states()).series.map((s) => {
        const reference = index.segmentFor(s.model, s.version, s.segment);
        const origin = reference === undefined ? undefined : index.origin(s.model, s.version);
        return {
          model: s.model,
          version: s.version,
          segment: s.segment,
          events: s.events,
          windows: s.windows,
          settledWatermarkMs: s.settledWatermarkMs,
          reference,
          ...(origin === undefined ? {} : { referenceOrigin: origin }),
        };
      });
    },
    rejections(): ReadonlyMap<string, number> {
      const out = new Map<string, number>();
      for (const state of view.states()) {
        for (const [reason, n] of Object.entries(state.counts().rejected)) out.set(reason, (out.get(reason) ?? 0) + (n ?? 0));
      }
      return out;
    },
    readiness: () => view.readiness(),
    partitions: () => view.partitions(),
    references: () => references().report(),
  };
}
