/**
 * The join of predictions with their delayed labels, for one partition pair (partition p of a scored
 * topic and partition p of its outcome topic). Bounded and pure: the caller passes every time in, and
 * the whole store is part of the partition's checkpoint.
 *
 * Whichever of the two arrives first waits here under its event id: a prediction for its outcome, an
 * outcome for its prediction (the outcome topic may be read ahead of the scored one). A prediction and
 * an outcome match when their event times are at most `ttlMs` apart; once matched the id stays as a
 * small tombstone until it expires, so a second outcome for it is counted as a duplicate rather than
 * waiting in vain.
 *
 * Time. The store's clock is the older of the two sides' newest event times (both must have been seen),
 * so a side that is read behind the other does not expire entries its own messages could still match.
 * An entry is dropped once the clock passes its time + ttlMs: a waiting prediction counts as expired, a
 * waiting outcome as unmatched. With both topics in event-time order within each partition, whether a
 * pair matches does not depend on which topic was read first (a partner within ttlMs always arrives
 * before the clock passes the entry). An idle outcome topic holds the clock still; then the cap bounds
 * the store.
 *
 * The cap. At most `maxEntries` entries (waiting predictions, waiting outcomes and tombstones). At the
 * cap the oldest entry by arrival goes to make room: a prediction counts as evicted, an outcome as
 * evicted, a tombstone goes silently (a duplicate of it then waits and ends as unmatched).
 *
 * Expiry goes by event time, not arrival: a min-heap of (time, entry) beside the id map, so an entry
 * that arrived early with a late time (the closing prediction of a topic read ahead) never shields older
 * entries behind it. Entries that left the map (matched with a new time, evicted) stay in the heap until
 * they surface and are dropped then; the heap is rebuilt when it grows past twice the map.
 */
import type { Label, Score } from '../events/index.js';
import { badArgument, badState } from './fail.js';

const PREDICTION = 0;
const OUTCOME = 1;
const MATCHED = 2;

/** What a waiting prediction keeps: enough to route it and compute its signed margin later. */
export interface WaitingPrediction {
  readonly timeMs: number;
  readonly model: string;
  readonly version: string;
  readonly segment: Readonly<Record<string, string>>;
  readonly score: Score;
}

// One class for all three kinds keeps every entry the same shape (one hidden class, smaller and faster).
class Entry implements WaitingPrediction {
  constructor(
    public kind: number,
    public timeMs: number,
    public model: string,
    public version: string,
    public segment: Readonly<Record<string, string>>,
    public score: Score,
    public label: Label | undefined,
  ) {}
}

const NO_SEGMENT: Readonly<Record<string, string>> = Object.freeze({});
const NO_SCORE: Score = Object.freeze({ kind: 'margin', value: 0 }) as Score;

export interface JoinCounts {
  readonly matched: number;
  readonly predictionExpired: number;
  readonly predictionEvicted: number;
  /** A second prediction under an id that is waiting or matched; the first one keeps the id. */
  readonly predictionDuplicate: number;
  readonly outcomeUnmatched: number;
  readonly outcomeEvicted: number;
  readonly outcomeDuplicate: number;
  /** An outcome whose label does not fit its prediction's score (src/margin's bad_label), found at the match. */
  readonly outcomeBadLabel: number;
}

export const JOIN_RESULTS = ['matched', 'predictionExpired', 'predictionEvicted', 'predictionDuplicate', 'outcomeUnmatched', 'outcomeEvicted', 'outcomeDuplicate', 'outcomeBadLabel'] as const satisfies readonly (keyof JoinCounts)[];

type MutableCounts = { -readonly [K in keyof JoinCounts]: number };

export function emptyJoinCounts(): MutableCounts {
  return Object.fromEntries(JOIN_RESULTS.map((k) => [k, 0])) as MutableCounts;
}

export interface PendingOptions {
  readonly ttlMs: number;
  readonly maxEntries: number;
}

export interface PendingState {
  readonly predictionWatermarkMs: number | null;
  readonly outcomeWatermarkMs: number | null;
  readonly counts: JoinCounts;
  /** In arrival order: [id, kind ('p' | 'o' | 'm'), timeMs, ...] (see toState). */
  readonly entries: readonly unknown[][];
}

