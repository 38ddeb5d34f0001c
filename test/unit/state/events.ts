/** Scored events for the state tests, and a seeded stream of them. */
import type { ScoredEvent } from '../../../src/events/index.js';
import { measureMargins } from '../../../src/margin/index.js';
import type { Margins } from '../../../src/margin/index.js';
import { rng } from '../events/prng.js';

export const T0 = Date.UTC(2026, 11, 1);
export const MIN = 60_000;

export function scored(p: number, options: { model?: string; version?: string; timeMs?: number; segment?: Record<string, string>; label?: 0 | 1 } = {}): ScoredEvent {
  return {
    id: 'e',
    model: options.model ?? 'fraud',
    version: options.version ?? 'v1',
    score: { kind: 'probability', p },
    timeMs: options.timeMs ?? T0,
    label: options.label,
    segment: options.segment ?? {},
  };
}

export function marginsOf(event: ScoredEvent): Margins {
  const m = measureMargins(event.score, event.label);
  if (!m.ok) throw new Error(`test event has a bad label: ${m.detail}`);
  return m;
}

export type Message = { readonly kind: 'event'; readonly event: ScoredEvent } | { readonly kind: 'reject'; readonly reason: 'not_json' | 'bad_time' };

/**
 * `n` messages in offset order: mostly events of two models and versions with segments line (8 values)
 * and shift (3), labelled half the time, times drifting forward with some late stragglers; 1 in 20 rejected.
 */
export function stream(seed: number, n: number): Message[] {
  const r = rng(seed);
  const out: Message[] = [];
  let t = T0;
  for (let i = 0; i < n; i += 1) {
    if (r.chance(0.05)) {
      out.push({ kind: 'reject', reason: r.chance(0.5) ? 'not_json' : 'bad_time' });
      continue;
    }
    t += r.int(600);
    const timeMs = r.chance(0.03) ? t - r.int(10 * MIN) : t;
    const segment: Record<string, string> = {};
    if (r.chance(0.9)) segment.line = String(r.int(8));
    if (r.chance(0.7)) segment.shift = r.pick(['day', 'night', 'late']);
    out.push({
      kind: 'event',
      event: scored(Math.round(r.next() * 1000) / 1000, {
        model: r.chance(0.7) ? 'fraud' : 'churn',
        version: r.chance(0.8) ? 'v1' : 'v2',
        timeMs,
        segment,
        ...(r.chance(0.5) ? { label: r.chance(0.5) ? 1 : 0 } : {}),
      }),
    });
  }
  return out;
}
