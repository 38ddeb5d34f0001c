/**
 * The CDFs report.html draws against the reference. Keeping every window's would make report.json grow
 * with the replay's length, so each series keeps a bounded set: its first window, its last, and the one
 * with the largest KS D (the one a reader most wants to see next to the reference), at most three.
 *
 * Each CDF is P(margin <= x) at the 101 margins 0, 0.01, ..., 1, rounded to 5 decimals: a drawing,
 * not a figure. KS, PSI, Wasserstein and the low-margin shares in the entries stay the exact ones.
 * An atom (e.g. many margins of exactly 0) shows as the CDF's value at that margin. Pure: no I/O.
 */
import type { MarginDistribution } from '../sketch/index.js';
import type { CdfPick, ReportCdfs, ReportEntry, SeriesCdfs, WindowCdf } from './report.js';

export const CDF_MARGINS: readonly number[] = Object.freeze(Array.from({ length: 101 }, (_, i) => i / 100));

const round5 = (x: number): number => Math.round(x * 1e5) / 1e5;

export function cdfPoints(distribution: MarginDistribution): number[] {
  return CDF_MARGINS.map((x) => round5(distribution.cdf(x)));
}

interface Held {
  readonly start: string;
  readonly end: string;
  readonly count: number;
  readonly ks: number | null;
  readonly cdf: readonly number[];
}

interface SeriesPicks {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
  reference: readonly number[] | null;
  first?: Held;
  last?: Held;
  worst?: Held;
}

export class CdfPicker {
  private readonly bySeries = new Map<string, SeriesPicks>();

  /** One series' entry of a closed window, with the distributions it was computed from. Windows may come in any order. */
  observe(entry: ReportEntry, live: MarginDistribution, reference: MarginDistribution | undefined): void {
    if (entry.count === 0 || live.count === 0) return;
    const key = `${entry.model}\u0000${entry.version}\u0000${entry.segment}`;
    let picks = this.bySeries.get(key);
    if (picks === undefined) {
      picks = { model: entry.model, version: entry.version, segment: entry.segment, reference: null };
      this.bySeries.set(key, picks);
    }
    // The reference of a series is one file's for the whole replay: computed once.
    if (picks.reference === null && reference !== undefined && reference.count > 0) picks.reference = cdfPoints(reference);
    let held: Held | undefined;
    const hold = (): Held => (held ??= { start: entry.start, end: entry.end, count: entry.count, ks: entry.ks?.statistic ?? null, cdf: cdfPoints(live) });
    if (picks.first === undefined || entry.start < picks.first.start) picks.first = hold();
    if (picks.last === undefined || entry.start > picks.last.start) picks.last = hold();
    const ks = entry.ks?.statistic;
    if (ks !== undefined) {
      const worst = picks.worst;
      // Ties go to the earlier window: the first time the series looked this far off.
      if (worst === undefined || worst.ks === null || ks > worst.ks || (ks === worst.ks && entry.start < worst.start)) picks.worst = hold();
    }
  }

  result(): ReportCdfs {
    const series: SeriesCdfs[] = [...this.bySeries.values()]
      .sort((a, b) => compare(a.model, b.model) || compare(a.version, b.version) || compare(a.segment, b.segment))
      .map((p) => {
        const windows = new Map<string, { held: Held; picked: CdfPick[] }>();
        const add = (held: Held | undefined, pick: CdfPick): void => {
          if (held === undefined) return;
          const w = windows.get(held.start);
          if (w === undefined) windows.set(held.start, { held, picked: [pick] });
          else w.picked.push(pick);
        };
        add(p.first, 'first');
        add(p.last, 'last');
        add(p.worst, 'worst-ks');
        const list: WindowCdf[] = [...windows.values()]
          .sort((a, b) => compare(a.held.start, b.held.start))
          .map(({ held, picked }) => ({ start: held.start, end: held.end, picked, count: held.count, ks: held.ks, cdf: held.cdf }));
        return { model: p.model, version: p.version, segment: p.segment, reference: p.reference, windows: list };
      });
    return { margins: CDF_MARGINS, series };
  }
}

function compare(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