/** The two halves of a match, for the caller to label the prediction with. */
export interface Match {
  readonly prediction: WaitingPrediction;
  readonly label: Label;
}

export class PendingLabels {
  readonly ttlMs: number;
  readonly maxEntries: number;
  private readonly entries = new Map<string, Entry>();
  // The expiry heap, as three parallel arrays (a packed double array for the times: no object per item).
  private heapTimes: number[] = [];
  private heapIds: string[] = [];
  private heapEntries: Entry[] = [];
  private predictionWatermark: number | null = null;
  private outcomeWatermark: number | null = null;
  private waitingPredictions = 0;
  private waitingOutcomes = 0;
  readonly counts: MutableCounts = emptyJoinCounts();

  constructor(options: PendingOptions) {
    if (!Number.isSafeInteger(options.ttlMs) || options.ttlMs <= 0) throw badArgument('labels.ttlMs', 'must be a positive whole number of milliseconds', options.ttlMs);
    if (!Number.isSafeInteger(options.maxEntries) || options.maxEntries < 1) throw badArgument('labels.maxPending', 'must be a whole number >= 1', options.maxEntries);
    this.ttlMs = options.ttlMs;
    this.maxEntries = options.maxEntries;
  }

  get size(): number {
    return this.entries.size;
  }

  /** Predictions waiting for their outcome and outcomes waiting for their prediction, now. */
  waiting(): { readonly predictions: number; readonly outcomes: number } {
    return { predictions: this.waitingPredictions, outcomes: this.waitingOutcomes };
  }

  /** The waiting prediction an outcome at `timeMs` would match, without changing anything; else undefined. */
  partnerOf(id: string, timeMs: number): WaitingPrediction | undefined {
    const e = this.entries.get(id);
    return e !== undefined && e.kind === PREDICTION && Math.abs(e.timeMs - timeMs) <= this.ttlMs ? e : undefined;
  }

  /** A prediction without a label. Returns the waiting outcome it matches, if any (the pair is then done). */
  addPrediction(id: string, prediction: WaitingPrediction): Match | undefined {
    const t = prediction.timeMs;
    let match: Match | undefined;
    const e = this.entries.get(id);
    if (e === undefined) {
      this.insert(id, new Entry(PREDICTION, t, prediction.model, prediction.version, prediction.segment, prediction.score, undefined));
      this.waitingPredictions += 1;
    } else if (e.kind === OUTCOME && Math.abs(e.timeMs - t) <= this.ttlMs) {
      match = { prediction, label: e.label as Label };
      this.waitingOutcomes -= 1;
      this.counts.matched += 1;
      this.tombstone(e, t, id);
    } else if (e.kind === OUTCOME) {
      // Too far apart in time to be one pair: the outcome gives up its place to the prediction.
      this.counts.outcomeUnmatched += 1;
      this.waitingOutcomes -= 1;
      this.entries.delete(id);
      this.insert(id, new Entry(PREDICTION, t, prediction.model, prediction.version, prediction.segment, prediction.score, undefined));
      this.waitingPredictions += 1;
    } else {
      this.counts.predictionDuplicate += 1;
    }
    if (this.predictionWatermark === null || t > this.predictionWatermark) this.predictionWatermark = t;
    this.expire();
    return match;
  }

  /**
   * An outcome. Returns the prediction it matches (the pair is then done); undefined when it waits or is
   * counted as a duplicate or unmatched. Call partnerOf() first to check the label fits the score.
   */
  addOutcome(id: string, timeMs: number, label: Label): WaitingPrediction | undefined {
    let matched: WaitingPrediction | undefined;
    const e = this.entries.get(id);
    if (e === undefined) {
      this.insert(id, new Entry(OUTCOME, timeMs, '', '', NO_SEGMENT, NO_SCORE, label));
      this.waitingOutcomes += 1;
    } else if (e.kind === PREDICTION && Math.abs(e.timeMs - timeMs) <= this.ttlMs) {
      matched = { timeMs: e.timeMs, model: e.model, version: e.version, segment: e.segment, score: e.score };
      this.waitingPredictions -= 1;
      this.counts.matched += 1;
      this.tombstone(e, e.timeMs, id);
    } else if (e.kind === PREDICTION) {
      this.counts.outcomeUnmatched += 1; // its prediction is too far away in time; the prediction waits on
    } else {
      this.counts.outcomeDuplicate += 1;
    }
    if (this.outcomeWatermark === null || timeMs > this.outcomeWatermark) this.outcomeWatermark = timeMs;
    this.expire();
    return matched;
  }

