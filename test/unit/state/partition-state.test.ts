import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { mergeView, PARTITION_STATE_FORMAT, PartitionState } from '../../../src/state/partition-state.js';
import type { ModelConfig } from '../../../src/config/types.js';
import type { ModelSettings, PartitionStateOptions } from '../../../src/state/partition-state.js';
import { marginsOf, MIN, scored, stream, T0 } from './events.js';
import type { Message } from './events.js';

const OPTIONS: PartitionStateOptions = { topic: 'scores', partition: 0, models: [{ name: '*', segmentKeys: ['line', 'shift'], maxSeries: 12 }] };
const withModels = (models: PartitionStateOptions['models'], partition = 0): PartitionStateOptions => ({ topic: 'scores', partition, models });
const NOW = T0 + 365 * 24 * 60 * MIN; // far ahead: nothing is from the future unless a test says so

function feed(state: PartitionState, messages: readonly Message[], from = 0): void {
  messages.forEach((m, i) => {
    const offset = String(from + i);
    if (m.kind === 'event') state.apply(m.event, marginsOf(m.event), offset, NOW);
    else state.reject(m.reason, offset);
  });
}

/** What must survive a checkpoint: every count, and what the views answer. */
function summary(state: PartitionState | ReturnType<typeof mergeView>) {
  const series = state instanceof PartitionState ? state.series() : state.series;
  const counts = state instanceof PartitionState ? state.counts() : state.counts;
  return {
    counts,
    watermarkMs: state.watermarkMs,
    series: series
      .map((s) => {
        const view = s.windows.view(60 * MIN);
        return {
          id: `${s.model}/${s.version}/${s.segment}`,
          events: s.events,
          labelled: s.labelled,
          wrong: s.wrong,
          windows: s.windows.counters(),
          hourCount: view.summary.count,
          hourLow: view.summary.countBelow(0.2),
          hourMedian: view.summary.count === 0 ? null : view.summary.distribution.quantile(0.5),
        };
      })
      .sort((a, b) => (a.id < b.id ? -1 : 1)),
  };
}

function failure(f: () => unknown): { code?: string; message: string } | undefined {
  try {
    f();
  } catch (e) {
    return isHeadroomError(e) ? { code: e.code, message: e.message } : { message: String(e) };
  }
  return undefined;
}

