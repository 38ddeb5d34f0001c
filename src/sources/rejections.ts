/**
 * Why a file line was turned away, and a tally of them. A CSV row can fail before it becomes a message
 * at all; those reasons live with the decoder's in src/events/reasons.ts, so one label set serves
 * `headroom_events_rejected_total{reason}`, and this module names the subset it produces.
 */
import { REJECTION_REASONS } from '../events/index.js';
import type { Rejection, RejectionReason } from '../events/index.js';

export type SourceRejectionReason = Extract<RejectionReason, `csv_${string}`>;

export const SOURCE_REJECTION_REASONS: Readonly<Record<SourceRejectionReason, string>> = {
  csv_field_count: REJECTION_REASONS.csv_field_count,
  csv_bad_quote: REJECTION_REASONS.csv_bad_quote,
  csv_unclosed_quote: REJECTION_REASONS.csv_unclosed_quote,
};

export interface SourceRejection {
  readonly ok: false;
  readonly reason: SourceRejectionReason;
  readonly field: string;
  readonly detail: string;
}

export type LineRejection = Rejection | SourceRejection;
export type LineRejectionReason = RejectionReason | SourceRejectionReason;

export function sourceRejection(reason: SourceRejectionReason, field: string, detail: string): SourceRejection {
  return { ok: false, reason, field, detail };
}

export interface RejectionSummaryRow {
  readonly reason: LineRejectionReason;
  readonly count: number;
  /** Where the first line with this reason was, and what was wrong with it. */
  readonly first: { readonly file: string; readonly line: number; readonly field: string; readonly detail: string };
}

/** Counts per reason and remembers the first place each occurred: a summary a person can act on. */
export class RejectionTally {
  private readonly rows = new Map<LineRejectionReason, { count: number; first: RejectionSummaryRow['first'] }>();
  private n = 0;

  get total(): number {
    return this.n;
  }

  add(rejection: LineRejection, file: string, line: number): void {
    this.n++;
    const row = this.rows.get(rejection.reason);
    if (row !== undefined) row.count++;
    else this.rows.set(rejection.reason, { count: 1, first: { file, line, field: rejection.field, detail: rejection.detail } });
  }

  /** Most frequent reason first. */
  summary(): RejectionSummaryRow[] {
    return [...this.rows].map(([reason, row]) => ({ reason, count: row.count, first: row.first })).sort((a, b) => b.count - a.count);
  }
}

const MAX_DETAIL = 120;

/** The tally as a small table for a terminal: reason, count, and where it first happened. */
export function formatRejectionSummary(tally: RejectionTally, lines: number): string {
  const rows = tally.summary();
  if (rows.length === 0) return '';
  const width = Math.max('reason'.length, ...rows.map((r) => r.reason.length));
  const countWidth = Math.max('count'.length, ...rows.map((r) => String(r.count).length));
  const out = [`rejected ${tally.total} of ${lines} lines:`, `  ${'reason'.padEnd(width)}  ${'count'.padStart(countWidth)}  first at`];
  for (const r of rows) {
    const what = r.first.field === '' ? r.first.detail : `${r.first.field}: ${r.first.detail}`;
    const cut = what.length > MAX_DETAIL ? `${what.slice(0, MAX_DETAIL)}...` : what;
    out.push(`  ${r.reason.padEnd(width)}  ${String(r.count).padStart(countWidth)}  ${r.first.file}:${r.first.line} (${cut})`);
  }
  return `${out.join('\n')}\n`;
}
