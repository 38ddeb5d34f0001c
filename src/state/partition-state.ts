/**
 * What `headroom watch` knows about one Kafka topic-partition: its series (windows and exact counts),
 * what it turned away, and the next offset to consume. Pure: no clock (the caller passes `nowMs`), no I/O.
 *
 * Why the offset lives here. The state and the offset it has seen up to are one object and one
 * checkpoint, so they can never disagree. The watcher's order, per partition:
 *   1. apply() or reject() every message of a batch, in offset order;
 *   2. save toState() to the checkpoint store (its nextOffset = last processed + 1);
 *   3. only then commit that offset to Kafka.
 * On start or on assignment it restores the partition from the store and seeks to the stored
 * nextOffset, not to Kafka's committed offset: a crash between 2 and 3 leaves the commit behind the
 * checkpoint, and a crash before 2 leaves both behind the lost in-memory state. Either way the messages
 * after the checkpoint are read again into the state the checkpoint holds, so each offset is counted
 * exactly once. (No checkpoint yet: seek to the committed offset or the configured start.) As a second
 * guard apply() and reject() skip an offset below nextOffset, so a redelivery is not counted twice.
 *
 * One thing replay does not reproduce: an event is judged "future" against the caller's clock, so an
 * event refused as future before a crash may be accepted when replayed later. It is still counted once.
 *
 * Late and future at partition level are what the `all` series of the event's model version answered;
 * each series also keeps its own (the segment series judge lateness against their own watermarks).
 */
import { z } from 'zod';
import { isHeadroomError } from '../errors.js';
import { isRejectionReason } from '../events/index.js';
import type { Label, OutcomeEvent, RejectionReason, ScoredEvent } from '../events/index.js';
import { LabelWindows, PendingLabels, emptyJoinCounts, positiveProbability } from '../labels/index.js';
import type { JoinCounts, WaitingPrediction } from '../labels/index.js';
import { binaryLabelSign, signedMargin } from '../margin/index.js';
import type { Margins } from '../margin/index.js';
import { MarginWindows, sameWindowConfig, windowConfig } from '../sketch/index.js';
import type { AddOutcome, WindowConfig, WindowOptions, WindowState } from '../sketch/index.js';
import { badArgument, badState } from './fail.js';
import { SeriesRouter, routingConfig } from './routing.js';
import type { RoutingConfig, RoutingOptions, SeriesId } from './routing.js';

export const PARTITION_STATE_FORMAT = 'headroom-partition/1';

/** `*` names the settings of every model without an entry of its own (as in the config file). */
export const ANY_MODEL = '*';

/** What a model's series get; src/config's ModelConfig fits as it is. */
export interface ModelSettings extends RoutingOptions {
  /** event.model exactly, or ANY_MODEL. */
  readonly name: string;
  /** Settings of the model's windows; a restored state must have been saved with the same. */
  readonly window?: WindowOptions;
}

/** Delayed labels: partition p of `topic` (the outcome topic) joins partition p of the scored topic. */
export interface OutcomeSettings {
  readonly topic: string;
  /** Event-time distance within which a prediction and an outcome make a pair; entries expire after it. */
  readonly ttlMs: number;
  /** Waiting predictions, waiting outcomes and matched ids held at most; the oldest go first. */
  readonly maxPending: number;
}

export interface PartitionStateOptions {
  readonly topic: string;
  readonly partition: number;
  /** Events of a model with no entry here (and no ANY_MODEL entry) are counted as unwatched. */
  readonly models: readonly ModelSettings[];
  /** The outcome topic whose partition `partition` this state also consumes; absent: inline labels only. */
  readonly outcomes?: OutcomeSettings;
}

interface ResolvedModel extends RoutingConfig {
  readonly window: WindowConfig;
}

/** Exact counts of one series. `events` = the windows' added + late + future. */
export interface SeriesCounts {
  readonly events: number;
  /** Events with a signed margin (a label and a score with a sign). */
  readonly labelled: number;
  /** Labelled events with signed margin <= 0: the model was wrong (or on the boundary). */
  readonly wrong: number;
  /** Events whose score stated a probability (probability or logit): the label-free estimate needs all of them to. */
  readonly probabilityScored: number;
}

