/**
 * The watch configuration's alert rules over a replay's windows: the AlertEvaluator the report takes.
 * Each series gets a book of its own, fed its windows in time order at each window's end (event time),
 * so hold, clear and cooldown times pass as they did in the data.
 *
 * What differs from `watch`, on purpose: a replay has one view per window (`--window`), so a share-rise
 * or drift rule reads the replay window instead of the view its `window` names, and an early-warning
 * chart is fed each replay window as one bucket. With `--window` equal to the rule's window and the
 * bucket, the readings are those of the live rule at the window ends; otherwise they are the rule's
 * conditions at the replay's grain, and the report says which window they read.
 */
import { AlertBook } from '../alerts/index.js';
import type { AlertInput, AlertRule, AlertTransition, ThresholdFor } from '../alerts/index.js';
import type { AlertEntry, AlertEvaluator, ReportEntry } from './report.js';

/** The figures a rule reads from one report entry. */
function inputOf(rule: AlertRule, entry: ReportEntry): AlertInput {
  const count = entry.count;
  if (rule.kind === 'drift') return { count, ks: entry.ks?.statistic ?? null, psi: entry.psi };
  const at = entry.lowMargin.find((l) => l.threshold === rule.threshold);
  // The entry holds the exact share of an exact count: share × count gives the count back exactly.
  const low = at?.live === null || at === undefined ? 0 : Math.round(at.live * count);
  const referenceShare = at?.reference ?? null;
  if (rule.kind === 'shareRise') return { low, count, referenceShare };
  return { referenceShare, buckets: count === 0 ? [] : [{ startMs: Date.parse(entry.start), endMs: Date.parse(entry.end), count, low }] };
}

function describe(t: AlertTransition): string {
  return `${t.from} → ${t.to} at ${new Date(t.at).toISOString()}`;
}

/**
 * Each entry lists the rules whose alert is not calm after that window, with their phase, and the
 * transitions made in it. `thresholdFor` is for tests (a fixed CUSUM level); default the book's own.
 */
export function ruleAlerts(rules: readonly AlertRule[], thresholdFor?: ThresholdFor): AlertEvaluator {
  return (series) => {
    const first = series[0];
    if (first === undefined) return [];
    const ref = { model: first.model, version: first.version, segment: first.segment };
    const book = new AlertBook(rules, thresholdFor === undefined ? {} : { thresholdFor });
    const applying = book.rulesFor(ref);
    return series.map((entry) => {
      const at = Date.parse(entry.end);
      const out: AlertEntry[] = [];
      for (const rule of applying) {
        let transitions: readonly AlertTransition[];
        try {
          transitions = book.evaluate(rule.name, ref, inputOf(rule, entry), Math.max(at, book.lastTransitionMs(rule.name, ref) ?? -Infinity));
        } catch (error) {
          out.push({ rule: rule.name, state: 'not evaluated', detail: error instanceof Error ? error.message : String(error) });
          continue;
        }
        const phase = book.phaseOf(rule.name, ref);
        if (phase === 'calm' && transitions.length === 0) continue;
        const reading = book.readingOf(rule.name, ref);
        const detail = [...transitions.map(describe), ...(reading?.value == null ? [] : [`value ${reading.value.toPrecision(4)} against ${reading.fireLevel?.toPrecision(4) ?? '-'}`])].join('; ');
        out.push({ rule: rule.name, state: phase, ...(detail === '' ? {} : { detail }) });
      }
      return out;
    });
  };
}
