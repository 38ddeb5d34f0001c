import { describe, expect, it } from 'vitest';
import { PendingLabels } from '../../../src/labels/index.js';
import type { WaitingPrediction } from '../../../src/labels/index.js';

const MIN = 60_000;
const T0 = Date.UTC(2026, 11, 1);

function prediction(timeMs: number, p = 0.8): WaitingPrediction {
  return { timeMs, model: 'parcel-damage', version: 'v1', segment: {}, score: { kind: 'probability', p } };
}

describe('PendingLabels', () => {
  it('matches an outcome that arrives after its prediction, and counts a second one as a duplicate', () => {
    const store = new PendingLabels({ ttlMs: 60 * MIN, maxEntries: 100 });
    expect(store.addPrediction('a', prediction(T0))).toBeUndefined();
    expect(store.waiting()).toEqual({ predictions: 1, outcomes: 0 });
    const matched = store.addOutcome('a', T0 + 5 * MIN, 1);
    expect(matched?.timeMs).toBe(T0);
    expect(store.addOutcome('a', T0 + 6 * MIN, 1)).toBeUndefined();
    expect(store.counts).toMatchObject({ matched: 1, outcomeDuplicate: 1, outcomeUnmatched: 0 });
    expect(store.waiting()).toEqual({ predictions: 0, outcomes: 0 });
  });

  it('holds an outcome that arrives before its prediction and hands it over when the prediction comes', () => {
    const store = new PendingLabels({ ttlMs: 60 * MIN, maxEntries: 100 });
    expect(store.addOutcome('b', T0 + MIN, 0)).toBeUndefined();
    expect(store.waiting()).toEqual({ predictions: 0, outcomes: 1 });
    const match = store.addPrediction('b', prediction(T0));
    expect(match?.label).toBe(0);
    expect(match?.prediction.timeMs).toBe(T0);
    expect(store.counts.matched).toBe(1);
    // A duplicate prediction under a matched id does not take the id again.
    expect(store.addPrediction('b', prediction(T0 + 2 * MIN))).toBeUndefined();
    expect(store.counts.predictionDuplicate).toBe(1);
  });

  it('expires a prediction once both sides have passed its time + TTL, and counts the late outcome as unmatched', () => {
    const store = new PendingLabels({ ttlMs: 10 * MIN, maxEntries: 100 });
    store.addPrediction('old', prediction(T0));
    // Predictions move on, but no outcome has been seen: the clock waits for the outcome side.
    store.addPrediction('new', prediction(T0 + 30 * MIN));
    expect(store.counts.predictionExpired).toBe(0);
    store.addOutcome('other', T0 + 30 * MIN, 1);
    expect(store.counts.predictionExpired).toBe(1);
    expect(store.addOutcome('old', T0 + 31 * MIN, 1)).toBeUndefined();
    expect(store.waiting().outcomes).toBe(2);
    // Both sides far ahead: the waiting outcomes expire unmatched, and 'new' expires.
    store.addPrediction('later', prediction(T0 + 60 * MIN));
    store.addOutcome('later-o', T0 + 60 * MIN, 1);
    expect(store.counts).toMatchObject({ predictionExpired: 2, outcomeUnmatched: 2, matched: 0 });
  });

  it('does not pair a prediction and an outcome further apart in time than the TTL', () => {
    const store = new PendingLabels({ ttlMs: 10 * MIN, maxEntries: 100 });
    store.addPrediction('x', prediction(T0));
    expect(store.addOutcome('x', T0 + 11 * MIN, 1)).toBeUndefined();
    expect(store.counts).toMatchObject({ matched: 0, outcomeUnmatched: 1 });
    expect(store.waiting().predictions).toBe(1);
  });

  it('expires by event time, not arrival: an early arrival with a late time does not shield older entries', () => {
    const store = new PendingLabels({ ttlMs: 10 * MIN, maxEntries: 100 });
    // The scored topic is read ahead: its closing prediction, an hour on, arrives before the outcomes.
    store.addPrediction('close', prediction(T0 + 60 * MIN));
    store.addOutcome('late-1', T0 + 20 * MIN, 1);
    store.addOutcome('late-2', T0 + 21 * MIN, 1);
    store.addOutcome('close', T0 + 60 * MIN, 1);
    expect(store.counts).toMatchObject({ matched: 1, outcomeUnmatched: 2 });
    expect(store.waiting()).toEqual({ predictions: 0, outcomes: 0 });
  });

  it('evicts the oldest entry at the cap and counts it by kind', () => {
    const store = new PendingLabels({ ttlMs: 600 * MIN, maxEntries: 3 });
    store.addPrediction('p1', prediction(T0));
    store.addOutcome('o1', T0, 1);
    store.addPrediction('p2', prediction(T0 + MIN));
    store.addPrediction('p3', prediction(T0 + 2 * MIN));
    expect(store.size).toBe(3);
    expect(store.counts.predictionEvicted).toBe(1);
    store.addPrediction('p4', prediction(T0 + 3 * MIN));
    expect(store.counts.outcomeEvicted).toBe(1);
    expect(store.waiting()).toEqual({ predictions: 3, outcomes: 0 });
    // The evicted prediction's outcome now waits in vain.
    expect(store.addOutcome('p1', T0, 1)).toBeUndefined();
  });

  it('gives the same answers after a round trip through its state', () => {
    const a = new PendingLabels({ ttlMs: 10 * MIN, maxEntries: 100 });
    a.addPrediction('p', prediction(T0, 0.3));
    a.addOutcome('o', T0 + MIN, true);
    a.addPrediction('m', prediction(T0));
    a.addOutcome('m', T0 + 2 * MIN, 1);
    const b = PendingLabels.fromState(JSON.parse(JSON.stringify(a.toState())), { ttlMs: 10 * MIN, maxEntries: 100 }, 'pending');
    expect(b.toState()).toEqual(a.toState());
    expect(b.addOutcome('p', T0 + MIN, 0)?.score).toEqual({ kind: 'probability', p: 0.3 });
    expect(b.addPrediction('o', prediction(T0))?.label).toBe(true);
    b.addOutcome('m', T0 + 3 * MIN, 1);
    expect(b.counts).toMatchObject({ matched: 3, outcomeDuplicate: 1 });
  });

  it('refuses a malformed state naming the field', () => {
    expect(() => PendingLabels.fromState({ predictionWatermarkMs: null, outcomeWatermarkMs: null, counts: {}, entries: [['a', 'x', 1]] }, { ttlMs: 1, maxEntries: 1 }, 'pending')).toThrow(
      /pending\.entries\[0\]\[1\]/,
    );
  });
});