export interface PartitionSeries extends SeriesId, SeriesCounts {
  /** The live windows: read them (view()), do not add to them. */
  readonly windows: MarginWindows;
  /** Labelled predictions by prediction time; undefined until the first label. */
  readonly labels: LabelWindows | undefined;
}

export interface PartitionCounts {
  /** Decoded events of watched models applied. */
  readonly events: number;
  /** Decoded events of models without settings: the offset moves past them, nothing else. */
  readonly unwatched: number;
  readonly late: number;
  readonly future: number;
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  /** Events folded into `k=other`, per model and key. */
  readonly folded: Readonly<Record<string, Readonly<Record<string, number>>>>;
  /** Events of watched models that carried their label (counted at once, never waiting). */
  readonly labelledInline: number;
  /** Outcome messages decoded and offered to the join (rejected ones are in `rejected`). */
  readonly outcomes: number;
  readonly join: JoinCounts;
  /** Predictions and outcomes waiting for their partner now. */
  readonly waiting: { readonly predictions: number; readonly outcomes: number };
}

export type ApplyOutcome = AddOutcome | 'unwatched' | 'duplicate';

const count = z.number().int().nonnegative();
const offsetText = z.string().regex(/^(0|[1-9][0-9]*)$/, 'must be a non-negative whole number written in decimal');

const seriesSchema = z.object({
  model: z.string().min(1),
  version: z.string().min(1),
  segment: z.string().min(1),
  events: count,
  labelled: count,
  wrong: count,
  probabilityScored: count.optional(),
  windows: z.unknown(),
  labels: z.unknown().optional(),
});

export const partitionStateSchema = z.object({
  format: z.literal(PARTITION_STATE_FORMAT),
  topic: z.string().min(1),
  partition: count,
  nextOffset: offsetText.nullable(),
  watermarkMs: z.number().finite().nullable(),
  counts: z.object({
    events: count,
    unwatched: count,
    late: count,
    future: count,
    rejected: z.record(z.string().refine((k: string): boolean => isRejectionReason(k), 'is not a rejection reason'), count),
    folded: z.record(z.string(), z.record(z.string(), count)),
    labelledInline: count.optional(),
  }),
  series: z.array(seriesSchema),
  /** Present when an outcome topic is joined: its partition's next offset and the pending store, checkpointed together with the scored offset. */
  outcomes: z
    .object({ topic: z.string().min(1), nextOffset: offsetText.nullable(), decoded: count, pending: z.unknown() })
    .optional(),
});

/** The JSON form of a partition state, as checked on restore (the windows are checked by MarginWindows.fromState). */
export type PartitionStateJson = z.infer<typeof partitionStateSchema>;

/** What toState() writes: the same, with the windows' state typed. */
export type SavedPartitionState = Omit<PartitionStateJson, 'series'> & {
  series: (Omit<PartitionStateJson['series'][number], 'windows'> & { windows: WindowState })[];
};

interface OutcomeSide {
  readonly topic: string;
  next: bigint | null;
  decoded: number;
  pending: PendingLabels;
}

/**
 * Checks the shape of a stored state (not yet the windows inside, which fromState() checks). Throws
 * HR_ERR_STATE_INVALID naming the first bad field, e.g. `counts.rejected.nope`.
 */
export function parsePartitionState(value: unknown, path = 'state'): PartitionStateJson {
  const parsed = partitionStateSchema.safeParse(value);
  if (parsed.success) return parsed.data;
  const issue = parsed.error.issues[0];
  throw badState(issueField(issue?.path ?? [], path), issue?.message ?? 'is invalid');
}

class Series {
  events = 0;
  labelled = 0;
  wrong = 0;
  probabilityScored = 0;
  labels: LabelWindows | undefined = undefined;
  constructor(readonly windows: MarginWindows) {}

  /** One label, at the prediction's time; `toWindows` false: counted, but the prediction itself was not added (late or future). */
  label(signed: number, p: number | undefined, positive: boolean, timeMs: number, toWindows: boolean): void {
    this.labelled += 1;
    if (signed <= 0) this.wrong += 1;
    if (!toWindows) return;
    this.labels ??= new LabelWindows(this.windows.config);
    this.labels.add(signed, p, positive, timeMs, this.windows.watermarkMs ?? timeMs);
  }
}

