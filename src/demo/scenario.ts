/**
 * The demo's invented scenario: parcels on sorting lines 1-3, scored by `parcel-damage` (parcels.ts),
 * arriving at a steady rate. At `driftAfterMs` of scenario time line 3's camera starts to fog up; over
 * `driftRampMs` the fog thickens to FOG_MAX and stays, so line 3's margins collapse while lines 1 and 2
 * carry on as before. Pure and seeded: the same options give the same events, however the caller slices
 * time (events are drawn one by one in time order from one generator).
 */
import { HeadroomError } from '../errors.js';
import { drawParcel, PARCEL_MODEL, PARCEL_VERSION, seededRandom, surenessExponent } from './parcels.js';

/**
 * Line 3's sureness exponent goes from 1.2 to 1.2 + FOG_MAX = 4.2: its low-margin share at θ = 0.25
 * from 0.25^(1/1.2) = 0.31 to 0.25^(1/4.2) = 0.72, at θ = 0.1 from 0.15 to 0.58.
 */
export const FOG_MAX = 3;
export const DRIFTING_LINE = '3';

export const SCENARIO_DEFAULTS = Object.freeze({
  seed: 1,
  /** All three lines together. */
  eventsPerSecond: 20,
  driftAfterMs: 3 * 60_000,
  driftRampMs: 2 * 60_000,
});

/** At most this many events a second: the embedded demo runs them all in one process. */
export const MAX_EVENTS_PER_SECOND = 5_000;

export interface ScenarioOptions {
  readonly seed: number;
  readonly eventsPerSecond: number;
  /** Scenario time 00:00, epoch ms. */
  readonly startMs: number;
  /** When line 3's camera starts to fog up, after the start. */
  readonly driftAfterMs: number;
  /** How long the fog takes to reach FOG_MAX. */
  readonly driftRampMs: number;
}

/** One parcel's scored event in the wire format (DESIGN "Wire format"), and the line it came from. */
export interface ScenarioEvent {
  readonly line: string;
  readonly timeMs: number;
  readonly wire: {
    readonly id: string;
    readonly model: string;
    readonly version: string;
    readonly time: string;
    readonly score: { readonly kind: 'probability'; readonly p: number };
    readonly segment: { readonly line: string };
  };
}

function bad(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_DEMO_ARGUMENT', `${option} ${detail}`, { context: { option, value } });
}

export function checkScenarioOptions(o: ScenarioOptions): ScenarioOptions {
  if (!Number.isSafeInteger(o.seed) || o.seed < 0) throw bad('seed', 'must be a whole number >= 0', o.seed);
  if (!(o.eventsPerSecond > 0 && o.eventsPerSecond <= MAX_EVENTS_PER_SECOND)) throw bad('eventsPerSecond', `must be in (0, ${MAX_EVENTS_PER_SECOND}]`, o.eventsPerSecond);
  if (!Number.isSafeInteger(o.startMs)) throw bad('startMs', 'must be a whole number of epoch milliseconds', o.startMs);
  if (!(Number.isFinite(o.driftAfterMs) && o.driftAfterMs >= 0)) throw bad('driftAfterMs', 'must be >= 0', o.driftAfterMs);
  if (!(Number.isFinite(o.driftRampMs) && o.driftRampMs >= 0)) throw bad('driftRampMs', 'must be >= 0', o.driftRampMs);
  return o;
}

/** Fog on `line`'s camera at scenario time `timeMs`: 0 before the drift, then rising linearly to FOG_MAX. */
export function fogAt(o: ScenarioOptions, line: string, timeMs: number): number {
  if (line !== DRIFTING_LINE) return 0;
  const into = timeMs - o.startMs - o.driftAfterMs;
  if (into < 0) return 0;
  return o.driftRampMs === 0 ? FOG_MAX : FOG_MAX * Math.min(1, into / o.driftRampMs);
}

/** The low-margin share at θ the scenario draws from on `line` at `timeMs` (before rounding p to 4 decimals). */
export function expectedShare(o: ScenarioOptions, line: string, timeMs: number, theta: number): number {
  return theta ** (1 / surenessExponent(line, fogAt(o, line, timeMs)));
}

export class ParcelScenario {
  readonly options: ScenarioOptions;
  private readonly random: () => number;
  private next = 0;

  constructor(options: ScenarioOptions) {
    this.options = checkScenarioOptions(options);
    this.random = seededRandom(options.seed);
  }

  /** Time of the i-th parcel: evenly spaced, so any slicing of time sees the same events. */
  timeOf(i: number): number {
    return this.options.startMs + Math.floor((i * 1000) / this.options.eventsPerSecond);
  }

  /** Events handed out so far. */
  get produced(): number {
    return this.next;
  }

  /** The events with a time before `untilMs` not handed out yet, oldest first. */
  until(untilMs: number): ScenarioEvent[] {
    const out: ScenarioEvent[] = [];
    const o = this.options;
    for (let t = this.timeOf(this.next); t < untilMs; t = this.timeOf(this.next)) {
      const { line, p } = drawParcel(this.random, (l) => fogAt(o, l, t));
      out.push({
        line,
        timeMs: t,
        wire: {
          id: `demo-${o.seed}-${this.next}`,
          model: PARCEL_MODEL,
          version: PARCEL_VERSION,
          time: new Date(t).toISOString(),
          score: { kind: 'probability', p },
          segment: { line },
        },
      });
      this.next += 1;
    }
    return out;
  }
}

/** `mm:ss` (or `h:mm:ss`) of a span of scenario time, as the demo prints it. */
export function clockText(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  const hh = Math.floor(s / 3600);
  const mm = String(Math.floor((s % 3600) / 60)).padStart(2, '0');
  const ss = String(s % 60).padStart(2, '0');
  return hh > 0 ? `${hh}:${mm}:${ss}` : `${mm}:${ss}`;
}
