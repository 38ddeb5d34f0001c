/**
 * The read side of the watcher for src/serve: the owned partitions' states merged per series (mergeView),
 * each series faced with its model version's reference. Called at scrape or request time only.
 */
import type { LabelJoinReport, PartitionInfo, Readiness, SeriesSnapshot, WatchedSeriesSource } from '../serve/index.js';
import { JOIN_RESULTS, emptyJoinCounts } from '../labels/index.js';
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
          labelled: s.labelled,
          ...(s.labels === undefined ? {} : { labels: s.labels }),
          probabilistic: s.events > 0 && s.probabilityScored === s.events,
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
    labelJoin(): LabelJoinReport {
      // Counts only: merging the windows (mergeView) would be wasted here.
      const join = emptyJoinCounts();
      const waiting = { predictions: 0, outcomes: 0 };
      let outcomes = 0;
      let labelledInline = 0;
      for (const state of view.states()) {
        const c = state.counts();
        outcomes += c.outcomes;
        labelledInline += c.labelledInline;
        for (const k of JOIN_RESULTS) join[k] += c.join[k];
        waiting.predictions += c.waiting.predictions;
        waiting.outcomes += c.waiting.outcomes;
      }
      return { outcomes, labelledInline, join, waiting };
    },
    readiness: () => view.readiness(),
    partitions: () => view.partitions(),
    references: () => references().report(),
  };
}
