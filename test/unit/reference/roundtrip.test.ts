/**
 * build → text → parse → compare. Live data identical to the reference must compare as identical
 * (KS D = 0, PSI = 0, same shares); shifted live data must not, so the first result means something.
 */
import { describe, expect, it } from 'vitest';
import { compareToReference, psi } from '../../../src/compare/index.js';
import type { ScoredEvent } from '../../../src/events/index.js';
import { confidenceMargin } from '../../../src/margin/index.js';
import { buildReference, formatReference, parseReference, parseReferenceText } from '../../../src/reference/index.js';
import type { LoadedReference } from '../../../src/reference/index.js';
import { MarginSummary } from '../../../src/sketch/index.js';
import { CREATED_AT, marginEvent, parcelEvents } from './events.js';

const THRESHOLDS = [0.1, 0.25];
const events = parcelEvents(20_000, 7);
const built = buildReference(events, { createdAt: CREATED_AT, source: 'test', segmentKeys: ['line'] });
const loaded = parseReferenceText(formatReference(built), 'references/parcel.json');

function liveSummary(live: readonly ScoredEvent[], line?: string): MarginSummary {
  const summary = new MarginSummary({ thresholds: THRESHOLDS });
  for (const e of live) if (line === undefined || e.segment.line === line) summary.add(confidenceMargin(e.score));
  return summary;
}

function compareWith(reference: LoadedReference, summary: MarginSummary, segment = 'all') {
  const view = reference.segmentFor(segment);
  const counts = THRESHOLDS.map((threshold) => ({ threshold, low: summary.countBelow(threshold), count: summary.count }));
  return compareToReference(summary.distribution, view.confidence, view.compareOptions(counts));
}

describe('a reference read back from its text', () => {
  it('is the object that was written, through formatReference and through plain JSON alike', () => {
    expect(JSON.parse(formatReference(built))).toEqual(built);
    expect(parseReference(JSON.parse(JSON.stringify(built)), 'x').file).toEqual(loaded.file);
    expect(loaded.model).toBe('parcel-damage');
    expect([...loaded.segments.keys()]).toEqual(['all', 'line=1', 'line=2', 'line=3']);
  });

  it('compares identical live data as identical: KS D = 0, PSI = 0, Wasserstein 0, no share difference', () => {
    const report = compareWith(loaded, liveSummary(events));
    expect(report.state).toBe('ok');
    expect(report.ks?.statistic).toBe(0);
    expect(report.psi?.value).toBeCloseTo(0, 12);
    expect(report.wasserstein).toBeCloseTo(0, 12);
    for (const row of report.lowMargin) expect(row.difference).toBe(0);
    for (const shift of report.quantileShifts) expect(shift.shift).toBe(0);
  });

  it('does the same per segment against that segment', () => {
    const report = compareWith(loaded, liveSummary(events, '3'), 'line=3');
    expect(report.referenceCount).toBe(events.filter((e) => e.segment.line === '3').length);
    expect(report.ks?.statistic).toBe(0);
    expect(report.psi?.value).toBeCloseTo(0, 12);
  });

  it('tells shifted live data apart', () => {
    const report = compareWith(loaded, liveSummary(parcelEvents(20_000, 8, 0.5)));
    expect(report.ks?.statistic).toBeGreaterThan(0.1);
    expect(report.psi?.value).toBeGreaterThan(0.25);
    expect(report.lowMargin[1]?.difference).toBeGreaterThan(0.05);
  });

  it('stores exact low-margin shares, counted here from the events themselves', () => {
    for (const [name, view] of loaded.segments) {
      const members = name === 'all' ? events : events.filter((e) => `line=${e.segment.line}` === name);
      for (const threshold of THRESHOLDS) {
        const below = members.filter((e) => confidenceMargin(e.score) < threshold).length;
        expect(view.lowMarginShare(threshold)).toBe(below / members.length);
      }
      expect(view.n).toBe(members.length);
      expect(view.lowMarginShare(0.3)).toBeUndefined();
    }
  });

  it('gives PSI the stored decile edges, exact quantiles of the margins', () => {
    const margins = events.map((e) => confidenceMargin(e.score)).sort((a, b) => a - b);
    const view = loaded.segmentFor('all');
    view.decileEdges.forEach((edge, i) => {
      const q = (i + 1) / 10;
      expect(margins.filter((m) => m <= edge).length / margins.length).toBeGreaterThanOrEqual(q);
      expect(margins.filter((m) => m < edge).length / margins.length).toBeLessThan(q);
    });
    // About a tenth of the reference in each bin, except where the atoms at 0 and 1 merge edges.
    const result = psi(view.confidence, view.confidence, { edges: view.decileEdges });
    const shares = result.bins.map((b) => b.reference);
    expect(shares.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 9);
    expect(Math.max(...shares)).toBeLessThan(0.25);
  });

  it('falls back to "all" for a segment it has no reference for', () => {
    expect(loaded.segmentFor('line=9').name).toBe('all');
    expect(loaded.segmentFor('site=north').name).toBe('all');
    expect(loaded.segmentFor('line=2').name).toBe('line=2');
  });

  it('keeps labels: signed-margin digest and error rate', () => {
    const labels = loaded.segmentFor('all').labels;
    const wrong = events.filter((e) => {
      const p = e.score.kind === 'probability' ? e.score.p : NaN;
      return (e.label === 1 ? 1 : -1) * (2 * p - 1) <= 0;
    }).length;
    expect(labels?.n).toBe(events.length);
    expect(labels?.errors.count).toBe(wrong);
    expect(labels?.signed.count).toBe(events.length);
    expect(labels?.signed.cdf(0)).toBeCloseTo(wrong / events.length, 2);
  });
});

describe('atoms', () => {
  it('repeated decile edges become one PSI bin holding the atom', () => {
    const margins = [0, 0, 0, 0, 0.2, 0.4, 0.6, 0.8, 1, 1];
    const ref = parseReference(
      JSON.parse(JSON.stringify(buildReference(margins.map((m) => marginEvent(m)), { createdAt: CREATED_AT }))),
      'atoms.json',
    );
    const view = ref.segmentFor('all');
    const report = compareToReference(view.confidence, view.confidence, view.compareOptions());
    const bins = report.psi?.bins ?? [];
    // Cuts 0, 0.2, 0.4, 0.6, 0.8, 1: bins (−∞,0) [0,0.2) [0.2,0.4) [0.4,0.6) [0.6,0.8) [0.8,1) [1,∞).
    expect(bins.map((b) => b.lower)).toEqual([-Infinity, 0, 0.2, 0.4, 0.6, 0.8, 1]);
    const expected = [0, 0.4, 0.1, 0.1, 0.1, 0.1, 0.2];
    bins.forEach((b, i) => expect(b.reference).toBeCloseTo(expected[i] as number, 12));
    expect(report.psi?.value).toBe(0);
  });
});
