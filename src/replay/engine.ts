/**
 * The replay core: decoded events from one or more streams (a file each, or a Kafka partition each) go
 * into PartitionStates, the very class `headroom watch` keeps per partition, one set per replay window.
 * Routing, the segment cap, buckets, lateness and the merge of streams (mergeView) are therefore the
 * watcher's own code, and the same events give the same figures by construction. Pure: the caller
 * passes the clock in (`nowMs`, for the "from the future" rule) and does all reading.
 *
 * Streams and lateness. Each stream keeps its own watermark, as each Kafka partition does in `watch`:
 * an event older than its stream's newest event minus the lateness is counted late, not added.
 *
 * When a window is reported. A window [start, end) is closed, merged over its streams and handed to
 * `onWindow` once every stream still being read has passed end + lateness (streams that ended no longer
 * hold it back; streams not yet begun do not either, so files are best given in time order, as logs are
 * usually cut). An event that arrives for a window already reported is counted as `afterClose` and
 * added nowhere. The `total` window closes only at finish(), so any order works there.
 *
 * Without a configuration the engine discovers models and segment keys as events show them. A key
 * first seen on event k was on no event before k, so starting its series then misses nothing: the open
 * states are rebuilt with the longer key list (PartitionState.fromState keeps every series and count).
 */
import { HeadroomError } from '../errors.js';
import type { RejectionReason, ScoredEvent } from '../events/index.js';
import type { Margins } from '../margin/index.js';
import { windowConfig } from '../sketch/index.js';
import type { WindowConfig } from '../sketch/index.js';
import { ANY_MODEL, PartitionState, mergeView } from '../state/index.js';
import type { MergedView, ModelSettings } from '../state/index.js';
import { TOTAL_WINDOW, windowStartOf } from './window-spec.js';
import type { ReplayWindow } from './window-spec.js';

/** Coarse buckets a `total` window may hold (src/sketch/window-config.ts allows at most 10,000). */
const TOTAL_COARSE_BUCKETS = 10_000;

export interface ClosedWindow {
  /** Epoch-aligned start; for `total`, the start of the oldest bucket held. */
  readonly startMs: number;
  /** Exclusive end; for `total`, just after the newest event time. */
  readonly endMs: number;
  /** Length of the view that covers the whole window (for `total`, the retention of its series). */
  readonly viewMs: number;
  /** The window's series merged over its streams, exactly as the watcher merges partitions. */
  readonly view: MergedView;
}

export interface ReplayEngineOptions {
  readonly window: ReplayWindow;
  /**
   * Settings per model as in a watch config (src/config ModelConfig fits); undefined: discover every
   * model and segment key from the events, with `discover` as their settings.
   */
  readonly models?: readonly ModelSettings[];
  /** Settings of discovered models (thresholds, maxSeries, window); segment keys are found in the events. */
  readonly discover?: Omit<ModelSettings, 'name' | 'segmentKeys'>;
  /** The caller's clock, for events from the future (the watcher uses wall time; so does the CLI). */
  readonly nowMs: number;
  readonly onWindow: (closed: ClosedWindow) => void;
}

export interface EngineCounts {
  /** Events applied to a window's series (late and future included, as the watcher counts them; unwatched not). */
  readonly events: number;
  /** Events for a window that had already been reported. */
  readonly afterClose: number;
  /** Events of a model without settings. */
  readonly unwatched: number;
  /** Decoded-but-refused and undecodable messages, by reason. */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  readonly windowsReported: number;
}

interface Stream {
  readonly name: string;
  readonly partition: number;
  watermark: number;
  finished: boolean;
}

interface OpenWindow {
  readonly startMs: number;
  /** Per stream, in the order streams were added: the merge order, as the watcher's partition order. */
  readonly states: Map<string, PartitionState>;
}

function argument(detail: string, value?: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_REPLAY_ARGUMENT', detail, { context: { value } });
}

/** A model's window settings stretched so that one view covers a whole replay window. */
export function replayWindowConfig(base: WindowConfig, window: ReplayWindow): WindowConfig {
  if (window.lengthMs === null) return windowConfig({ ...base, retentionMs: TOTAL_COARSE_BUCKETS * base.coarseBucketMs });
  if (window.lengthMs % base.bucketMs !== 0) {
    throw argument(`the window ${window.name} is not a whole number of buckets (history.bucket is ${base.bucketMs} ms)`, window.name);
  }
  const retentionMs = Math.max(base.retentionMs, Math.ceil(window.lengthMs / base.coarseBucketMs) * base.coarseBucketMs);
  return windowConfig({ ...base, retentionMs });
}

