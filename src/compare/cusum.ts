import { z } from 'zod';
import { argumentError } from './arguments.js';

/**
 * Bernoulli CUSUM on the low-margin indicator (Page's CUSUM of the log-likelihood ratio of
 * Bernoulli(p1) against Bernoulli(p0)): each event adds
 *
 *     x·ln(p1/p0) + (1 − x)·ln((1 − p1)/(1 − p0)),   x = 1 if its margin is below θ,
 *
 * S = max(0, S + increment), and the chart signals when S >= threshold. Evidence adds up event by
 * event instead of being diluted over a window's length, and the reflection at 0 stops a long quiet
 * stretch from banking credit against a later rise.
 *
 * Order matters: S is reflected at 0, so the same k lows among n events give a different S depending on
 * where they fall. There is therefore no update from counts alone; updates take events in order
 * (`update`, `updateMany`) or runs of equal events (`updateRun`, exact because a run has one order).
 */

export const CUSUM_STATE_FORMAT = 'headroom-cusum/1';

export interface BernoulliCusumConfig {
  /** In-control rate of low margins: the reference's low-margin share at θ. In (0, 1). */
  readonly p0: number;
  /** Out-of-control rate to detect, e.g. 2·p0. In (0, 1), different from p0. */
  readonly p1: number;
  /** Decision threshold h > 0; bernoulliCusumArl gives the false-alarm rate it implies. */
  readonly threshold: number;
  /** Restart from 0 after a signal (default), or stay above the threshold until the evidence fades. */
  readonly resetOnSignal?: boolean;
}

/** Plain JSON; restore with BernoulliCusum.restore. */
export interface BernoulliCusumState {
  readonly format: typeof CUSUM_STATE_FORMAT;
  readonly p0: number;
  readonly p1: number;
  readonly threshold: number;
  readonly resetOnSignal: boolean;
  /** S after the last event (after the reset, if it signalled and resets). */
  readonly statistic: number;
  readonly events: number;
  /** Events at which S reached the threshold from below. */
  readonly signals: number;
  /** 1-based event number of the latest signal, or null. */
  readonly lastSignalEvent: number | null;
}

const stateSchema = z.object({
  format: z.literal(CUSUM_STATE_FORMAT),
  p0: z.number(),
  p1: z.number(),
  threshold: z.number(),
  resetOnSignal: z.boolean(),
  statistic: z.number().min(0),
  events: z.number().int().min(0),
  signals: z.number().int().min(0),
  lastSignalEvent: z.number().int().min(1).nullable(),
});

export class BernoulliCusum {
  readonly p0: number;
  readonly p1: number;
  readonly threshold: number;
  readonly resetOnSignal: boolean;
  /** Increment for an event below θ, ln(p1/p0). */
  readonly lowIncrement: number;
  /** Increment for an event at or above θ, ln((1 − p1)/(1 − p0)). */
  readonly highIncrement: number;
  #statistic = 0;
  #events = 0;
  #signals = 0;
  #lastSignalEvent: number | null = null;
  #above = false;

  private constructor(config: BernoulliCusumConfig) {
    const { p0, p1, threshold } = config;
    if (!(p0 > 0 && p0 < 1)) {
      throw argumentError(
        `CUSUM p0 must be in (0, 1), got ${p0}; a reference with no low margins at θ cannot anchor the chart: ` +
          'raise θ or floor p0 (for example at the upper end of the reference share\'s Wilson interval)',
        { p0 },
      );
    }
    if (!(p1 > 0 && p1 < 1) || p1 === p0) throw argumentError(`CUSUM p1 must be in (0, 1) and differ from p0, got ${p1}`, { p0, p1 });
    if (!(threshold > 0 && Number.isFinite(threshold))) {
      throw argumentError(`CUSUM threshold must be positive and finite, got ${threshold}`, { threshold });
    }
    this.p0 = p0;
    this.p1 = p1;
    this.threshold = threshold;
    this.resetOnSignal = config.resetOnSignal ?? true;
    this.lowIncrement = Math.log(p1 / p0);
    this.highIncrement = Math.log1p(-p1) - Math.log1p(-p0);
  }

  static create(config: BernoulliCusumConfig): BernoulliCusum {
    return new BernoulliCusum(config);
  }

  static restore(state: unknown): BernoulliCusum {
    const parsed = stateSchema.safeParse(state);
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      throw argumentError(`CUSUM state is invalid at ${issue?.path.join('.') || '(root)'}: ${issue?.message ?? 'unknown'}`);
    }
    const s = parsed.data;
    const chart = new BernoulliCusum(s);
    if (s.signals > 0 !== (s.lastSignalEvent !== null) || (s.lastSignalEvent ?? 0) > s.events) {
      throw argumentError('CUSUM state is inconsistent: lastSignalEvent does not match signals and events', { state });
    }
    chart.#statistic = s.statistic;
    chart.#events = s.events;
    chart.#signals = s.signals;
    chart.#lastSignalEvent = s.lastSignalEvent;
    chart.#above = !s.resetOnSignal && s.statistic >= s.threshold;
    return chart;
  }

  get statistic(): number {
    return this.#statistic;
  }

  get events(): number {
    return this.#events;
  }

  get signals(): number {
    return this.#signals;
  }

  /** Only without reset: S is at or above the threshold now (an alert would be firing). */
  get firing(): boolean {
    return this.#above;
  }

  /** Feeds one event; true when S is at or above the threshold after it (before any reset). */
  update(low: boolean): boolean {
    this.#events++;
    const next = this.#statistic + (low ? this.lowIncrement : this.highIncrement);
    this.#statistic = next > 0 ? next : 0;
    if (this.#statistic < this.threshold) {
      this.#above = false;
      return false;
    }
    if (!this.#above) {
      this.#signals++;
      this.#lastSignalEvent = this.#events;
    }
    if (this.resetOnSignal) this.#statistic = 0;
    else this.#above = true;
    return true;
  }

  /** Feeds events in order; returns how many of them left S at or above the threshold. */
  updateMany(lows: Iterable<boolean>): number {
    let hits = 0;
    for (const low of lows) if (this.update(low)) hits++;
    return hits;
  }

  /**
   * Feeds `count` equal events. The same arithmetic as `count` calls of update, event by event (a
   * closed form would round differently from the loop and let replay and watch disagree), but a run
   * that can only push S down stops early once S has reached 0.
   */
  updateRun(low: boolean, count: number): number {
    if (!(Number.isInteger(count) && count >= 0)) throw argumentError(`run length must be a non-negative integer, got ${count}`, { count });
    const increment = low ? this.lowIncrement : this.highIncrement;
    let hits = 0;
    for (let i = 0; i < count; i++) {
      if (increment < 0 && this.#statistic === 0) {
        this.#events += count - i;
        break;
      }
      if (this.update(low)) hits++;
    }
    return hits;
  }

  toState(): BernoulliCusumState {
    return {
      format: CUSUM_STATE_FORMAT,
      p0: this.p0,
      p1: this.p1,
      threshold: this.threshold,
      resetOnSignal: this.resetOnSignal,
      statistic: this.#statistic,
      events: this.#events,
      signals: this.#signals,
      lastSignalEvent: this.#lastSignalEvent,
    };
  }
}
