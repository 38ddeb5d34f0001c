/**
 * metrics.om: the replayed windows as OpenMetrics text with timestamps, for
 * `promtool tsdb create-blocks-from openmetrics metrics.om DATA_DIR`. Names and labels are the watcher's
 * /metrics ones (src/serve/metrics.ts), with the replay window's name as `window`, so dashboards and
 * rules written for the live metrics read backfilled history as they are.
 *
 * Time. A window's figures are known at its end, so its samples start there; they are repeated every
 * `stepMs` until the next window's end (as a live gauge would keep answering between scrapes), because
 * Prometheus looks back only 5 minutes from a query time and a single sample per hour would show as a
 * dot, not a line. stepMs 0 writes one sample per window, at its end. `total` is one sample at its end.
 * `headroom_events_total` is the running count of each series at each window's end, as a counter.
 *
 * Layout (what promtool needs): each family once, its HELP and TYPE first; within it, one label set at a
 * time with its samples in increasing time; timestamps in seconds; `# EOF` last. Rejected lines carry no
 * time, so `headroom_events_rejected_total` is not written (the report's totals hold them).
 */
import { decimalLabel, METRIC_QUANTILE_LEVELS } from '../serve/options.js';
import type { ReplayReport, ReportEntry } from './report.js';

interface Family {
  readonly name: string;
  readonly type: 'gauge' | 'counter';
  readonly help: string;
  /** [label pairs, value] per entry; undefined: no sample for that entry. */
  readonly points: (e: ReportEntry, window: string) => readonly (readonly [Record<string, string>, number])[];
}

const series = (e: ReportEntry): Record<string, string> => ({ model: e.model, version: e.version, segment: e.segment });

const FAMILIES: readonly Family[] = [
  {
    name: 'headroom_window_events',
    type: 'gauge',
    help: 'Events in the window (the denominator of the window ratios).',
    points: (e, window) => [[{ ...series(e), window }, e.count]],
  },
  {
    name: 'headroom_low_margin_ratio',
    type: 'gauge',
    help: 'Exact share of predictions in the window whose confidence margin is below the threshold.',
    points: (e, window) => e.lowMargin.flatMap((l) => (l.live === null ? [] : [[{ ...series(e), window, threshold: decimalLabel(l.threshold) }, l.live] as const])),
  },
  {
    name: 'headroom_reference_low_margin_ratio',
    type: 'gauge',
    help: 'Share of reference predictions whose confidence margin is below the threshold, as the reference file stores it.',
    points: (e) => e.lowMargin.flatMap((l) => (l.reference === null ? [] : [[{ ...series(e), threshold: decimalLabel(l.threshold) }, l.reference] as const])),
  },
  {
    name: 'headroom_margin_quantile',
    type: 'gauge',
    help: 'Confidence-margin quantile at the level in the window (from the sketch).',
    // The levels /metrics exports, not every level of the report: each is a series per window and segment.
    points: (e, window) =>
      METRIC_QUANTILE_LEVELS.flatMap((level) => {
        const q = e.quantiles[String(level)];
        return q === null || q === undefined ? [] : [[{ ...series(e), window, level: decimalLabel(level) }, q] as const];
      }),
  },
  {
    name: 'headroom_drift_ks',
    type: 'gauge',
    help: 'Kolmogorov-Smirnov D between the window and the reference confidence margins.',
    points: (e, window) => (e.ks === null ? [] : [[{ ...series(e), window }, e.ks.statistic]]),
  },
  {
    name: 'headroom_drift_psi',
    type: 'gauge',
    help: 'Population stability index of the window over the reference deciles.',
    points: (e, window) => (e.psi === null ? [] : [[{ ...series(e), window }, e.psi]]),
  },
  {
    name: 'headroom_drift_wasserstein',
    type: 'gauge',
    help: 'Wasserstein-1 distance between the window and the reference confidence margins.',
    points: (e, window) => (e.wasserstein === null ? [] : [[{ ...series(e), window }, e.wasserstein]]),
  },
];

function escapeLabel(value: string): string {
  return value.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n');
}

function labelText(labels: Record<string, string>): string {
  return Object.entries(labels)
    .map(([k, v]) => `${k}="${escapeLabel(v)}"`)
    .join(',');
}

function seconds(ms: number): string {
  return ms % 1000 === 0 ? String(ms / 1000) : (ms / 1000).toFixed(3);
}

/** Sample times of one entry: its end, then every step until the next window's end. */
function timesOf(e: ReportEntry, stepMs: number, total: boolean): number[] {
  const start = Date.parse(e.start);
  const end = Date.parse(e.end);
  if (total || stepMs <= 0) return [end];
  const length = end - start;
  const out: number[] = [];
  for (let t = end; t < end + length; t += stepMs) out.push(t);
  return out;
}

/** The lines of metrics.om, in order; the caller writes them (a long replay makes a large file). */
export function* openMetricsLines(report: ReplayReport, stepMs: number): Generator<string> {
  const total = report.window === 'total';
  // Entries are sorted by window start; grouping by label set keeps each one's samples in time order.
  const groups = (family: Family): Map<string, { labels: string; samples: [number, number][] }> => {
    const out = new Map<string, { labels: string; samples: [number, number][] }>();
    for (const e of report.windows) {
      const times = timesOf(e, stepMs, total);
      for (const [labels, value] of family.points(e, report.window)) {
        const text = labelText(labels);
        let g = out.get(text);
        if (g === undefined) out.set(text, (g = { labels: text, samples: [] }));
        for (const t of times) g.samples.push([t, value]);
      }
    }
    return out;
  };
  yield `# HELP headroom_events Scored events routed to a series, late and future ones included.\n`;
  yield `# TYPE headroom_events counter\n`;
  const running = new Map<string, { labels: string; samples: [number, number][] }>();
  for (const e of report.windows) {
    const text = labelText(series(e));
    let g = running.get(text);
    if (g === undefined) running.set(text, (g = { labels: text, samples: [] }));
    const sofar = (g.samples.at(-1)?.[1] ?? 0) + e.count + e.late + e.future;
    for (const t of timesOf(e, stepMs, total)) g.samples.push([t, sofar]);
  }
  for (const g of running.values()) for (const [t, v] of dedupe(g.samples)) yield `headroom_events_total{${g.labels}} ${v} ${seconds(t)}\n`;
  for (const family of FAMILIES) {
    yield `# HELP ${family.name} ${family.help}\n`;
    yield `# TYPE ${family.name} ${family.type}\n`;
    for (const g of groups(family).values()) for (const [t, v] of dedupe(g.samples)) yield `${family.name}{${g.labels}} ${v} ${seconds(t)}\n`;
  }
  yield '# EOF\n';
}

/**
 * Samples of one label set in strictly increasing time. A series silent for some windows has gaps, never
 * overlaps, except the reference ratio (no window label) which repeats per window: the later one wins.
 */
function dedupe(samples: [number, number][]): [number, number][] {
  const out: [number, number][] = [];
  for (const s of samples) {
    const last = out.at(-1);
    if (last !== undefined && last[0] >= s[0]) out[out.length - 1] = s;
    else out.push(s);
  }
  return out;
}