export class ReplayEngine {
  private readonly window: ReplayWindow;
  private readonly nowMs: number;
  private readonly onWindow: (closed: ClosedWindow) => void;
  private readonly discovering: boolean;
  private models: ModelSettings[];
  private readonly keysSeen = new Map<string, Set<string>>();
  private readonly streams = new Map<string, Stream>();
  private readonly open = new Map<number, OpenWindow>();
  /** Windows at or before this start have been reported. */
  private closedThrough = -Infinity;
  private readonly latenessMs: number;
  private readonly viewMs: number;
  private events = 0;
  private afterClose = 0;
  private readonly rejected = new Map<RejectionReason, number>();
  private reported = 0;
  /** Unwatched events of windows already reported (their states are gone). */
  private retiredUnwatched = 0;
  /** Earliest time at which some open window could close: skips the check on nearly every event. */
  private nextCloseAt = Infinity;
  private firstEventMs = Infinity;
  private lastStream: Stream | undefined;
  private lastStart = Number.NaN;
  /** The state the last event went to; forgotten whenever a window closes or states are rebuilt. */
  private lastState: PartitionState | undefined;

  constructor(options: ReplayEngineOptions) {
    this.window = options.window ?? TOTAL_WINDOW;
    if (!Number.isFinite(options.nowMs)) throw argument('nowMs must be a finite number', options.nowMs);
    this.nowMs = options.nowMs;
    this.onWindow = options.onWindow;
    this.discovering = options.models === undefined;
    const stretch = (m: ModelSettings): ModelSettings => ({ ...m, window: replayWindowConfig(windowConfig(m.window ?? {}), this.window) });
    if (options.models !== undefined) {
      if (options.models.length === 0) throw argument('models must name at least one model');
      this.models = options.models.map(stretch);
    } else {
      this.models = [stretch({ ...(options.discover ?? {}), name: ANY_MODEL, segmentKeys: [] })];
    }
    const configs = this.models.map((m) => m.window as WindowConfig);
    this.latenessMs = Math.max(...configs.map((c) => c.latenessMs));
    this.viewMs = this.window.lengthMs ?? Math.min(...configs.map((c) => c.retentionMs));
  }

  /** Registers a stream before its first event; streams merge in the order added. */
  addStream(name: string, partition = 0): void {
    const key = streamKey(name, partition);
    if (this.streams.has(key)) throw argument(`stream ${name}#${partition} added twice`);
    this.streams.set(key, { name, partition, watermark: -Infinity, finished: false });
  }

  /** One decoded event with its margins, at `offset` (a line number or a Kafka offset) of its stream. */
  apply(stream: string, partition: number, event: ScoredEvent, margins: Margins, offset: string): void {
    // Hot path: consecutive events nearly always share their stream and window, so the last of each is
    // kept and the string-keyed map lookups (one allocation each) are skipped.
    let s = this.lastStream;
    if (s === undefined || s.name !== stream || s.partition !== partition) {
      s = this.stream(stream, partition);
      this.lastStream = s;
      this.lastState = undefined;
    }
    if (this.discovering) this.discover(event);
    const start = windowStartOf(this.window, event.timeMs);
    let state = this.lastState !== undefined && this.lastStart === start ? this.lastState : undefined;
    if (state === undefined) {
      if (start <= this.closedThrough && this.window.lengthMs !== null) {
        this.afterClose += 1;
        return;
      }
      state = this.stateFor(s, start);
      this.lastStart = start;
      this.lastState = state;
    }
    const outcome = state.apply(event, margins, offset, this.nowMs);
    if (outcome === 'duplicate' || outcome === 'unwatched') return; // the state counts unwatched ones
    this.events += 1;
    if (outcome !== 'added') return;
    if (event.timeMs < this.firstEventMs) this.firstEventMs = event.timeMs;
    if (event.timeMs > s.watermark) {
      s.watermark = event.timeMs;
      if (event.timeMs >= this.nextCloseAt) this.closeUpTo();
    }
  }

  /** A line or message turned away (undecodable, or a score without a margin). */
  reject(reason: RejectionReason): void {
    this.rejected.set(reason, (this.rejected.get(reason) ?? 0) + 1);
  }

  /** The stream has no more events: it no longer holds windows open. */
  finishStream(stream: string, partition = 0): void {
    this.stream(stream, partition).finished = true;
    this.closeUpTo();
  }

