/**
 * One lifecycle for every alert rule. A rule turns its figures into a Reading: a value, a fire level and
 * a lower clear level, and a verdict (above the fire level, at or below the clear level, in between, or
 * unknown: too few events to say). The phases:
 *
 *     calm ──above──▶ brewing ──above for holdMs──▶ firing ──at/below clear──▶ easing
 *      ▲                 │                            ▲                         │
 *      │              not above                       └──── above clear ────────┤
 *      │                 ▼                                                      │
 *      ├────────────── calm                       at/below clear for clearMs    │
 *      │                                                                        ▼
 *      └──────────────────── cooldownMs after it started resting ─────────── resting
 *
 * - Hold: the fire condition must be seen at every evaluation from the one that started brewing to one
 *   at least holdMs later. Anything else (including 'unknown') sends it back to calm: no evidence is not
 *   evidence of a rise.
 * - Hysteresis: a firing alert starts easing only at or below the clear level, which sits under the
 *   fire level, so a figure wobbling around the fire level does not flap. While easing, any reading
 *   above the clear level sends it back to firing; it clears (to resting) only after the clear condition
 *   has been seen for clearMs. 'unknown' neither clears nor re-fires: the hold simply cannot complete.
 * - Cooldown: resting ignores every reading until cooldownMs have passed, then it is calm again and the
 *   same evaluation may start brewing. So a new rise fires at the earliest cooldownMs + holdMs after the
 *   last clear.
 * Zero holds pass through the phase in the same evaluation, so every transition is still reported.
 *
 * Times are the caller's `nowMs` (the evaluation time; see book.ts for which clock). Every transition is
 * returned as an AlertTransition with an id that is a pure function of the rule, the series, the
 * transition's sequence number and its target phase, so a notifier can use it as an idempotency key: an
 * evaluation repeated after a crash (from the last saved state) yields the same ids.
 */

export const ALERT_PHASES = ['calm', 'brewing', 'firing', 'easing', 'resting'] as const;
export type AlertPhase = (typeof ALERT_PHASES)[number];

export type Verdict = 'above' | 'between' | 'below' | 'unknown';

export interface Reading {
  readonly verdict: Verdict;
  /** The figure compared (a Wilson bound, a CUSUM statistic, PSI or KS D); null when there is none. */
  readonly value: number | null;
  readonly fireLevel: number | null;
  readonly clearLevel: number | null;
  /** Why the verdict is 'unknown', for logs and the API. */
  readonly reason?: string;
}

/** value > fire → above; value <= clear → below; in between → between. */
export function verdictOf(value: number, fireLevel: number, clearLevel: number): Verdict {
  if (value > fireLevel) return 'above';
  return value <= clearLevel ? 'below' : 'between';
}

export interface LifecycleTiming {
  readonly holdMs: number;
  readonly clearMs: number;
  readonly cooldownMs: number;
}

export interface LifecycleState {
  readonly phase: AlertPhase;
  /** When the phase was entered; null for calm before any evaluation. */
  readonly sinceMs: number | null;
  /** Transitions made so far: the next one is number seq + 1. */
  readonly seq: number;
}

export const INITIAL_LIFECYCLE: LifecycleState = Object.freeze({ phase: 'calm', sinceMs: null, seq: 0 });

export interface SeriesRef {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
}

export interface AlertTransition {
  /** Stable idempotency key: see transitionId. */
  readonly id: string;
  readonly rule: string;
  readonly series: SeriesRef;
  /** 1-based number of this transition for this rule and series. */
  readonly seq: number;
  readonly from: AlertPhase;
  readonly to: AlertPhase;
  readonly at: number;
  readonly value: number | null;
  /** The level the value was compared with: the fire level on the way up, the clear level on the way down. */
  readonly threshold: number | null;
}

export interface StepResult {
  readonly state: LifecycleState;
  readonly transitions: readonly AlertTransition[];
}

/** Advances one alert by one evaluation. Pure: the same state, reading and nowMs give the same result. */
export function stepLifecycle(
  state: LifecycleState,
  reading: Reading,
  timing: LifecycleTiming,
  nowMs: number,
  who: { readonly rule: string; readonly series: SeriesRef },
): StepResult {
  const transitions: AlertTransition[] = [];
  let { phase, sinceMs, seq } = state;
  const move = (to: AlertPhase, threshold: number | null): void => {
    seq += 1;
    transitions.push({ id: transitionId(who.rule, who.series, seq, to), rule: who.rule, series: who.series, seq, from: phase, to, at: nowMs, value: reading.value, threshold });
    phase = to;
    sinceMs = nowMs;
  };
  const held = (ms: number): boolean => nowMs - (sinceMs ?? nowMs) >= ms;
  const v = reading.verdict;
  // At most one pass through the cycle per evaluation; each branch either moves forward or stops.
  for (let guard = 0; guard < ALERT_PHASES.length + 1; guard++) {
    const before = transitions.length;
    switch (phase) {
      case 'calm':
        if (v === 'above') move('brewing', reading.fireLevel);
        break;
      case 'brewing':
        if (v !== 'above') move('calm', reading.fireLevel);
        else if (held(timing.holdMs)) move('firing', reading.fireLevel);
        break;
      case 'firing':
        if (v === 'below') move('easing', reading.clearLevel);
        break;
      case 'easing':
        if (v === 'above' || v === 'between') move('firing', reading.clearLevel);
        else if (v === 'below' && held(timing.clearMs)) move('resting', reading.clearLevel);
        break;
      case 'resting':
        if (held(timing.cooldownMs)) move('calm', null);
        break;
    }
    if (transitions.length === before) break;
  }
  if (sinceMs === null) sinceMs = nowMs;
  return { state: { phase, sinceMs, seq }, transitions };
}

/**
 * `hr-` + 16 hex digits of FNV-1a 64 over rule, model, version, segment, seq and target phase, joined
 * by NUL (which none of them may hold). Not the time: an evaluation repeated after a restart may run at
 * a different nowMs, and it is still the same transition.
 */
export function transitionId(rule: string, series: SeriesRef, seq: number, to: AlertPhase): string {
  return `hr-${fnv1a64Hex([rule, series.model, series.version, series.segment, String(seq), to].join('\u0000'))}`;
}

/** FNV-1a, 64 bits, over the UTF-8 bytes; 16 hex digits. */
export function fnv1a64Hex(text: string): string {
  let hash = 0xcbf29ce484222325n;
  for (const byte of new TextEncoder().encode(text)) {
    hash ^= BigInt(byte);
    hash = (hash * 0x100000001b3n) & 0xffffffffffffffffn;
  }
  return hash.toString(16).padStart(16, '0');
}
