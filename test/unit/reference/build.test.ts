/** buildReference on small inputs whose every figure is worked out by hand in the test. */
import { describe, expect, it } from 'vitest';
import { wilsonInterval } from '../../../src/compare/index.js';
import type { Rejection, ScoredEvent } from '../../../src/events/index.js';
import { buildReference, invertedCdfQuantiles, ReferenceBuilder } from '../../../src/reference/index.js';
import { CREATED_AT, MODEL, T0, VERSION, caught, event, marginEvent, probabilityEvent } from './events.js';

const build = (events: ScoredEvent[], options: Record<string, unknown> = {}) => buildReference(events, { createdAt: CREATED_AT, ...options });

describe('the header', () => {
  it('names the model version, the time range and the settings', () => {
    const events = [marginEvent(0.3, { time: T0 + 5000 }), marginEvent(0.6, { time: T0 }), marginEvent(0.9, { time: T0 + 2000 })];
    const ref = build(events, { source: 'held-out set 2026-11', thresholds: [0.25, 0.05] });
    expect(ref.format).toBe('headroom-reference/1');
    expect(ref.model).toBe(MODEL);
    expect(ref.version).toBe(VERSION);
    expect(ref.createdAt).toBe(CREATED_AT);
    expect(ref.source).toBe('held-out set 2026-11');
    expect(ref.n).toBe(3);
    expect(ref.thresholds).toEqual([0.05, 0.25]);
    expect(ref.timeRange).toEqual({ fromMs: T0, toMs: T0 + 5000 });
    expect(Object.keys(ref.segments)).toEqual(['all']);
  });

  it('defaults to θ = 0.1 and 0.25', () => {
    expect(build([marginEvent(0.5)]).thresholds).toEqual([0.1, 0.25]);
  });
});

describe('low-margin shares', () => {
  it('are exact counts of margins strictly below θ, with Wilson intervals', () => {
    const margins = [0, 0.05, 0.1, 0.2, 0.25, 0.3, 0.9];
    const ref = build(margins.map((m) => marginEvent(m)));
    const [at10, at25] = ref.segments.all?.lowMargin ?? [];
    // 0.1 itself is not below 0.1, nor 0.25 below 0.25.
    expect(at10).toMatchObject({ threshold: 0.1, count: 2, share: 2 / 7 });
    expect(at25).toMatchObject({ threshold: 0.25, count: 4, share: 4 / 7 });
    const w = wilsonInterval(4, 7);
    expect(at25?.lower).toBe(w.lower);
    expect(at25?.upper).toBe(w.upper);
    expect(ref.segments.all?.confidence.below).toEqual([2, 4]);
  });

  it('take the confidence margin |2p − 1| of probability scores', () => {
    // Margins 0.04, 0.2 (a hair under, from rounding), 0.8 and 0.98: one below 0.1, two below 0.25.
    const ref = build([probabilityEvent(0.52), probabilityEvent(0.4), probabilityEvent(0.1), probabilityEvent(0.99)]);
    expect(ref.segments.all?.lowMargin.map((e) => e.count)).toEqual([1, 2]);
  });
});

