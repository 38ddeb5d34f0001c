/** Scored events for the reference and CLI tests, made through the real decoder so they are valid ones. */
import { validateScoredEvent } from '../../../src/events/index.js';
import type { ScoredEvent } from '../../../src/events/index.js';
import { rng } from '../events/prng.js';

export const MODEL = 'parcel-damage';
export const VERSION = '2026.11.3';
export const CREATED_AT = '2026-12-01T10:00:00.000Z';
export const T0 = Date.UTC(2026, 10, 20, 6, 0, 0);

export function event(wire: Record<string, unknown>): ScoredEvent {
  const result = validateScoredEvent({ id: 'p-1', model: MODEL, version: VERSION, time: T0, ...wire });
  if (!result.ok) throw new Error(`test event is invalid: ${result.reason} ${result.field} ${result.detail}`);
  return result.event;
}

export function marginEvent(value: number, extra: Record<string, unknown> = {}): ScoredEvent {
  return event({ score: { kind: 'margin', value }, ...extra });
}

export function probabilityEvent(p: number, label?: number | string, extra: Record<string, unknown> = {}): ScoredEvent {
  return event({ score: { kind: 'probability', p }, ...(label === undefined ? {} : { label }), ...extra });
}

/** Repeatable data without fixtures (mulberry32, shared with the other unit tests). */
export function seeded(seed: number): () => number {
  return rng(seed).next;
}

/**
 * A parcel-inspection stream: sorting lines 1-3, probability scores with atoms at p = 0 and p = 1 (the
 * model is certain) and at p = 0.5 (exactly undecided), labels drawn from the score. `shift` moves
 * probabilities toward 0.5, as when parcels unlike the training data arrive.
 */
export function parcelEvents(n: number, seed: number, shift = 0): ScoredEvent[] {
  const random = seeded(seed);
  const out: ScoredEvent[] = [];
  for (let i = 0; i < n; i++) {
    const line = String(1 + Math.floor(random() * 3));
    const u = random();
    let p: number;
    if (u < 0.15) p = random() < 0.5 ? 0 : 1;
    else if (u < 0.18) p = 0.5;
    else {
      const sure = random() ** (line === '3' ? 0.6 : 0.3);
      p = 0.5 + (random() < 0.5 ? -1 : 1) * 0.5 * sure * (1 - shift);
    }
    const label = random() < p ? 1 : 0;
    out.push(event({ id: `p-${i}`, time: T0 + i * 1000, score: { kind: 'probability', p }, label, segment: { line } }));
  }
  return out;
}

export { caught, caughtAsync } from '../caught.js';