/** The label as the calibration bins need it: is it the positive class? (False for class names: no bins there.) */
function isPositive(label: Label | undefined): boolean {
  return label !== undefined && binaryLabelSign(label) === 1;
}

/**
 * Offsets are 64-bit, beyond a double's exact range, so they are kept as bigint. The regex refuses what
 * BigInt() would quietly accept ("0x1f", " 12 "); both cost well under a microsecond an event.
 */
function checkOffset(offset: string): bigint {
  if (typeof offset !== 'string' || !/^(0|[1-9][0-9]*)$/.test(offset)) {
    throw badArgument('offset', 'must be a Kafka offset: a non-negative whole number as a decimal string', offset);
  }
  return BigInt(offset);
}

export class PartitionState {
  readonly topic: string;
  readonly partition: number;
  private readonly router: SeriesRouter<Series, ResolvedModel>;
  /** One scratch array for routing, so that applying an event allocates nothing (see SeriesRouter.route). */
  private readonly targets: Series[] = [];
  private next: bigint | null = null;
  private watermark: number | null = null;
  private events = 0;
  private unwatched = 0;
  private late = 0;
  private future = 0;
  private readonly rejected = new Map<RejectionReason, number>();
  private labelledInline = 0;
  private outcomeSide: OutcomeSide | undefined;

  constructor(options: PartitionStateOptions) {
    if (typeof options.topic !== 'string' || options.topic === '') throw badArgument('topic', 'must be a non-empty name', options.topic);
    if (!Number.isSafeInteger(options.partition) || options.partition < 0) {
      throw badArgument('partition', 'must be a non-negative whole number', options.partition);
    }
    this.topic = options.topic;
    this.partition = options.partition;
    if (!Array.isArray(options.models)) throw badArgument('models', 'must be an array of model settings', options.models);
    const byName = new Map<string, ResolvedModel>();
    options.models.forEach((m, i) => {
      if (typeof m?.name !== 'string' || m.name === '') throw badArgument(`models[${i}].name`, 'must be a model name or "*"', m?.name);
      if (byName.has(m.name)) throw badArgument(`models[${i}].name`, `repeats ${JSON.stringify(m.name)}`, m.name);
      byName.set(m.name, { ...routingConfig(m, `models[${i}].`), window: windowConfig(m.window ?? {}) });
    });
    const o = options.outcomes;
    if (o !== undefined) {
      if (typeof o.topic !== 'string' || o.topic === '' || o.topic === options.topic) throw badArgument('outcomes.topic', 'must be a topic name other than the scored topic', o.topic);
      this.outcomeSide = { topic: o.topic, next: null, decoded: 0, pending: new PendingLabels({ ttlMs: o.ttlMs, maxEntries: o.maxPending }) };
    }
    const any = byName.get(ANY_MODEL);
    this.router = new SeriesRouter<Series, ResolvedModel>(
      (model) => byName.get(model) ?? any,
      (_id, settings) => new Series(new MarginWindows(settings.window)),
    );
  }

  /** The settings a model's series get; undefined when it is not watched. */
  modelSettings(model: string): (RoutingConfig & { readonly window: WindowConfig }) | undefined {
    return this.router.settings(model);
  }

  /** The offset to consume next; null before the first message. */
  get nextOffset(): string | null {
    return this.next === null ? null : this.next.toString();
  }

  /** Newest event time accepted by an `all` series (segment series never run ahead of it); null before the first. */
  get watermarkMs(): number | null {
    return this.watermark;
  }