  /** Reports every window still open, oldest first. */
  finish(): void {
    for (const s of this.streams.values()) s.finished = true;
    for (const start of [...this.open.keys()].sort((a, b) => a - b)) this.close(start);
  }

  counts(): EngineCounts {
    let unwatched = this.retiredUnwatched;
    for (const w of this.open.values()) for (const state of w.states.values()) unwatched += state.counts().unwatched;
    const rejected: Partial<Record<RejectionReason, number>> = {};
    for (const [reason, n] of [...this.rejected].sort((a, b) => (a[0] < b[0] ? -1 : 1))) rejected[reason] = n;
    return { events: this.events, afterClose: this.afterClose, unwatched, rejected, windowsReported: this.reported };
  }

  /** Segment keys found per model (discovery mode), for messages. */
  discoveredKeys(): ReadonlyMap<string, readonly string[]> {
    return new Map([...this.keysSeen].map(([model, keys]) => [model, [...keys]]));
  }

  private stateFor(s: Stream, start: number): PartitionState {
    let open = this.open.get(start);
    if (open === undefined) {
      open = { startMs: start, states: new Map() };
      this.open.set(start, open);
      if (this.window.lengthMs !== null) this.nextCloseAt = Math.min(this.nextCloseAt, start + this.window.lengthMs + this.latenessMs);
    }
    const key = streamKey(s.name, s.partition);
    let state = open.states.get(key);
    if (state === undefined) {
      state = new PartitionState({ topic: s.name, partition: s.partition, models: this.models });
      open.states.set(key, state);
    }
    return state;
  }

  private stream(name: string, partition: number): Stream {
    const s = this.streams.get(streamKey(name, partition));
    if (s === undefined) throw argument(`stream ${name}#${partition} was not added`);
    return s;
  }

  private closeUpTo(): void {
    if (this.window.lengthMs === null) return;
    let mark = Infinity;
    for (const s of this.streams.values()) if (!s.finished && s.watermark !== -Infinity && s.watermark < mark) mark = s.watermark;
    if (mark === Infinity) return;
    const length = this.window.lengthMs;
    const ready = [...this.open.keys()].filter((start) => start + length + this.latenessMs <= mark).sort((a, b) => a - b);
    for (const start of ready) this.close(start);
    this.nextCloseAt = Infinity;
    for (const start of this.open.keys()) this.nextCloseAt = Math.min(this.nextCloseAt, start + length + this.latenessMs);
  }

  private close(start: number): void {
    const open = this.open.get(start);
    if (open === undefined) return;
    this.open.delete(start);
    this.lastState = undefined;
    const states = [...open.states.values()];
    const view = mergeView(states);
    // Of a reported window only its unwatched count is still needed; its buckets go with its states.
    for (const state of states) this.retiredUnwatched += state.counts().unwatched;
    if (this.window.lengthMs !== null) this.closedThrough = Math.max(this.closedThrough, start);
    const endMs = this.window.lengthMs === null ? (view.watermarkMs ?? 0) + 1 : start + this.window.lengthMs;
    const startMs = this.window.lengthMs === null ? (this.firstEventMs === Infinity ? 0 : this.firstEventMs) : start;
    this.reported += 1;
    this.onWindow({ startMs, endMs, viewMs: this.viewMs, view });
  }

  private discover(event: ScoredEvent): void {
    let keys = this.keysSeen.get(event.model);
    let grew = keys === undefined;
    if (keys === undefined) {
      keys = new Set();
      this.keysSeen.set(event.model, keys);
    }
    for (const key in event.segment) {
      if (!keys.has(key)) {
        keys.add(key);
        grew = true;
      }
    }
    if (!grew) return;
    const base = this.models.find((m) => m.name === ANY_MODEL) as ModelSettings;
    const own = [...this.keysSeen].map(([name, seen]): ModelSettings => ({ ...base, name, segmentKeys: [...seen] }));
    this.models = [base, ...own];
    this.lastState = undefined;
    // Rebuilt through the checkpoint form, which keeps every series and count and adds the new key.
    for (const open of this.open.values()) {
      for (const [key, state] of open.states) {
        open.states.set(key, PartitionState.fromState(state.toState(), { topic: state.topic, partition: state.partition, models: this.models }));
      }
    }
  }
}

function streamKey(name: string, partition: number): string {
  return `${name}\u0000${partition}`;
}