  /** An outcome whose waiting prediction was found but whose label does not fit the score. */
  countBadLabel(): void {
    this.counts.outcomeBadLabel += 1;
  }

  private tombstone(e: Entry, timeMs: number, id: string): void {
    e.kind = MATCHED;
    if (e.timeMs !== timeMs) {
      e.timeMs = timeMs;
      this.push(id, e);
    }
    e.model = '';
    e.version = '';
    e.segment = NO_SEGMENT;
    e.score = NO_SCORE;
    e.label = undefined;
  }

  private insert(id: string, entry: Entry): void {
    while (this.entries.size >= this.maxEntries) {
      const [oldestId, oldest] = this.entries.entries().next().value as [string, Entry];
      this.entries.delete(oldestId);
      if (oldest.kind === PREDICTION) {
        this.waitingPredictions -= 1;
        this.counts.predictionEvicted += 1;
      } else if (oldest.kind === OUTCOME) {
        this.waitingOutcomes -= 1;
        this.counts.outcomeEvicted += 1;
      }
    }
    this.entries.set(id, entry);
    this.push(id, entry);
  }

  private push(id: string, entry: Entry): void {
    if (this.heapTimes.length > 2 * this.entries.size + 1024) this.rebuildHeap();
    const times = this.heapTimes;
    let i = times.length;
    times.push(entry.timeMs);
    this.heapIds.push(id);
    this.heapEntries.push(entry);
    while (i > 0) {
      const parent = (i - 1) >> 1;
      if ((times[parent] as number) <= (times[i] as number)) break;
      this.swap(i, parent);
      i = parent;
    }
  }

  private popTop(): void {
    const last = this.heapTimes.length - 1;
    this.swap(0, last);
    this.heapTimes.pop();
    this.heapIds.pop();
    this.heapEntries.pop();
    const times = this.heapTimes;
    const n = times.length;
    let i = 0;
    for (;;) {
      const l = 2 * i + 1;
      const r = l + 1;
      let m = i;
      if (l < n && (times[l] as number) < (times[m] as number)) m = l;
      if (r < n && (times[r] as number) < (times[m] as number)) m = r;
      if (m === i) break;
      this.swap(i, m);
      i = m;
    }
  }

  private swap(a: number, b: number): void {
    const t = this.heapTimes[a] as number;
    this.heapTimes[a] = this.heapTimes[b] as number;
    this.heapTimes[b] = t;
    const id = this.heapIds[a] as string;
    this.heapIds[a] = this.heapIds[b] as string;
    this.heapIds[b] = id;
    const e = this.heapEntries[a] as Entry;
    this.heapEntries[a] = this.heapEntries[b] as Entry;
    this.heapEntries[b] = e;
  }

  private rebuildHeap(): void {
    this.heapTimes = [];
    this.heapIds = [];
    this.heapEntries = [];
    const entries = [...this.entries].sort((a, b) => a[1].timeMs - b[1].timeMs);
    for (const [id, e] of entries) {
      this.heapTimes.push(e.timeMs);
      this.heapIds.push(id);
      this.heapEntries.push(e);
    }
  }

  private expire(): void {
    if (this.predictionWatermark === null || this.outcomeWatermark === null) return;
    const before = Math.min(this.predictionWatermark, this.outcomeWatermark) - this.ttlMs;
    while (this.heapTimes.length > 0 && (this.heapTimes[0] as number) < before) {
      const id = this.heapIds[0] as string;
      const e = this.heapEntries[0] as Entry;
      const time = this.heapTimes[0] as number;
      this.popTop();
      // Stale: the id left the map (evicted, replaced) or its entry took a new time (pushed again).
      if (this.entries.get(id) !== e || e.timeMs !== time) continue;
      this.entries.delete(id);
      if (e.kind === PREDICTION) {
        this.waitingPredictions -= 1;
        this.counts.predictionExpired += 1;
      } else if (e.kind === OUTCOME) {
        this.waitingOutcomes -= 1;
        this.counts.outcomeUnmatched += 1;
      }
    }
  }