  /**
   * One decoded event with its margins, at `offset`. `nowMs` is the caller's clock, used only to refuse
   * events from the future. Returns what the event's `all` series did with it; 'unwatched' when its
   * model has no settings (counted, offset moved on); 'duplicate' (nothing changes) when the offset is
   * below nextOffset.
   */
  apply(event: ScoredEvent, margins: Margins, offset: string, nowMs: number): ApplyOutcome {
    const at = checkOffset(offset);
    if (this.next !== null && at < this.next) return 'duplicate';
    // Checked before anything changes: a throw from the windows halfway through the series would leave
    // some series counting the event and others not, with the offset not moved on.
    if (!(Number.isFinite(margins.confidence) && Number.isFinite(event.timeMs) && Number.isFinite(nowMs))) {
      throw badArgument('event', `needs a finite margin, event time and nowMs, got ${margins.confidence}, ${event.timeMs}, ${nowMs}`);
    }
    const targets = this.targets;
    const n = this.router.route(event, targets);
    if (n === 0) {
      this.unwatched += 1;
      this.next = at + 1n;
      return 'unwatched';
    }
    const signed = margins.signed;
    const p = positiveProbability(event.score);
    const probability = p === undefined ? 0 : 1;
    let outcome: AddOutcome = 'added';
    for (let i = 0; i < n; i += 1) {
      const series = targets[i] as Series;
      const result = series.windows.add(margins.confidence, event.timeMs, nowMs);
      if (i === 0) outcome = result;
      series.events += 1;
      series.probabilityScored += probability;
      if (signed !== undefined) series.label(signed, p, isPositive(event.label), event.timeMs, result === 'added');
    }
    targets.length = 0; // drop the references, so a series is not kept alive by the scratch array
    this.events += 1;
    if (signed !== undefined) this.labelledInline += 1;
    // Only with an outcome topic, and only for a prediction that can be labelled later: one test per event otherwise.
    else if (this.outcomeSide !== undefined && outcome === 'added' && event.label === undefined && margins.predicted !== undefined) this.wait(event);
    if (outcome === 'late') this.late += 1;
    else if (outcome === 'future') this.future += 1;
    else if (this.watermark === null || event.timeMs > this.watermark) this.watermark = event.timeMs;
    this.next = at + 1n;
    return outcome;
  }

  private wait(event: ScoredEvent): void {
    const all = this.router.idOfAll(event.model, event.version);
    const prediction: WaitingPrediction = {
      timeMs: event.timeMs,
      // The `all` series' own strings: a waiting prediction then shares model and version with every other.
      model: all?.model ?? event.model,
      version: all?.version ?? event.version,
      segment: event.segment,
      score: event.score,
    };
    const match = (this.outcomeSide as OutcomeSide).pending.addPrediction(event.id, prediction);
    if (match !== undefined) this.labelLater(match.prediction, match.label, true);
  }

  /** Feeds a matched pair to the prediction's series. False when the label does not fit the score. */
  private labelLater(prediction: WaitingPrediction, label: Label, counted: boolean): boolean {
    const signed = signedMargin(prediction.score, label);
    if (!signed.ok || signed.value === undefined) {
      if (counted) (this.outcomeSide as OutcomeSide).pending.countBadLabel();
      return false;
    }
    const targets = this.targets;
    const n = this.router.route(prediction as unknown as ScoredEvent, targets);
    const p = positiveProbability(prediction.score);
    const positive = isPositive(label);
    for (let i = 0; i < n; i += 1) (targets[i] as Series).label(signed.value, p, positive, prediction.timeMs, true);
    targets.length = 0;
    return true;
  }

  /** The outcome topic joined with this partition; undefined without one. */
  get outcomeTopic(): string | undefined {
    return this.outcomeSide?.topic;
  }

  /** The outcome partition's offset to consume next; null before its first message or without an outcome topic. */
  get outcomeNextOffset(): string | null {
    const next = this.outcomeSide?.next;
    return next === undefined || next === null ? null : next.toString();
  }

  /**
   * One decoded outcome at `offset` of the outcome partition. A label that does not fit its waiting
   * prediction's score is rejected (bad_label, counted with the other rejections) and the prediction
   * waits on. Returns what happened: 'matched', 'held' (waiting, a duplicate or unmatched: see the join
   * counts), 'rejected' or 'duplicate' (offset already consumed).
   */
  applyOutcome(outcome: OutcomeEvent, offset: string): 'matched' | 'held' | 'rejected' | 'duplicate' {
    const side = this.requireOutcomes();
    const at = checkOffset(offset);
    if (side.next !== null && at < side.next) return 'duplicate';
    if (!Number.isFinite(outcome.timeMs)) throw badArgument('outcome.timeMs', 'must be finite', outcome.timeMs);
    const partner = side.pending.partnerOf(outcome.id, outcome.timeMs);
    if (partner !== undefined) {
      const fits = signedMargin(partner.score, outcome.label);
      if (!fits.ok) {
        this.rejected.set('bad_label', (this.rejected.get('bad_label') ?? 0) + 1);
        side.next = at + 1n;
        return 'rejected';
      }
    }
    side.decoded += 1;
    const matched = side.pending.addOutcome(outcome.id, outcome.timeMs, outcome.label);
    side.next = at + 1n;
    if (matched === undefined) return 'held';
    this.labelLater(matched, outcome.label, false);
    return 'matched';
  }

