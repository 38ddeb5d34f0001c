/**
 * Series for the serve tests: real MarginWindows fed seeded margins, a real reference built, written and
 * read back, and a plain-object WatchedSeriesSource over them. Every margin is kept, so the tests can
 * compute the expected figures straight from the numbers.
 */
import { validateScoredEvent } from '../../../src/events/index.js';
import type { ScoredEvent } from '../../../src/events/index.js';
import { buildReference, formatReference, parseReferenceText } from '../../../src/reference/index.js';
import type { LoadedReference } from '../../../src/reference/index.js';
import { MarginWindows, STANDARD_VIEWS } from '../../../src/sketch/index.js';
import type { PartitionInfo, Readiness, ReferenceOrigin, ReferenceReport, SeriesSnapshot, WatchedSeriesSource } from '../../../src/serve/index.js';
import { rng } from '../events/prng.js';

export const MODEL = 'parcel-damage';
export const VERSION = '2026.11.3';
export const THRESHOLDS = [0.1, 0.25];
export const VIEWS = STANDARD_VIEWS;
/** Minute-aligned, so which bucket an event lands in is plain to see. */
export const T0 = Date.UTC(2026, 10, 20, 6, 0, 0);
export const MINUTE = 60_000;

/** Repeatable data without fixtures (mulberry32, shared with the other unit tests). */
export function seeded(seed: number): () => number {
  return rng(seed).next;
}

/**
 * Confidence margins with atoms at 0 and 1, as real scores have. `power` > 1 pulls the bulk toward 0:
 * a live stream the model is less sure about than it was on its reference data.
 */
export function margins(n: number, seed: number, power: number): number[] {
  const random = seeded(seed);
  return Array.from({ length: n }, () => {
    const u = random();
    if (u < 0.05) return 0;
    if (u < 0.15) return 1;
    return Math.round(random() ** power * 1e6) / 1e6;
  });
}

function marginEvent(value: number, i: number, line: string): ScoredEvent {
  const result = validateScoredEvent({
    id: `r-${i}`,
    model: MODEL,
    version: VERSION,
    time: T0 - 86_400_000 + i,
    score: { kind: 'margin', value },
    segment: { line },
  });
  if (!result.ok) throw new Error(`test event is invalid: ${result.reason} ${result.field}`);
  return result.event;
}

export const REFERENCE_MARGINS = margins(3000, 11, 0.7);

/** Where the fixture's reference came from, as the watcher's source reports it. */
export const ORIGIN: ReferenceOrigin = { model: MODEL, version: VERSION, createdAt: '2026-11-19T00:00:00.000Z', loadedAtMs: T0 - 30 * MINUTE, file: 'current' };

export function reference(): LoadedReference {
  const events = REFERENCE_MARGINS.map((m, i) => marginEvent(m, i, i % 3 === 0 ? '1' : '2'));
  const file = buildReference(events, { createdAt: '2026-11-19T00:00:00.000Z', source: 'serve test', thresholds: THRESHOLDS, segmentKeys: ['line'] });
  return parseReferenceText(formatReference(file), 'references/parcel.json');
}

export interface LiveSeries {
  readonly windows: MarginWindows;
  /** Margins in the order added, with their event times. */
  readonly added: { readonly margin: number; readonly timeMs: number }[];
}

export function live(points: readonly { margin: number; timeMs: number }[]): LiveSeries {
  const windows = new MarginWindows({ thresholds: THRESHOLDS });
  const added: { margin: number; timeMs: number }[] = [];
  for (const p of points) {
    if (windows.add(p.margin, p.timeMs, p.timeMs) !== 'added') throw new Error(`fixture event at ${p.timeMs} was not added`);
    added.push(p);
  }
  return { windows, added };
}

/** `values` spread evenly from `fromMs`, `stepMs` apart. */
export function spread(values: readonly number[], fromMs: number, stepMs: number): { margin: number; timeMs: number }[] {
  return values.map((margin, i) => ({ margin, timeMs: fromMs + i * stepMs }));
}

export interface FakeSource extends WatchedSeriesSource {
  snapshots: SeriesSnapshot[];
  rejected: Map<string, number>;
  ready: Readiness;
  partitionList: PartitionInfo[];
  referenceReport: ReferenceReport;
  seriesCalls: number;
}

export function fakeSource(snapshots: SeriesSnapshot[]): FakeSource {
  const source: FakeSource = {
    snapshots,
    rejected: new Map([
      ['not_json', 3],
      ['bad_time', 1],
    ]),
    ready: { ready: true, reasons: [] },
    partitionList: [
      { topic: 'scores', partition: 0, lagMessages: 12, lastCheckpointMs: T0 + 60 * MINUTE },
      { topic: 'scores', partition: 1, lagMessages: null, lastCheckpointMs: null },
    ],
    referenceReport: {
      loaded: [ORIGIN],
      files: [
        { model: MODEL, path: 'references/parcel.json', reloadErrors: 0, failing: false },
        { model: 'cutter-jam', path: 'references/cutter.json', reloadErrors: 3, failing: true },
      ],
    },
    seriesCalls: 0,
    series() {
      source.seriesCalls += 1;
      return source.snapshots;
    },
    rejections: () => source.rejected,
    readiness: () => source.ready,
    partitions: () => source.partitionList,
    references: () => source.referenceReport,
  };
  return source;
}

/**
 * The world of the tests, at wall time NOW:
 * - `main` (parcel-damage, all): 400 older margins over 20 minutes from T0, then 300 lower margins in the
 *   minute from T0 + 60 min. The 5m view holds only the recent 300; 1h and 24h hold all 700.
 * - `plain` (doc-router): no reference loaded.
 * - `quiet` (parcel-damage, line=9): events long ago, then advanced by an hour: its 5m view is empty. It has no
 *   reference segment of its own, so it faces the version's `all`.
 */
export function world() {
  const ref = reference();
  const older = margins(400, 21, 0.7);
  const recent = margins(300, 22, 1.8);
  const main = live([...spread(older, T0, 3000), ...spread(recent, T0 + 60 * MINUTE, 200)]);
  const plain = live(spread(margins(120, 23, 1), T0 + 55 * MINUTE, 1000));
  const quiet = live(spread(margins(50, 24, 1), T0, 1000));
  quiet.windows.advance(T0 + 61 * MINUTE);
  const snapshots: SeriesSnapshot[] = [
    { model: MODEL, version: VERSION, segment: 'all', events: 705, windows: main.windows, reference: ref.segmentFor('all'), referenceOrigin: ORIGIN },
    { model: 'doc-router', version: '7', segment: 'all', events: 120, windows: plain.windows, reference: undefined },
    { model: MODEL, version: VERSION, segment: 'line=9', events: 50, windows: quiet.windows, reference: ref.segmentFor('line=9'), referenceOrigin: ORIGIN },
  ];
  return { ref, older, recent, main, plain, quiet, source: fakeSource(snapshots), nowMs: T0 + 62 * MINUTE };
}

export function lowShare(values: readonly number[], threshold: number): number {
  return values.filter((m) => m < threshold).length / values.length;
}
