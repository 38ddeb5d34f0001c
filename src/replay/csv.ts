/**
 * report.csv: one row per window and series, for a spreadsheet. Columns are fixed for a report: one set
 * per low-margin threshold found in it and one per quantile level; a cell is empty where a figure does
 * not exist (no reference, an empty window, a threshold another model has). Names are quoted when they
 * hold a comma, quote or line break (RFC 4180), and a cell starting with = + - @ gets a leading quote
 * mark so a spreadsheet shows a model name as text instead of running it as a formula.
 */
import type { ReplayReport } from './report.js';
import { REPORT_QUANTILE_LEVELS } from './report.js';

function cell(value: string | number | null | undefined): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') return String(value);
  const text = /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function reportCsv(report: ReplayReport): string {
  const thresholds = [...new Set(report.windows.flatMap((e) => e.lowMargin.map((l) => l.threshold)))].sort((a, b) => a - b);
  const header = ['start', 'end', 'model', 'version', 'segment', 'count', 'late', 'future', 'reference'];
  for (const t of thresholds) header.push(`low_margin_${t}`, `low_margin_${t}_lower`, `low_margin_${t}_upper`, `reference_low_margin_${t}`);
  header.push('ks', 'ks_p_value', 'psi', 'wasserstein', ...REPORT_QUANTILE_LEVELS.map((q) => `quantile_${q}`), 'alerts');
  // Label columns last, so the columns before them keep their places.
  header.push('labelled', 'error_rate', 'error_rate_lower', 'error_rate_upper', 'reference_error_rate', 'ece', 'reference_ece', 'label_free_error');
  const rows = [header.join(',')];
  for (const e of report.windows) {
    const row: (string | number | null | undefined)[] = [e.start, e.end, e.model, e.version, e.segment, e.count, e.late, e.future, e.reference];
    for (const t of thresholds) {
      const l = e.lowMargin.find((x) => x.threshold === t);
      row.push(l?.live, l?.interval[0], l?.interval[1], l?.reference);
    }
    row.push(e.ks?.statistic, e.ks?.pValue, e.psi, e.wasserstein, ...REPORT_QUANTILE_LEVELS.map((q) => e.quantiles[String(q)]));
    row.push(e.alerts.map((a) => a.rule).join(' '));
    const l = e.labels;
    row.push(l?.n, l?.errorRate, l?.errorInterval[0], l?.errorInterval[1], l?.referenceErrorRate, l?.ece, l?.referenceEce, l?.labelFreeError);
    rows.push(row.map(cell).join(','));
  }
  return `${rows.join('\n')}\n`;
}