  /** An outcome message turned away at `offset` of the outcome partition; false if a duplicate. */
  rejectOutcome(reason: RejectionReason, offset: string): boolean {
    if (!isRejectionReason(reason)) throw badArgument('reason', 'is not a rejection reason', reason);
    const side = this.requireOutcomes();
    const at = checkOffset(offset);
    if (side.next !== null && at < side.next) return false;
    this.rejected.set(reason, (this.rejected.get(reason) ?? 0) + 1);
    side.next = at + 1n;
    return true;
  }

  private requireOutcomes(): OutcomeSide {
    if (this.outcomeSide === undefined) throw badArgument('outcomes', `partition ${this.topic}[${this.partition}] has no outcome topic`);
    return this.outcomeSide;
  }

  /** A message turned away at `offset`: counted by reason, and the offset moves on past it. False if a duplicate. */
  reject(reason: RejectionReason, offset: string): boolean {
    if (!isRejectionReason(reason)) throw badArgument('reason', 'is not a rejection reason', reason);
    const at = checkOffset(offset);
    if (this.next !== null && at < this.next) return false;
    this.rejected.set(reason, (this.rejected.get(reason) ?? 0) + 1);
    this.next = at + 1n;
    return true;
  }

  counts(): PartitionCounts {
    const rejected: Partial<Record<RejectionReason, number>> = {};
    for (const [reason, n] of [...this.rejected].sort((a, b) => (a[0] < b[0] ? -1 : 1))) rejected[reason] = n;
    const side = this.outcomeSide;
    return {
      events: this.events,
      unwatched: this.unwatched,
      late: this.late,
      future: this.future,
      rejected,
      folded: this.router.folded(),
      labelledInline: this.labelledInline,
      outcomes: side?.decoded ?? 0,
      join: side === undefined ? emptyJoinCounts() : { ...side.pending.counts },
      waiting: side === undefined ? { predictions: 0, outcomes: 0 } : side.pending.waiting(),
    };
  }

  /** Every series in the order it was made. */
  series(): PartitionSeries[] {
    return this.router.series().map(({ id, series: s }) => ({
      ...id,
      events: s.events,
      labelled: s.labelled,
      wrong: s.wrong,
      probabilityScored: s.probabilityScored,
      windows: s.windows,
      labels: s.labels,
    }));
  }

  /** Versioned plain JSON; the checkpoint of this partition, offset included. */
  toState(): SavedPartitionState {
    const c = this.counts();
    return {
      format: PARTITION_STATE_FORMAT,
      topic: this.topic,
      partition: this.partition,
      nextOffset: this.nextOffset,
      watermarkMs: this.watermark,
      counts: {
        events: c.events,
        unwatched: c.unwatched,
        late: c.late,
        future: c.future,
        rejected: { ...c.rejected },
        folded: structuredClone(c.folded),
        labelledInline: c.labelledInline,
      },
      series: this.router.series().map(({ id, series: s }) => ({
        model: id.model,
        version: id.version,
        segment: id.segment,
        events: s.events,
        labelled: s.labelled,
        wrong: s.wrong,
        probabilityScored: s.probabilityScored,
        windows: s.windows.toState(),
        ...(s.labels === undefined ? {} : { labels: s.labels.toState() }),
      })),
      ...(this.outcomeSide === undefined
        ? {}
        : {
            outcomes: {
              topic: this.outcomeSide.topic,
              nextOffset: this.outcomeNextOffset,
              decoded: this.outcomeSide.decoded,
              // A deep copy: entries share score and segment objects with the live store.
              pending: structuredClone(this.outcomeSide.pending.toState()),
            },
          }),
    };
  }