describe('decile edges', () => {
  it('are inverted-CDF quantiles, worked out by hand for seven values', () => {
    const sorted = Float64Array.from([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7]);
    // q·7 = 0.7, 1.4, 2.1, 2.8, 3.5, 4.2, 4.9, 5.6, 6.3 → the ⌈q·7⌉-th smallest value.
    expect(invertedCdfQuantiles(sorted, [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9])).toEqual([0.1, 0.2, 0.3, 0.3, 0.4, 0.5, 0.5, 0.6, 0.7]);
  });

  it('take the value where the CDF first reaches q, counting ties with the value', () => {
    const sorted = Float64Array.from([0.05, 0.15, 0.25, 0.35, 0.45, 0.55, 0.65, 0.75, 0.85, 0.95]);
    // F(0.65) = 7/10 already reaches 0.7, so the 70 % quantile is 0.65, not the next value 0.75.
    expect(invertedCdfQuantiles(sorted, [0.3, 0.6, 0.7])).toEqual([0.25, 0.55, 0.65]);
  });

  it('do not fall for q·n rounding either way (0.07 · 100 = 7.000000000000001, 0.57 · 100 = 56.99999999999999)', () => {
    const sorted = Float64Array.from({ length: 100 }, (_, i) => i + 1);
    // F(7) = 7/100 reaches 0.07 exactly; F(57) is the first to reach 0.57.
    expect(invertedCdfQuantiles(sorted, [0.07, 0.57, 0.29])).toEqual([7, 57, 29]);
  });

  it('repeat across an atom, and are stored so', () => {
    const margins = [0, 0, 0, 0, 0.2, 0.4, 0.6, 0.8, 1, 1];
    const ref = build(margins.map((m) => marginEvent(m)));
    // F(0) = 0.4 covers the 10-40 % levels; F(0.2) = 0.5; ...; F(1) = 1 covers 90 %.
    expect(ref.segments.all?.decileEdges).toEqual([0, 0, 0, 0, 0.2, 0.4, 0.6, 0.8, 1]);
  });

  it('ignore input order', () => {
    const margins = [0.9, 0.1, 0.5, 0.3, 0.7, 0.2];
    const a = build(margins.map((m) => marginEvent(m)));
    const b = build([...margins].reverse().map((m) => marginEvent(m)));
    expect(a.segments.all?.decileEdges).toEqual(b.segments.all?.decileEdges);
  });
});

describe('labels', () => {
  const labelled = [
    probabilityEvent(0.05, 1), // m = −0.9, y = +1: wrong
    probabilityEvent(0.1, 0), // m = −0.8, y = −1: right
    probabilityEvent(0, 0), // m = −1, y = −1: right
    probabilityEvent(0.15, 1), // wrong
    probabilityEvent(0.95, 1), // right
    probabilityEvent(1, 0), // wrong
    event({ score: { kind: 'logit', z: 0 }, label: 1 }), // p = 0.5, m = 0: on the boundary, counted wrong
    event({ score: { kind: 'votes', sum: 1, total: 2 }, label: 'true' }), // right; no probability, so no calibration
    marginEvent(0.4, { label: 1 }), // a margin score has no sign: no signed margin
    probabilityEvent(0.7), // no label
  ];

  it('give the error rate (signed margin <= 0) with a Wilson interval', () => {
    const ref = build(labelled);
    const labels = ref.segments.all?.labels;
    expect(ref.n).toBe(10);
    expect(labels?.n).toBe(8);
    const w = wilsonInterval(4, 8);
    expect(labels?.errors).toEqual({ count: 4, share: 0.5, lower: w.lower, upper: w.upper });
    expect(labels?.signed.count).toBe(8);
    expect(labels?.signed.min).toBe(-1);
    expect(labels?.signed.max).toBe(1);
  });

  it('give ten calibration bins (lo, hi] over the positive-class probability of probability and logit scores', () => {
    const bins = build(labelled).segments.all?.labels?.calibration ?? [];
    expect(bins.map((b) => [b.lower, b.upper])).toEqual(Array.from({ length: 10 }, (_, i) => [i / 10, (i + 1) / 10]));
    // p = 0.05, 0.1 (the bin's closed upper edge) and 0 (the first bin is closed below too).
    expect(bins[0]).toEqual({ lower: 0, upper: 0.1, count: 3, positives: 1, meanPredicted: (0.05 + 0.1 + 0) / 3, observedRate: 1 / 3 });
    expect(bins[1]).toMatchObject({ count: 1, positives: 1, meanPredicted: 0.15, observedRate: 1 });
    expect(bins[4]).toMatchObject({ count: 1, positives: 1, meanPredicted: 0.5, observedRate: 1 });
    expect(bins[9]).toMatchObject({ count: 2, positives: 1, meanPredicted: (0.95 + 1) / 2, observedRate: 0.5 });
    for (const i of [2, 3, 5, 6, 7, 8]) expect(bins[i]).toMatchObject({ count: 0, positives: 0, meanPredicted: null, observedRate: null });
  });

  it('are absent when no event has one, and calibration is null without probability scores', () => {
    expect(build([marginEvent(0.2), probabilityEvent(0.9)]).segments.all?.labels).toBeNull();
    const votesOnly = build([event({ score: { kind: 'votes', sum: -1, total: 4 }, label: -1 })]);
    expect(votesOnly.segments.all?.labels?.calibration).toBeNull();
    expect(votesOnly.segments.all?.labels?.errors.count).toBe(0);
  });

  it('that do not fit the score leave the event out and are reported', () => {
    const rejected: Rejection[] = [];
    const ref = buildReference([probabilityEvent(0.9, 1), probabilityEvent(0.8, 'parcel')], {
      createdAt: CREATED_AT,
      onRejected: (_e, r) => rejected.push(r),
    });
    expect(ref.n).toBe(1);
    expect(rejected.map((r) => [r.reason, r.field])).toEqual([['bad_label', 'label']]);
  });
});

