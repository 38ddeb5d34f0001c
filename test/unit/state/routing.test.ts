import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { OTHER_SEGMENT_VALUE } from '../../../src/reference/options.js';
import { routingConfig, SeriesRouter, splitSegment } from '../../../src/state/routing.js';
import type { RoutingOptions, SeriesId } from '../../../src/state/routing.js';
import { scored } from './events.js';

/** A router whose series are their own names, so a route reads as a list of segments. */
function router(options: RoutingOptions): { route: (event: ReturnType<typeof scored>) => string[]; r: SeriesRouter<string> } {
  const settings = routingConfig(options);
  const r = new SeriesRouter<string>(() => settings, (id: SeriesId) => `${id.model}/${id.version}/${id.segment}`);
  const out: string[] = [];
  return {
    r,
    route: (event) => {
      const n = r.route(event, out);
      return out.slice(0, n);
    },
  };
}

describe('series routing', () => {
  it('an event feeds all and one series per configured key it carries, never a cross product', () => {
    const { route, r } = router({ segmentKeys: ['line', 'shift'] });
    expect(route(scored(0.9, { segment: { line: '3', shift: 'night', plant: 'x' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=3', 'fraud/v1/shift=night']);
    expect(route(scored(0.9, { segment: { shift: 'day' } }))).toEqual(['fraud/v1/all', 'fraud/v1/shift=day']);
    expect(route(scored(0.9, { version: 'v2' }))).toEqual(['fraud/v2/all']);
    expect(r.series().map((s) => s.id.segment)).toEqual(['all', 'line=3', 'shift=night', 'shift=day', 'all']);
    expect(r.series().some((s) => s.id.segment.includes(','))).toBe(false);
  });

  it('routes the same value to the same series object again', () => {
    const made: SeriesId[] = [];
    const settings = routingConfig({ segmentKeys: ['line'] });
    const r = new SeriesRouter<object>(() => settings, (id) => (made.push(id), {}));
    const a: object[] = [];
    const b: object[] = [];
    r.route(scored(0.5, { segment: { line: '1' } }), a);
    r.route(scored(0.7, { segment: { line: '1' } }), b);
    expect(a[0]).toBe(b[0]);
    expect(a[1]).toBe(b[1]);
    expect(made).toHaveLength(2);
  });

  it('folds the values beyond the cap of a model into k=other and counts the folded events per model and key', () => {
    const { route, r } = router({ segmentKeys: ['line', 'shift'], maxSeries: 4 });
    expect(route(scored(0.5, { segment: { line: '1' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=1']);
    expect(route(scored(0.5, { segment: { line: '2', shift: 'day' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=2', 'fraud/v1/shift=day']);
    // 4 series now: the cap is reached; new values fold, known ones keep their series.
    expect(route(scored(0.5, { segment: { line: '3' } }))).toEqual(['fraud/v1/all', `fraud/v1/line=${OTHER_SEGMENT_VALUE}`]);
    expect(route(scored(0.5, { segment: { line: '4', shift: 'night' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=other', 'fraud/v1/shift=other']);
    expect(route(scored(0.5, { segment: { line: '1', shift: 'day' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=1', 'fraud/v1/shift=day']);
    expect(route(scored(0.5, { segment: { line: '3' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=other']);
    expect(r.folded()).toEqual({ fraud: { line: 3, shift: 1 } });
    // The cap counts versions too, and `all` is never folded.
    expect(route(scored(0.5, { version: 'v2', segment: { line: '1' } }))).toEqual(['fraud/v2/all', 'fraud/v2/line=other']);
    expect(r.folded()).toEqual({ fraud: { line: 4, shift: 1 } });
    // Another model has its own cap.
    expect(route(scored(0.5, { model: 'churn', segment: { line: '9' } }))).toEqual(['churn/v1/all', 'churn/v1/line=9']);
    expect(r.seriesCount('fraud')).toBe(8);
    expect(r.seriesCount('churn')).toBe(2);
  });

  it('a real value "other" shares k=other and is not counted as folded', () => {
    const { route, r } = router({ segmentKeys: ['line'], maxSeries: 2 });
    expect(route(scored(0.5, { segment: { line: 'other' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=other']);
    expect(route(scored(0.5, { segment: { line: '7' } }))).toEqual(['fraud/v1/all', 'fraud/v1/line=other']);
    expect(r.folded()).toEqual({ fraud: { line: 1 } });
  });

  it('restores series and folded counts, so routing goes on as before', () => {
    const { route, r } = router({ segmentKeys: ['line'], maxSeries: 2 });
    route(scored(0.5, { segment: { line: '1' } }));
    route(scored(0.5, { segment: { line: '2' } }));
    const same = routingConfig({ segmentKeys: ['line'], maxSeries: 2 });
    const again = new SeriesRouter<string>(() => same, (id) => `new ${id.segment}`);
    for (const s of r.series()) expect(again.restore(s.id, s.series)).toBe(true);
    again.restoreFolded('fraud', 'line', 1);
    const out: string[] = [];
    again.route(scored(0.5, { segment: { line: '1' } }), out);
    expect(out.slice(0, 2)).toEqual(['fraud/v1/all', 'fraud/v1/line=1']);
    again.route(scored(0.5, { segment: { line: '3' } }), out);
    expect(out.slice(0, 2)).toEqual(['fraud/v1/all', 'fraud/v1/line=other']);
    expect(again.folded()).toEqual({ fraud: { line: 2 } });
    // A key no longer configured is not restored.
    const none = routingConfig({});
    expect(new SeriesRouter<string>(() => none, () => '').restore({ model: 'm', version: 'v', segment: 'line=1' }, 'x')).toBe(false);
  });

  it('a model without settings gets no series and leaves nothing behind; each model has its own keys', () => {
    const fraud = routingConfig({ segmentKeys: ['line'] });
    const churn = routingConfig({ segmentKeys: ['plan'] });
    const r = new SeriesRouter<string>((m) => (m === 'fraud' ? fraud : m === 'churn' ? churn : undefined), (id) => id.segment);
    const out: string[] = [];
    expect(r.route(scored(0.5, { model: 'spam', segment: { line: '1' } }), out)).toBe(0);
    expect(r.series()).toEqual([]);
    expect(r.seriesCount('spam')).toBe(0);
    const seg = { line: '1', plan: 'gold' };
    expect(out.slice(0, r.route(scored(0.5, { model: 'fraud', segment: seg }), out))).toEqual(['all', 'line=1']);
    expect(out.slice(0, r.route(scored(0.5, { model: 'churn', segment: seg }), out))).toEqual(['all', 'plan=gold']);
  });

  it('refuses bad options naming the field', () => {
    const codeAndField = (options: RoutingOptions): unknown[] => {
      try {
        routingConfig(options);
      } catch (e) {
        return isHeadroomError(e) ? [e.code, e.context.field] : ['other'];
      }
      return [];
    };
    expect(codeAndField({ maxSeries: 0 })).toEqual(['HR_ERR_STATE_ARGUMENT', 'maxSeries']);
    expect(codeAndField({ segmentKeys: ['a=b'] })).toEqual(['HR_ERR_STATE_ARGUMENT', 'segmentKeys[0]']);
    expect(codeAndField({ segmentKeys: ['a', 'a'] })).toEqual(['HR_ERR_STATE_ARGUMENT', 'segmentKeys']);
    expect(codeAndField({ segmentKeys: ['a'], maxSeries: 3 })).toEqual([]);
  });

  it('splits a segment at the first "="', () => {
    expect(splitSegment('line=a=b')).toEqual({ key: 'line', value: 'a=b' });
    expect(splitSegment('all')).toBeUndefined();
  });
});