  /**
   * A state saved by toState(), checked field by field (HR_ERR_STATE_INVALID names the field). The
   * options are today's configuration: topic and partition must match the state's, and so must each
   * model's window settings (else the restored windows could not be merged with new ones: change them
   * only together with removing the checkpoints). Segment keys, maxSeries and the model list may change:
   * series and folded counts of a model or key no longer configured are dropped, a new one starts empty.
   */
  static fromState(value: unknown, options: PartitionStateOptions): PartitionState {
    const s = parsePartitionState(value);
    const state = new PartitionState(options);
    if (s.topic !== state.topic) throw badState('state.topic', `is ${JSON.stringify(s.topic)}, expected ${JSON.stringify(state.topic)}`);
    if (s.partition !== state.partition) throw badState('state.partition', `is ${s.partition}, expected ${state.partition}`);
    state.next = s.nextOffset === null ? null : BigInt(s.nextOffset);
    state.watermark = s.watermarkMs;
    state.events = s.counts.events;
    state.unwatched = s.counts.unwatched;
    state.late = s.counts.late;
    state.future = s.counts.future;
    state.labelledInline = s.counts.labelledInline ?? 0;
    for (const [reason, n] of Object.entries(s.counts.rejected)) state.rejected.set(reason as RejectionReason, n);
    if (s.outcomes !== undefined && options.outcomes !== undefined) {
      // Without an outcome topic in today's options the saved join is dropped: nothing would feed it.
      if (s.outcomes.topic !== options.outcomes.topic) {
        throw badState('state.outcomes.topic', `is ${JSON.stringify(s.outcomes.topic)}, expected ${JSON.stringify(options.outcomes.topic)}; restore with the outcome topic it was saved with, or remove the checkpoint`);
      }
      const side = state.outcomeSide as OutcomeSide;
      side.next = s.outcomes.nextOffset === null ? null : BigInt(s.outcomes.nextOffset);
      side.decoded = s.outcomes.decoded;
      side.pending = PendingLabels.fromState(structuredClone(s.outcomes.pending), { ttlMs: options.outcomes.ttlMs, maxEntries: options.outcomes.maxPending }, 'state.outcomes.pending');
    }
    for (const [model, keys] of Object.entries(s.counts.folded)) {
      for (const [key, n] of Object.entries(keys)) state.router.restoreFolded(model, key, n);
    }
    s.series.forEach((entry, i) => {
      const path = `state.series[${i}]`;
      const settings = state.router.settings(entry.model);
      if (settings === undefined) return; // the model is no longer watched
      let windows: MarginWindows;
      try {
        windows = MarginWindows.fromState(entry.windows, `${path}.windows`);
      } catch (error) {
        if (isHeadroomError(error)) throw badState(`${path}.windows`, `is invalid (${error.message})`, error);
        throw error;
      }
      if (!sameWindowConfig(windows.config, settings.window)) {
        throw badState(`${path}.windows.config`, `differs from the window settings of model ${JSON.stringify(entry.model)}; restore with the settings it was saved with, or remove the checkpoint to start this partition afresh`);
      }
      const w = windows.counters();
      if (w.added + w.late + w.future !== entry.events) {
        throw badState(`${path}.events`, `is ${entry.events} but its windows hold ${w.added + w.late + w.future} events`);
      }
      if (entry.wrong > entry.labelled || entry.labelled > entry.events) throw badState(`${path}.labelled`, 'must satisfy wrong <= labelled <= events');
      const series = new Series(windows);
      series.events = entry.events;
      series.labelled = entry.labelled;
      series.wrong = entry.wrong;
      series.probabilityScored = entry.probabilityScored ?? 0;
      if (entry.labels !== undefined) series.labels = LabelWindows.fromState(entry.labels, windows.config, `${path}.labels`);
      try {
        state.router.restore({ model: entry.model, version: entry.version, segment: entry.segment }, series);
      } catch (error) {
        if (isHeadroomError(error)) throw badState(path, error.message.replace(/^[^:]*: /, ''), error);
        throw error;
      }
    });
    return state;
  }
}

