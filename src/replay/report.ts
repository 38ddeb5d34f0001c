/**
 * The report model of a replay (`headroom-report/1`): one entry per window and series, with the figures
 * the watcher's API and /metrics compute for a view (src/serve/report.ts viewReports, the same function),
 * so a replayed window and a live view of the same events say the same thing. Pure: no clock, no I/O.
 *
 * This object is what every writer takes: report.json is it as JSON, report.csv, metrics.om and
 * report.html are written from it.
 *
 * Alerts: each entry has `alerts`, filled by an AlertEvaluator given one series' entries in time order:
 * ruleAlerts (alerts.ts) with a watch configuration's rules, else `noAlerts` and every list is empty.
 */
import type { RejectionReason } from '../events/index.js';
import type { LoadedReference } from '../reference/index.js';
// From the modules themselves, not serve/index.js, which would load prom-client and express.
import { METRIC_QUANTILE_LEVELS } from '../serve/options.js';
import { viewReports } from '../serve/report.js';
import { DEFAULT_QUANTILE_LEVELS } from '../compare/index.js';
import type { MarginDistribution } from '../sketch/index.js';
import type { ClosedWindow } from './engine.js';

export const REPORT_FORMAT = 'headroom-report/1';

/** Levels of every entry's `quantiles`: the comparisons' defaults plus the ones /metrics exports. */
export const REPORT_QUANTILE_LEVELS: readonly number[] = Object.freeze(
  [...new Set([...DEFAULT_QUANTILE_LEVELS, ...METRIC_QUANTILE_LEVELS])].sort((a, b) => a - b),
);

export interface LowMarginEntry {
  readonly threshold: number;
  /** Exact share of the window's events with confidence margin < threshold; null for an empty window. */
  readonly live: number | null;
  /** The reference's stored share at this threshold; null without a reference (or that θ in it). */
  readonly reference: number | null;
  /** Wilson 95% interval of `live`. */
  readonly interval: readonly [number, number];
}

export interface AlertEntry {
  /** The rule's name. */
  readonly rule: string;
  readonly state: string;
  readonly detail?: string;
}

export interface ReportEntry {
  /** ISO-8601, UTC; `end` is exclusive. */
  readonly start: string;
  readonly end: string;
  readonly model: string;
  readonly version: string;
  /** `all`, or `key=value` (one key at a time), as the watcher names series. */
  readonly segment: string;
  /** Events in the window's view (the ones added to its buckets). */
  readonly count: number;
  /** Events of this series in the window refused as later than the lateness allows, or from the future. */
  readonly late: number;
  readonly future: number;
  /** `loaded` when the series was compared with a reference (its segment's own or the version's `all`). */
  readonly reference: 'loaded' | 'none';
  readonly lowMargin: readonly LowMarginEntry[];
  /** null without a reference or with an empty side. */
  readonly ks: { readonly statistic: number; readonly pValue: number | null } | null;
  readonly psi: number | null;
  readonly wasserstein: number | null;
  /** Live confidence-margin quantiles by level ("0.05": ...); null when the window is empty. */
  readonly quantiles: Readonly<Record<string, number | null>>;
  readonly alerts: readonly AlertEntry[];
  /** Label figures of the window's predictions (src/labels/figures.ts); null when it has none to show. */
  readonly labels: LabelEntry | null;
}

export interface LabelEntry {
  /** Labelled predictions in the window. */
  readonly n: number;
  /** Exact share with signed margin <= 0 and its Wilson 95% interval; null share when n = 0. */
  readonly errorRate: number | null;
  readonly errorInterval: readonly [number, number];
  readonly referenceErrorRate: number | null;
  /** P(signed margin <= θ), live and reference, per θ of the grid. */
  readonly marginLoss: readonly { readonly theta: number; readonly live: number | null; readonly reference: number | null }[];
  /** Expected calibration error (10 bins), live and reference; null without probability scores. */
  readonly ece: number | null;
  readonly referenceEce: number | null;
  /** E[min(p, 1 − p)]: the error rate only a calibrated model would have; null unless every event stated a probability. */
  readonly labelFreeError: number | null;
}

/** Why a window's CDF was kept (src/replay/cdf.ts): the series' first and last windows, and its largest KS D. */
export type CdfPick = 'first' | 'last' | 'worst-ks';

export interface WindowCdf {
  readonly start: string;
  readonly end: string;
  /** One window can be several picks at once (e.g. the first and the worst). */
  readonly picked: readonly CdfPick[];
  readonly count: number;
  readonly ks: number | null;
  /** P(margin <= x) at each of ReportCdfs.margins. */
  readonly cdf: readonly number[];
}

export interface SeriesCdfs {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
  /** The reference's P(margin <= x) at each of ReportCdfs.margins; null without a reference. */
  readonly reference: readonly number[] | null;
  /** In time order; at most three. */
  readonly windows: readonly WindowCdf[];
}

export interface ReportCdfs {
  /** The margins every CDF is given at: 0, 0.01, ..., 1. */
  readonly margins: readonly number[];
  /** By model, version and segment. */
  readonly series: readonly SeriesCdfs[];
}

export interface ReportTotals {
  /** Lines read from files (or messages read from Kafka). */
  readonly lines: number;
  /** Events applied to a window. */
  readonly events: number;
  /** Lines turned away, by reason (the codes of headroom_events_rejected_total). */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  /** Events for a window already reported (input not in time order). */
  readonly afterClose: number;
  /** Events of models without settings in the configuration. */
  readonly unwatched: number;
  /** Files (or partitions) that ended early, with what was lost. */
  readonly skipped: readonly { readonly source: string; readonly reason: string }[];
}