describe('segments', () => {
  const lineEvent = (m: number, line?: string) => marginEvent(m, line === undefined ? {} : { segment: { line, site: 'north' } });

  it('get one per value of each configured key, beside "all"', () => {
    const events = [lineEvent(0.05, '1'), lineEvent(0.5, '1'), lineEvent(0.9, '2'), lineEvent(0.15, '3'), lineEvent(0.2)];
    const ref = build(events, { segmentKeys: ['line'] });
    expect(Object.keys(ref.segments)).toEqual(['all', 'line=1', 'line=2', 'line=3']);
    expect(ref.segments.all?.n).toBe(5);
    expect(ref.segments['line=1']?.n).toBe(2);
    expect(ref.segments['line=1']?.lowMargin.map((e) => e.count)).toEqual([1, 1]);
    expect(ref.segments['line=3']?.lowMargin.map((e) => e.count)).toEqual([0, 1]);
    expect(ref.segmentKeys).toEqual(['line']);
    expect(ref.folded).toEqual({});
  });

  it('fold rare values into k=other, keeping the most frequent', () => {
    const values = ['a', 'a', 'a', 'b', 'b', 'c', 'd'];
    const ref = build(
      values.map((line, i) => lineEvent(i / 10, line)),
      { segmentKeys: ['line'], maxSegmentValues: 2 },
    );
    expect(Object.keys(ref.segments)).toEqual(['all', 'line=a', 'line=other']);
    expect(ref.segments['line=other']?.n).toBe(4);
    expect(ref.segments['line=other']?.confidence.min).toBe(0.3);
    expect(ref.folded).toEqual({ line: 3 });
  });

  it('is one model version: a second is refused', () => {
    const other = event({ model: 'parcel-damage', version: '2026.12.0', score: { kind: 'margin', value: 0.3 } });
    const error = caught(() => build([marginEvent(0.2), other]));
    expect(error.code).toBe('HR_ERR_INPUT_AMBIGUOUS');
    expect(error.message).toContain('parcel-damage@2026.12.0');
  });
});

describe('refusals', () => {
  it('no events: HR_ERR_INPUT_EMPTY', () => {
    expect(caught(() => build([])).code).toBe('HR_ERR_INPUT_EMPTY');
    const builder = new ReferenceBuilder({ createdAt: CREATED_AT });
    builder.add(probabilityEvent(0.3, 'not-binary'));
    expect(caught(() => builder.finish()).code).toBe('HR_ERR_INPUT_EMPTY');
  });

  it.each([
    [{ createdAt: 'yesterday' }, 'createdAt'],
    [{ thresholds: [0] }, 'thresholds'],
    [{ thresholds: [0.1, 1] }, 'thresholds'],
    [{ thresholds: [0.2, 0.2] }, 'thresholds'],
    [{ thresholds: [] }, 'thresholds'],
    [{ segmentKeys: ['line=1'] }, 'segmentKeys[0]'],
    [{ segmentKeys: ['line', 'line'] }, 'segmentKeys'],
    [{ maxSegmentValues: 0 }, 'maxSegmentValues'],
    [{ compression: 5 }, 'compression'],
  ])('bad option %j names %s', (options, option) => {
    const error = caught(() => new ReferenceBuilder({ createdAt: CREATED_AT, ...options }));
    expect(error.code).toBe('HR_ERR_REFERENCE_ARGUMENT');
    expect(error.context.option).toBe(option);
  });
});