  toState(): PendingState {
    const entries: unknown[][] = [];
    for (const [id, e] of this.entries) {
      if (e.kind === PREDICTION) entries.push([id, 'p', e.timeMs, e.model, e.version, e.segment, e.score]);
      else if (e.kind === OUTCOME) entries.push([id, 'o', e.timeMs, e.label]);
      else entries.push([id, 'm', e.timeMs]);
    }
    return { predictionWatermarkMs: this.predictionWatermark, outcomeWatermarkMs: this.outcomeWatermark, counts: { ...this.counts }, entries };
  }

  /**
   * A saved store under today's options. A lower maxEntries than the saved one evicts the oldest at once
   * (counted). Entries are checked for shape only: they were written by toState() from decoded events.
   */
  static fromState(value: unknown, options: PendingOptions, path: string): PendingLabels {
    const s = value as Partial<PendingState> | null;
    if (typeof s !== 'object' || s === null) throw badState(path, 'must be an object');
    const store = new PendingLabels(options);
    const time = (v: unknown): v is number | null => v === null || (typeof v === 'number' && Number.isFinite(v));
    if (!time(s.predictionWatermarkMs)) throw badState(`${path}.predictionWatermarkMs`, 'must be a number or null');
    if (!time(s.outcomeWatermarkMs)) throw badState(`${path}.outcomeWatermarkMs`, 'must be a number or null');
    store.predictionWatermark = s.predictionWatermarkMs;
    store.outcomeWatermark = s.outcomeWatermarkMs;
    const counts = (s.counts ?? {}) as Record<string, unknown>;
    for (const k of JOIN_RESULTS) {
      const n = counts[k] ?? 0;
      if (!Number.isSafeInteger(n) || (n as number) < 0) throw badState(`${path}.counts.${k}`, 'must be a non-negative whole number');
      store.counts[k] = n as number;
    }
    if (!Array.isArray(s.entries)) throw badState(`${path}.entries`, 'must be an array');
    s.entries.forEach((raw, i) => {
      const at = `${path}.entries[${i}]`;
      if (!Array.isArray(raw) || typeof raw[0] !== 'string' || typeof raw[2] !== 'number' || !Number.isFinite(raw[2])) throw badState(at, 'must be [id, kind, timeMs, ...]');
      const [id, kind, t] = raw as [string, string, number];
      if (store.entries.has(id)) throw badState(at, `repeats the id ${JSON.stringify(id)}`);
      if (kind === 'p') {
        const [, , , model, version, segment, score] = raw as [string, string, number, unknown, unknown, unknown, unknown];
        if (typeof model !== 'string' || typeof version !== 'string' || typeof segment !== 'object' || segment === null || typeof score !== 'object' || score === null) {
          throw badState(at, 'a waiting prediction must be [id, "p", timeMs, model, version, segment, score]');
        }
        store.insert(id, new Entry(PREDICTION, t, model, version, segment as Record<string, string>, score as Score, undefined));
        store.waitingPredictions += 1;
      } else if (kind === 'o') {
        const label = raw[3] as unknown;
        if (typeof label !== 'string' && typeof label !== 'number' && typeof label !== 'boolean') throw badState(at, 'a waiting outcome must be [id, "o", timeMs, label]');
        store.insert(id, new Entry(OUTCOME, t, '', '', NO_SEGMENT, NO_SCORE, label));
        store.waitingOutcomes += 1;
      } else if (kind === 'm') {
        store.insert(id, new Entry(MATCHED, t, '', '', NO_SEGMENT, NO_SCORE, undefined));
      } else {
        throw badState(`${at}[1]`, 'must be "p", "o" or "m"');
      }
    });
    return store;
  }
}