function issueField(path: readonly PropertyKey[], root: string): string {
  let out = root;
  for (const p of path) out += typeof p === 'number' ? `[${p}]` : `.${String(p)}`;
  return out;
}

export interface SeriesView extends SeriesId, SeriesCounts {
  /** A fresh merged copy: the partitions' windows are not changed, and later changes to them do not show. */
  readonly windows: MarginWindows;
  /** The partitions' label windows merged (a fresh copy); undefined when no partition has a label yet. */
  readonly labels: LabelWindows | undefined;
  /**
   * The oldest of the partitions' own watermarks for this series (each partition judges lateness
   * against its own): buckets ending before this minus the lateness can gain no more events from any
   * partition that has seen the series. Null before the first event.
   */
  readonly settledWatermarkMs: number | null;
}

export interface MergedView {
  readonly partitions: number;
  readonly counts: PartitionCounts;
  /** The newest watermark of the partitions. */
  readonly watermarkMs: number | null;
  /** One entry per series, sorted by model, version and segment. */
  readonly series: readonly SeriesView[];
}

/**
 * The read view over several partitions (for the API and the metrics): each series' windows merged
 * (MarginWindows.merge) and every count added, so counts equal one stream's exactly. Off the hot path.
 */
export function mergeView(states: readonly PartitionState[]): MergedView {
  type Merged = { -readonly [K in keyof SeriesView]: SeriesView[K] };
  const byId = new Map<string, Merged>();
  let events = 0;
  let unwatched = 0;
  let late = 0;
  let future = 0;
  let watermarkMs: number | null = null;
  const rejected: Partial<Record<RejectionReason, number>> = {};
  const folded: Record<string, Record<string, number>> = {};
  let labelledInline = 0;
  let outcomes = 0;
  const join = emptyJoinCounts();
  const waiting = { predictions: 0, outcomes: 0 };
  for (const state of states) {
    const c = state.counts();
    labelledInline += c.labelledInline;
    outcomes += c.outcomes;
    for (const k of Object.keys(join) as (keyof JoinCounts)[]) join[k] += c.join[k];
    waiting.predictions += c.waiting.predictions;
    waiting.outcomes += c.waiting.outcomes;
    events += c.events;
    unwatched += c.unwatched;
    late += c.late;
    future += c.future;
    for (const [reason, n] of Object.entries(c.rejected) as [RejectionReason, number][]) rejected[reason] = (rejected[reason] ?? 0) + n;
    for (const [model, keys] of Object.entries(c.folded)) {
      const into = (folded[model] ??= {});
      for (const [key, n] of Object.entries(keys)) into[key] = (into[key] ?? 0) + n;
    }
    if (state.watermarkMs !== null && (watermarkMs === null || state.watermarkMs > watermarkMs)) watermarkMs = state.watermarkMs;
    for (const s of state.series()) {
      // NUL cannot occur in names (the decoder refuses control characters), so the key is unambiguous.
      const key = `${s.model}\u0000${s.version}\u0000${s.segment}`;
      let view = byId.get(key);
      if (view === undefined) {
        view = { model: s.model, version: s.version, segment: s.segment, events: 0, labelled: 0, wrong: 0, probabilityScored: 0, windows: new MarginWindows(s.windows.config), labels: undefined, settledWatermarkMs: null };
        byId.set(key, view);
      }
      const w = s.windows.watermarkMs;
      if (w !== null) view.settledWatermarkMs = view.settledWatermarkMs === null ? w : Math.min(view.settledWatermarkMs, w);
      view.events += s.events;
      view.labelled += s.labelled;
      view.wrong += s.wrong;
      view.probabilityScored += s.probabilityScored;
      view.windows.merge(s.windows);
      if (s.labels !== undefined) (view.labels ??= new LabelWindows(s.windows.config)).merge(s.labels);
    }
  }
  const series = [...byId.values()].sort(compareIds);
  return {
    partitions: states.length,
    counts: { events, unwatched, late, future, rejected, folded, labelledInline, outcomes, join, waiting },
    watermarkMs,
    series,
  };
}

function compareIds(a: SeriesId, b: SeriesId): number {
  return cmp(a.model, b.model) || cmp(a.version, b.version) || cmp(a.segment, b.segment);
}

function cmp(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