describe('PartitionState', () => {
  it('counts events per series, with labels and wrong answers, and keeps the next offset', () => {
    const s = new PartitionState(OPTIONS);
    expect(s.nextOffset).toBeNull();
    const a = scored(0.9, { label: 1, segment: { line: '1' } }); // right
    const b = scored(0.2, { label: 1, segment: { line: '1' }, timeMs: T0 + 1000 }); // wrong: p < 0.5 for a positive
    const c = scored(0.6, { segment: { shift: 'day' }, timeMs: T0 + 2000 }); // unlabelled
    expect(s.apply(a, marginsOf(a), '10', NOW)).toBe('added');
    expect(s.apply(b, marginsOf(b), '11', NOW)).toBe('added');
    expect(s.apply(c, marginsOf(c), '13', NOW)).toBe('added'); // a gap (compaction, transaction markers) is fine
    expect(s.nextOffset).toBe('14');
    expect(s.watermarkMs).toBe(T0 + 2000);
    const bySegment = Object.fromEntries(s.series().map((x) => [x.segment, [x.events, x.labelled, x.wrong]]));
    expect(bySegment).toEqual({ all: [3, 2, 1], 'line=1': [2, 2, 1], 'shift=day': [1, 0, 0] });
    const none = { matched: 0, predictionExpired: 0, predictionEvicted: 0, predictionDuplicate: 0, outcomeUnmatched: 0, outcomeEvicted: 0, outcomeDuplicate: 0, outcomeBadLabel: 0 };
    // No outcome topic: the two labelled events count at once, and nothing waits.
    expect(s.counts()).toEqual({ events: 3, unwatched: 0, late: 0, future: 0, rejected: {}, folded: {}, labelledInline: 2, outcomes: 0, join: none, waiting: { predictions: 0, outcomes: 0 } });
    const all = s.series().find((x) => x.segment === 'all');
    expect(all?.labels?.view(3_600_000, s.watermarkMs).summary.wrong).toBe(1);
  });

  it('a rejection advances the offset and is counted by reason; an offset seen before is not counted again', () => {
    const s = new PartitionState(OPTIONS);
    const e = scored(0.7);
    expect(s.reject('not_json', '0')).toBe(true);
    expect(s.apply(e, marginsOf(e), '1', NOW)).toBe('added');
    expect(s.reject('bad_time', '2')).toBe(true);
    expect(s.reject('not_json', '3')).toBe(true);
    expect(s.nextOffset).toBe('4');
    expect(s.counts().rejected).toEqual({ bad_time: 1, not_json: 2 });
    // Redelivered offsets change nothing.
    expect(s.reject('not_json', '3')).toBe(false);
    expect(s.apply(e, marginsOf(e), '1', NOW)).toBe('duplicate');
    expect(s.counts()).toMatchObject({ events: 1, unwatched: 0, late: 0, future: 0, rejected: { bad_time: 1, not_json: 2 }, folded: {}, labelledInline: 0, outcomes: 0 });
    expect(s.nextOffset).toBe('4');
    expect(failure(() => s.reject('not_json', '-1'))?.code).toBe('HR_ERR_STATE_ARGUMENT');
    expect(failure(() => s.reject('no_such' as 'not_json', '9'))?.code).toBe('HR_ERR_STATE_ARGUMENT');
    expect(failure(() => s.apply(e, marginsOf(e), '0x10', NOW))?.code).toBe('HR_ERR_STATE_ARGUMENT');
    // A bad time is refused before any series changes.
    const before = JSON.stringify(s.toState());
    expect(failure(() => s.apply({ ...e, timeMs: Number.NaN }, marginsOf(e), '9', NOW))?.code).toBe('HR_ERR_STATE_ARGUMENT');
    expect(JSON.stringify(s.toState())).toBe(before);
  });

  it('counts late and future events at partition level from the all series', () => {
    const s = new PartitionState(OPTIONS);
    const first = scored(0.5, { timeMs: T0 + 30 * MIN });
    const late = scored(0.5, { timeMs: T0 });
    const future = scored(0.5, { timeMs: T0 + 100 * MIN });
    s.apply(first, marginsOf(first), '0', T0 + 30 * MIN);
    expect(s.apply(late, marginsOf(late), '1', T0 + 30 * MIN)).toBe('late');
    expect(s.apply(future, marginsOf(future), '2', T0 + 30 * MIN)).toBe('future');
    expect(s.counts()).toMatchObject({ events: 3, late: 1, future: 1 });
    expect(s.watermarkMs).toBe(T0 + 30 * MIN);
  });

  it('round-trips through JSON text: every count, the offset and the views are the same after', () => {
    const messages = stream(7, 3000);
    const s = new PartitionState(OPTIONS);
    feed(s, messages);
    const json = JSON.parse(JSON.stringify(s.toState()));
    expect(json.format).toBe(PARTITION_STATE_FORMAT);
    const back = PartitionState.fromState(json, OPTIONS);
    expect(back.nextOffset).toBe('3000');
    expect(summary(back)).toEqual(summary(s));
    expect(summary(back).counts.folded).not.toEqual({}); // the cap of 12 was reached, so folding is covered
    expect(JSON.stringify(back.toState())).toBe(JSON.stringify(s.toState()));
    // And it goes on like the original would.
    const more = stream(8, 500);
    feed(s, more, 3000);
    feed(back, more, 3000);
    expect(summary(back)).toEqual(summary(s));
  });

  it('refuses a bad state with HR_ERR_STATE_INVALID naming the field', () => {
    const s = new PartitionState(OPTIONS);
    feed(s, stream(3, 200));
    const good = () => JSON.parse(JSON.stringify(s.toState()));
    const cases: [string, (x: ReturnType<typeof good>) => void][] = [
      ['state.format', (x) => (x.format = 'headroom-partition/2')],
      ['state.nextOffset', (x) => (x.nextOffset = 12)],
      ['state.counts.events', (x) => (x.counts.events = -1)],
      ['state.counts.rejected', (x) => (x.counts.rejected = { nope: 1 })],
      ['state.series[0].windows', (x) => (x.series[0].windows.fine = 'x')],
      ['state.series[1].events', (x) => (x.series[1].events += 1)],
      ['state.series[0].windows.config', (x) => (x.series[0].windows.config.bucketMs = 30_000)],
      ['state.counts.unwatched', (x) => delete x.counts.unwatched],
      ['state.topic', (x) => (x.topic = 'other-topic')],
      ['state.partition', (x) => (x.partition = 3)],
      ['state.series[2]', (x) => (x.series[2] = { ...x.series[1] })],
    ];
    for (const [field, damage] of cases) {
      const bad = good();
      damage(bad);
      const f = failure(() => PartitionState.fromState(bad, OPTIONS));
      expect(f?.code, field).toBe('HR_ERR_STATE_INVALID');
      expect(f?.message, field).toContain(field);
    }
    expect(failure(() => PartitionState.fromState(good(), OPTIONS))).toBeUndefined();
  });

  it('drops series and folded counts of a model or segment key no longer configured', () => {
    const s = new PartitionState(OPTIONS);
    feed(s, stream(4, 500));
    const back = PartitionState.fromState(s.toState(), withModels([{ name: '*', segmentKeys: ['line'], maxSeries: 12 }]));
    expect(back.series().some((x) => x.segment.startsWith('shift='))).toBe(false);
    expect(back.series().filter((x) => x.segment.startsWith('line='))).toHaveLength(s.series().filter((x) => x.segment.startsWith('line=')).length);
    expect(Object.values(back.counts().folded).every((keys) => !('shift' in keys))).toBe(true);
    const fraudOnly = PartitionState.fromState(s.toState(), withModels([{ name: 'fraud', segmentKeys: ['line', 'shift'], maxSeries: 12 }]));
    expect(new Set(fraudOnly.series().map((x) => x.model))).toEqual(new Set(['fraud']));
    expect(fraudOnly.series().length).toBe(s.series().filter((x) => x.model === 'fraud').length);
    expect(Object.keys(fraudOnly.counts().folded)).toEqual(Object.keys(s.counts().folded).filter((m) => m === 'fraud'));
  });

  it('each model gets its own settings; a model without any is counted as unwatched and moves the offset on', () => {
    const s = new PartitionState(
      withModels([
        { name: 'fraud', segmentKeys: ['line'], window: { thresholds: [0.3] } },
        { name: 'churn', segmentKeys: ['shift'] },
      ]),
    );
    const events = [scored(0.9, { model: 'fraud', segment: { line: '1', shift: 'day' } }), scored(0.9, { model: 'churn', segment: { line: '1', shift: 'day' } }), scored(0.9, { model: 'spam' })];
    expect(events.map((e, i) => s.apply(e, marginsOf(e), String(i), NOW))).toEqual(['added', 'added', 'unwatched']);
    expect(s.series().map((x) => `${x.model}/${x.segment}`)).toEqual(['fraud/all', 'fraud/line=1', 'churn/all', 'churn/shift=day']);
    expect(s.series()[0]?.windows.config.thresholds).toEqual([0.3]);
    expect(s.series()[2]?.windows.config.thresholds).toEqual([0.1, 0.2]);
    expect(s.counts()).toMatchObject({ events: 2, unwatched: 1 });
    expect(s.nextOffset).toBe('3');
    expect(s.modelSettings('spam')).toBeUndefined();
    // src/config's model entries are model settings as they are (checked by tsc, not at run time).
    const fromConfig = (c: ModelConfig): ModelSettings => c;
    void fromConfig;
    expect(failure(() => new PartitionState(withModels([{ name: 'a' }, { name: 'a' }])))?.message).toContain('models[1].name');
    expect(failure(() => new PartitionState(withModels([{ name: 'a', maxSeries: 0 }])))?.message).toContain('models[0].maxSeries');
  });

  it('merging partitions gives the counts of one stream exactly', () => {
    const messages = stream(11, 4000);
    const settings = [{ name: '*', segmentKeys: ['line', 'shift'], maxSeries: 1000 }];
    const one = new PartitionState(withModels(settings));
    feed(one, messages);
    // Deal the messages to three partitions by a key, as a producer would.
    const parts = [0, 1, 2].map((p) => new PartitionState(withModels(settings, p)));
    const offsets = [0, 0, 0];
    messages.forEach((m, i) => {
      const p = m.kind === 'event' ? (m.event.segment.line === undefined ? 0 : Number(m.event.segment.line) % 3) : i % 3;
      const state = parts[p] as PartitionState;
      const offset = String(offsets[p]);
      offsets[p] = (offsets[p] as number) + 1;
      if (m.kind === 'event') state.apply(m.event, marginsOf(m.event), offset, NOW);
      else state.reject(m.reason, offset);
    });
    const merged = mergeView(parts);
    const single = mergeView([one]);
    expect(merged.partitions).toBe(3);
    const exact = (v: ReturnType<typeof mergeView>) => ({
      events: v.counts.events,
      rejected: v.counts.rejected,
      watermarkMs: v.watermarkMs,
      series: v.series.map((s) => {
        const w = s.windows.counters();
        expect(w.added + w.late + w.future).toBe(s.events);
        // Each partition judges lateness against its own watermark, so only the exact counts are compared.
        return [s.model, s.version, s.segment, s.events, s.labelled, s.wrong];
      }),
    });
    expect(exact(merged)).toEqual(exact(single));
    expect(merged.series.length).toBeGreaterThan(10);
    // The merged view is a copy: the partitions are unchanged.
    expect(parts.reduce((n, p) => n + p.counts().events, 0)).toBe(merged.counts.events);
    const allFraud = merged.series.find((s) => s.model === 'fraud' && s.version === 'v1' && s.segment === 'all');
    expect(allFraud?.windows).not.toBe(parts[0]?.series()[0]?.windows);
  });
});
