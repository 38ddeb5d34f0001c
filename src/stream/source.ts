/**
 * The read side of the watcher for src/serve: the owned partitions' states merged per series (mergeView),
 * each series faced with its model version's reference. Called at scrape or request time only.
 */
import type { LoadedReference } from '../reference/index.js';
import type { PartitionInfo, Readiness, SeriesSnapshot, WatchedSeriesSource } from '../serve/index.js';
import { mergeView } from '../state/index.js';
import type { PartitionState } from '../state/index.js';

/** What the source reads from the watcher each time it is asked. */
export interface SourceView {
  /** The partition states this process owns now. */
  states(): readonly PartitionState[];
  readiness(): Readiness;
  partitions(): readonly PartitionInfo[];
}

/** References keyed by model and version, as the files say (a file describes one model version). */
export class ReferenceIndex {
  private readonly byVersion = new Map<string, LoadedReference>();

  add(reference: LoadedReference): void {
    this.byVersion.set(referenceKey(reference.model, reference.version), reference);
  }

  /** The series' own segment of the reference, else the version's `all`; undefined when the version has no reference. */
  segmentFor(model: string, version: string, segment: string): SeriesSnapshot['reference'] {
    return this.byVersion.get(referenceKey(model, version))?.segmentFor(segment);
  }

  get size(): number {
    return this.byVersion.size;
  }
}

function referenceKey(model: string, version: string): string {
  return `${model}\u0000${version}`;
}

export function createSeriesSource(view: SourceView, references: ReferenceIndex): WatchedSeriesSource {
  return {
    series(): Iterable<SeriesSnapshot> {
      return mergeView(view.states()).series.map((s) => ({
        model: s.model,
        version: s.version,
        segment: s.segment,
        events: s.events,
        windows: s.windows,
        reference: references.segmentFor(s.model, s.version, s.segment),
      }));
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
  };
}