export interface ReplayReport {
  readonly format: typeof REPORT_FORMAT;
  /** When the replay ran (ISO-8601). */
  readonly createdAt: string;
  /** What was replayed, in words (files, or topic and time range). */
  readonly source: string;
  /** `1h`, `1d`, ... or `total`. */
  readonly window: string;
  readonly totals: ReportTotals;
  /** By start, then model, version and segment. */
  readonly windows: readonly ReportEntry[];
  /** Confidence-margin CDFs of a few windows per series and of its reference, for drawing (src/replay/cdf.ts). */
  readonly cdfs: ReportCdfs;
}

/** Finds the reference of a model version; undefined when none was given. */
export type ReferenceLookup = (model: string, version: string) => LoadedReference | undefined;

/** The seam for src/alerts: one series' entries in time order in, the alerts of each entry out (same order). */
export type AlertEvaluator = (series: readonly ReportEntry[]) => readonly (readonly AlertEntry[])[];

export const noAlerts: AlertEvaluator = (series) => series.map(() => []);

export function referenceLookup(references: readonly LoadedReference[]): ReferenceLookup {
  const byKey = new Map(references.map((r) => [`${r.model}\u0000${r.version}`, r]));
  return (model, version) => byKey.get(`${model}\u0000${version}`);
}

/** One series' entry in a closed window, with the two distributions it was computed from. */
export interface WindowFigures {
  readonly entry: ReportEntry;
  readonly live: MarginDistribution;
  /** The reference's confidence margins; undefined without a reference. */
  readonly reference: MarginDistribution | undefined;
}

/** The entries of one closed window, one per series, sorted as mergeView sorts (model, version, segment). */
export function windowEntries(closed: ClosedWindow, windowName: string, references: ReferenceLookup): ReportEntry[] {
  return windowFigures(closed, windowName, references).map((f) => f.entry);
}

export function windowFigures(closed: ClosedWindow, windowName: string, references: ReferenceLookup): WindowFigures[] {
  const spec = { name: windowName, durationMs: closed.viewMs };
  const start = new Date(closed.startMs).toISOString();
  const end = new Date(closed.endMs).toISOString();
  return closed.view.series.map((s) => {
    const reference = references(s.model, s.version)?.segmentFor(s.segment);
    const snapshot = {
      model: s.model,
      version: s.version,
      segment: s.segment,
      events: s.events,
      windows: s.windows,
      reference,
      labelled: s.labelled,
      probabilistic: s.events > 0 && s.probabilityScored === s.events,
      ...(s.labels === undefined ? {} : { labels: s.labels }),
    };
    const [v] = viewReports(snapshot, [spec], REPORT_QUANTILE_LEVELS);
    if (v === undefined) throw new RangeError(`view ${closed.viewMs} ms is longer than the series keeps`);
    const counters = s.windows.counters();
    const quantiles: Record<string, number | null> = {};
    for (const q of v.quantiles) quantiles[String(q.q)] = q.live;
    const entry: ReportEntry = {
      start,
      end,
      model: s.model,
      version: s.version,
      segment: s.segment,
      count: v.summary.count,
      late: counters.late,
      future: counters.future,
      reference: reference === undefined ? 'none' : 'loaded',
      lowMargin: v.lowMargin.map((l) => ({ threshold: l.threshold, live: l.live.share, reference: l.referenceShare, interval: [l.live.lower, l.live.upper] as const })),
      ks: v.drift === null ? null : { statistic: v.drift.ks.statistic, pValue: v.drift.ks.pValue },
      psi: v.drift?.psi.value ?? null,
      wasserstein: v.drift?.wasserstein ?? null,
      quantiles,
      alerts: [],
      labels:
        v.labels === null
          ? null
          : {
              n: v.labels.n,
              errorRate: v.labels.errorRate.share,
              errorInterval: [v.labels.errorRate.lower, v.labels.errorRate.upper] as const,
              referenceErrorRate: v.labels.referenceErrorRate,
              marginLoss: v.labels.marginLoss,
              ece: v.labels.calibration?.ece ?? null,
              referenceEce: v.labels.calibration?.referenceEce ?? null,
              labelFreeError: v.labels.labelFree?.estimate ?? null,
            },
    };
    return { entry, live: v.summary.distribution, reference: reference?.confidence };
  });
}

function seriesKey(e: ReportEntry): string {
  return `${e.model}\u0000${e.version}\u0000${e.segment}`;
}

/** Fills every entry's alerts, asking `evaluate` once per series with that series' entries in time order. */
export function withAlerts(entries: readonly ReportEntry[], evaluate: AlertEvaluator): ReportEntry[] {
  const bySeries = new Map<string, number[]>();
  entries.forEach((e, i) => {
    const list = bySeries.get(seriesKey(e));
    if (list === undefined) bySeries.set(seriesKey(e), [i]);
    else list.push(i);
  });
  const out = [...entries];
  for (const indexes of bySeries.values()) {
    const alerts = evaluate(indexes.map((i) => entries[i] as ReportEntry));
    indexes.forEach((i, k) => (out[i] = { ...(entries[i] as ReportEntry), alerts: alerts[k] ?? [] }));
  }
  return out;
}
