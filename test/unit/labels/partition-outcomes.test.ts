import { describe, expect, it } from 'vitest';
import { validateOutcomeEvent, validateScoredEvent } from '../../../src/events/index.js';
import { measureMargins } from '../../../src/margin/index.js';
import { PartitionState } from '../../../src/state/index.js';

const T0 = Date.UTC(2026, 11, 1, 10);
const NOW = T0 + 3_600_000;
const OPTIONS = { topic: 'scores', partition: 0, models: [{ name: '*' }], outcomes: { topic: 'outcomes', ttlMs: 600_000, maxPending: 1000 } };

function scored(id: string, p: number, timeMs: number) {
  const r = validateScoredEvent({ id, model: 'parcel-damage', version: 'v1', time: timeMs, score: { kind: 'probability', p } });
  if (!r.ok) throw new Error(r.reason);
  return r.event;
}

function outcome(id: string, label: unknown, timeMs: number) {
  const r = validateOutcomeEvent({ id, label, time: timeMs });
  if (!r.ok) throw new Error(r.reason);
  return r.event;
}

function apply(s: PartitionState, id: string, p: number, t: number, offset: string): void {
  const e = scored(id, p, t);
  const m = measureMargins(e.score, e.label);
  if (!m.ok) throw new Error(m.reason);
  s.apply(e, m, offset, NOW);
}

describe('PartitionState with an outcome topic', () => {
  it('labels a prediction from its outcome, rejects a label that does not fit, and survives a checkpoint round trip', () => {
    const s = new PartitionState(OPTIONS);
    apply(s, 'a', 0.9, T0, '0');
    apply(s, 'b', 0.3, T0 + 1000, '1');
    expect(s.applyOutcome(outcome('a', 0, T0 + 5000), '0')).toBe('matched'); // wrong: p 0.9 for a negative
    expect(s.applyOutcome(outcome('b', 'maybe', T0 + 6000), '1')).toBe('rejected');
    expect(s.applyOutcome(outcome('b', 'maybe', T0 + 6000), '1')).toBe('duplicate'); // offset already consumed
    expect(s.outcomeNextOffset).toBe('2');
    const restored = PartitionState.fromState(JSON.parse(JSON.stringify(s.toState())), OPTIONS);
    expect(restored.outcomeNextOffset).toBe('2');
    expect(restored.applyOutcome(outcome('b', 0, T0 + 7000), '2')).toBe('matched'); // right: p 0.3 for a negative
    const all = restored.series().find((x) => x.segment === 'all');
    expect([all?.labelled, all?.wrong]).toEqual([2, 1]);
    expect(restored.counts()).toMatchObject({ outcomes: 2, rejected: { bad_label: 1 }, join: { matched: 2 }, waiting: { predictions: 0, outcomes: 0 } });
    const view = all?.labels?.view(3_600_000, all.windows.watermarkMs).summary;
    expect([view?.count, view?.wrong]).toEqual([2, 1]);
  });

  it('refuses a checkpoint saved with another outcome topic, naming the field', () => {
    const s = new PartitionState(OPTIONS);
    apply(s, 'a', 0.9, T0, '0');
    expect(() => PartitionState.fromState(s.toState(), { ...OPTIONS, outcomes: { ...OPTIONS.outcomes, topic: 'other' } })).toThrow(/state\.outcomes\.topic/);
  });
});
