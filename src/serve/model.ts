/**
 * What src/serve reads from the watcher: a few methods the partition state will satisfy, so the HTTP layer
 * and the metrics never learn about Kafka, checkpoints or how partitions are merged. Every call is made
 * when Prometheus scrapes or a client asks, never per message, so an implementation may merge the
 * partitions' windows inside series() instead of keeping a merged copy up to date.
 */
import type { AlertRule, AlertStatus, AlertTransition } from '../alerts/index.js';
import type { JoinCounts, LabelWindows } from '../labels/index.js';
import type { ReferenceSegment } from '../reference/index.js';
import type { MarginWindows } from '../sketch/index.js';

export interface SeriesKey {
  readonly model: string;
  readonly version: string;
  /** `all`, or `key=value` (DESIGN: one slicing key at a time). */
  readonly segment: string;
}

export interface SeriesSnapshot extends SeriesKey {
  /**
   * Exact count of events routed to this series, late and future ones included, since the state was
   * created (restored checkpoints carry it on). Exported as a counter: it must never go down while the
   * process owns the series; a partition moving away is a counter reset, which Prometheus expects.
   */
  readonly events: number;
  /**
   * The series' windows, one partition's or several merged. The low-margin thresholds are its
   * config.thresholds: no second list that could disagree with the counters.
   */
  readonly windows: MarginWindows;
  /** The reference this series is compared with (its own segment or the version's `all`); undefined when none is loaded. */
  readonly reference: ReferenceSegment | undefined;
  /** Where `reference` came from and when; absent when none is loaded (or the source does not say). */
  readonly referenceOrigin?: ReferenceOrigin;
  /** The oldest of the partitions' watermarks for the series (see mergeView); absent: the windows' own. */
  readonly settledWatermarkMs?: number | null;
  /** Labelled predictions (inline and joined) since the state was created; absent: none. A counter, as `events`. */
  readonly labelled?: number;
  /** Labelled predictions by prediction time (src/labels); absent until the first label. */
  readonly labels?: LabelWindows;
  /** True when every event of the series stated a probability, so the label-free error estimate applies. */
  readonly probabilistic?: boolean;
}

/** The delayed-label join over the owned partitions. */
export interface LabelJoinReport {
  readonly outcomes: number;
  readonly labelledInline: number;
  readonly join: JoinCounts;
  readonly waiting: { readonly predictions: number; readonly outcomes: number };
}

/**
 * How a loaded reference stands against its file: `current` is what the file held when last read;
 * `reload-failed` is the last good copy, kept because the file's latest read failed; `replaced` is kept
 * for the series of its own version after the file moved on to another version.
 */
export type ReferenceFileState = 'current' | 'reload-failed' | 'replaced';

export interface ReferenceOrigin {
  readonly model: string;
  readonly version: string;
  /** The file's `createdAt`, as written. */
  readonly createdAt: string;
  /** Wall time (ms) this copy was read, by start or by a reload that found it changed. */
  readonly loadedAtMs: number;
  readonly file: ReferenceFileState;
}

/** One configured reference file: the metrics of its reloads. */
export interface ReferenceFileReport {
  /** The `models[].name` the file is configured for (`*` included). */
  readonly model: string;
  readonly path: string;
  /** Reads that failed since start (a reload that kept the previous reference). */
  readonly reloadErrors: number;
  /** True while the latest read failed. */
  readonly failing: boolean;
}

export interface ReferenceReport {
  readonly loaded: readonly ReferenceOrigin[];
  readonly files: readonly ReferenceFileReport[];
}

export interface Readiness {
  readonly ready: boolean;
  /** Why not ready, in words for an operator (e.g. "partition orders-3 is restoring"); empty when ready. */
  readonly reasons: readonly string[];
}

export interface PartitionInfo {
  readonly topic: string;
  readonly partition: number;
  /** Messages between the committed position and the high watermark; null until the broker has said. */
  readonly lagMessages: number | null;
  /** Wall time (ms) of the last checkpoint written; null before the first. The age is taken against the clock serve is given. */
  readonly lastCheckpointMs: number | null;
}

export interface WatchedSeriesSource {
  /** One snapshot per series; partitions already merged. */
  series(): Iterable<SeriesSnapshot>;
  /** Rejected messages by reason code (src/events/reasons.ts); counts only ever grow. */
  rejections(): ReadonlyMap<string, number>;
  readiness(): Readiness;
  partitions(): readonly PartitionInfo[];
  /** Loaded references and their files; a source without reference files may leave it out. */
  references?(): ReferenceReport;
  /** Alert rules, every alert's phase and the latest transitions; a source without alerting leaves it out. */
  alerts?(): AlertReport;
  /** The delayed-label join; a source without one leaves it out. */
  labelJoin?(): LabelJoinReport;
}

export interface AlertReport {
  readonly rules: readonly AlertRule[];
  readonly alerts: readonly AlertStatus[];
  /** The latest transitions, oldest first. */
  readonly recent: readonly AlertTransition[];
}

/** A named view of the windows, e.g. `{ name: '5m', durationMs: 300_000 }`; the name is the `window` label. */
export interface ViewSpec {
  readonly name: string;
  readonly durationMs: number;
}
