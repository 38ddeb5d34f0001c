/**
 * AlertBook: every alert (one per rule and series), its lifecycle and, for early-warning rules, its
 * chart; evaluated by the caller at each tick and saved with toState().
 *
 * Which clock. `nowMs` is whatever the caller evaluates at. The watcher should pass event time (the
 * end of the newest closed bucket, or the merged watermark) rather than the wall clock: then hold,
 * clear and cooldown times are measured in the data's own time, and `headroom replay` over the same
 * events gives the same transitions as `watch` did.
 *
 * Where the state lives, and why not in the partition checkpoints. An alert belongs to a series merged
 * over every partition, while partition state moves between instances at each rebalance; stored per
 * partition it would be split, duplicated, or reset whenever a partition moved. So the book is saved on
 * its own, by whoever evaluates the merged series:
 * - one instance: a file beside the checkpoints (`<checkpoint.dir>/alerts.json`, written atomically
 *   like a checkpoint) after every evaluation tick, before the transitions are sent;
 * - several instances: no one instance sees a whole series, so one evaluator (any instance that reads
 *   every partition's state from the compacted checkpoint topic) evaluates, and saves the book to a
 *   compacted topic keyed by rule and series (one record per alert, `toState().alerts[i]`), so a new
 *   evaluator after a failover resumes from the last record of each key.
 * Either way: save, then notify. A crash between the two re-evaluates from the saved state and yields
 * transitions with the same ids (lifecycle.ts), which the notifier's idempotency key then absorbs; a
 * crash before the save loses nothing, since the chart's bucket cursor is saved with it.
 */
import { z } from 'zod';
import type { AlertRule } from './config.js';
import { ANY_MODEL } from './config.js';
import { cusumThreshold, feedEarlyWarning, type ChartState, type EarlyWarningInput, type ThresholdFor } from './early-warning.js';
import { alertArgument, alertStateInvalid } from './fail.js';
import { ALERT_PHASES, INITIAL_LIFECYCLE, stepLifecycle, type AlertPhase, type AlertTransition, type LifecycleState, type Reading, type SeriesRef } from './lifecycle.js';
import { driftReading, shareRiseReading, type DriftInput, type ShareRiseInput } from './readings.js';
import { fieldPath } from '../field-path.js';

export const ALERT_STATE_FORMAT = 'headroom-alerts/1';

export type AlertInput = ShareRiseInput | DriftInput | EarlyWarningInput;

export interface AlertStatus {
  readonly rule: string;
  readonly kind: AlertRule['kind'];
  readonly series: SeriesRef;
  readonly phase: AlertPhase;
  readonly sinceMs: number | null;
  readonly seq: number;
  /** The last reading; not saved (the next evaluation makes a new one). */
  readonly reading: Reading | null;
  readonly chart: ChartState | null;
}

interface Entry {
  readonly rule: AlertRule;
  readonly series: SeriesRef;
  lifecycle: LifecycleState;
  chart: ChartState | null;
  reading: Reading | null;
}

export interface AlertBookOptions {
  /** How h is found for an early-warning chart; default cusumThreshold, cached per (p0, p1, ARL0). */
  readonly thresholdFor?: ThresholdFor;
}

const finiteMs = z.number().finite();
const chartSchema = z.strictObject({
  p0: z.number().gt(0).lt(1),
  p1: z.number().gt(0).lt(1),
  h: z.number().gt(0).finite(),
  statistic: z.number().min(0).finite(),
  fedThroughMs: finiteMs.nullable(),
  events: z.number().int().min(0),
  lows: z.number().int().min(0),
  signals: z.number().int().min(0),
});
const alertSchema = z.strictObject({
  rule: z.string().min(1),
  kind: z.enum(['shareRise', 'earlyWarning', 'drift']),
  model: z.string().min(1),
  version: z.string().min(1),
  segment: z.string().min(1),
  phase: z.enum(ALERT_PHASES),
  sinceMs: finiteMs.nullable(),
  seq: z.number().int().min(0),
  chart: chartSchema.nullable(),
});
const bookSchema = z.strictObject({ format: z.literal(ALERT_STATE_FORMAT), alerts: z.array(alertSchema) });

export type SavedAlert = z.output<typeof alertSchema>;
export interface AlertBookState {
  readonly format: typeof ALERT_STATE_FORMAT;
  readonly alerts: readonly SavedAlert[];
}

function keyOf(rule: string, s: SeriesRef): string {
  return [rule, s.model, s.version, s.segment].join('\u0000');
}

/** A rule's series: its model (or every model), and segment "all" or every `key=...` of its segment key. */
export function ruleApplies(rule: AlertRule, series: SeriesRef): boolean {
  if (rule.model !== ANY_MODEL && rule.model !== series.model) return false;
  return rule.segmentKey === null ? series.segment === 'all' : series.segment.startsWith(`${rule.segmentKey}=`);
}

export class AlertBook {
  readonly rules: readonly AlertRule[];
  readonly #byName: ReadonlyMap<string, AlertRule>;
  readonly #entries = new Map<string, Entry>();
  readonly #thresholdFor: ThresholdFor;

  constructor(rules: readonly AlertRule[], options: AlertBookOptions = {}) {
    const byName = new Map<string, AlertRule>();
    for (const rule of rules) {
      if (byName.has(rule.name)) throw alertArgument(`rule name ${JSON.stringify(rule.name)} is used twice`, { rule: rule.name });
      byName.set(rule.name, rule);
    }
    this.rules = rules;
    this.#byName = byName;
    const cache = new Map<string, number>();
    const solve = options.thresholdFor ?? cusumThreshold;
    this.#thresholdFor = (p0, p1, n) => {
      const key = `${p0}|${p1}|${n}`;
      let h = cache.get(key);
      if (h === undefined) cache.set(key, (h = solve(p0, p1, n)));
      return h;
    };
  }

  /**
   * Restores a saved book under the current rules. Alerts of rules no longer configured, or whose kind
   * changed, are left out and listed in `dropped`; a changed rule of the same kind keeps its phase
   * (its chart restarts by itself if p0 or p1 changed).
   */
  static fromState(rules: readonly AlertRule[], state: unknown, options: AlertBookOptions = {}): { book: AlertBook; dropped: readonly string[] } {
    const parsed = bookSchema.safeParse(state);
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      throw alertStateInvalid(fieldPath(issue?.path ?? []) || '(root)', issue?.message ?? 'invalid');
    }
    const book = new AlertBook(rules, options);
    const dropped: string[] = [];
    parsed.data.alerts.forEach((a, i) => {
      const at = `alerts[${i}]`;
      const series = { model: a.model, version: a.version, segment: a.segment };
      const rule = book.#byName.get(a.rule);
      if (rule === undefined || rule.kind !== a.kind || !ruleApplies(rule, series)) {
        dropped.push(`${a.rule} ${a.model}/${a.version}/${a.segment}`);
        return;
      }
      if (a.chart !== null && a.kind !== 'earlyWarning') throw alertStateInvalid(`${at}.chart`, `only an earlyWarning alert has a chart, this is ${a.kind}`);
      if (a.chart !== null && a.chart.lows > a.chart.events) throw alertStateInvalid(`${at}.chart.lows`, 'exceeds chart.events');
      if (a.sinceMs === null && a.phase !== 'calm') throw alertStateInvalid(`${at}.sinceMs`, `is null in phase ${a.phase}`);
      const key = keyOf(a.rule, series);
      if (book.#entries.has(key)) throw alertStateInvalid(at, 'repeats an alert saved earlier');
      book.#entries.set(key, { rule, series, lifecycle: { phase: a.phase, sinceMs: a.sinceMs, seq: a.seq }, chart: a.chart, reading: null });
    });
    return { book, dropped };
  }

  /** The rules that watch `series`. */
  rulesFor(series: SeriesRef): AlertRule[] {
    return this.rules.filter((r) => ruleApplies(r, series));
  }

  /**
   * Evaluates one rule on one series at nowMs and returns its transitions (often none). The input's
   * shape follows the rule's kind: view counts for shareRise, figures for drift, closed buckets for
   * earlyWarning.
   */
  evaluate(ruleName: string, series: SeriesRef, input: AlertInput, nowMs: number): readonly AlertTransition[] {
    const rule = this.#byName.get(ruleName);
    if (rule === undefined) throw alertArgument(`no alert rule named ${JSON.stringify(ruleName)}`, { rule: ruleName });
    if (!ruleApplies(rule, series)) throw alertArgument(`rule ${JSON.stringify(ruleName)} does not watch ${series.model}/${series.segment}`, { rule: ruleName, series });
    if (!Number.isFinite(nowMs)) throw alertArgument(`nowMs must be finite, got ${nowMs}`, { nowMs });
    const key = keyOf(rule.name, series);
    let entry = this.#entries.get(key);
    if (entry === undefined) {
      entry = { rule, series: { model: series.model, version: series.version, segment: series.segment }, lifecycle: INITIAL_LIFECYCLE, chart: null, reading: null };
      this.#entries.set(key, entry);
    }
    if (entry.lifecycle.sinceMs !== null && nowMs < entry.lifecycle.sinceMs) {
      throw alertArgument(`nowMs ${nowMs} is before the alert's last transition at ${entry.lifecycle.sinceMs}; evaluation time must not go back`, { nowMs });
    }
    let reading: Reading;
    switch (rule.kind) {
      case 'shareRise':
        reading = shareRiseReading(rule, requireInput(input, 'low', rule.name) as ShareRiseInput);
        break;
      case 'drift':
        reading = driftReading(rule, requireInput(input, 'ks', rule.name) as DriftInput);
        break;
      case 'earlyWarning': {
        const fed = feedEarlyWarning(entry.chart, rule, requireInput(input, 'buckets', rule.name) as EarlyWarningInput, this.#thresholdFor);
        entry.chart = fed.state;
        reading = fed.reading;
        break;
      }
    }
    const step = stepLifecycle(entry.lifecycle, reading, rule, nowMs, { rule: rule.name, series: entry.series });
    entry.lifecycle = step.state;
    entry.reading = reading;
    return step.transitions;
  }

  status(): AlertStatus[] {
    return [...this.#entries.values()].sort(byKey).map((e) => ({ rule: e.rule.name, kind: e.rule.kind, series: e.series, ...e.lifecycle, reading: e.reading, chart: e.chart }));
  }

  /** The alert's last reading; null before its first evaluation. */
  readingOf(ruleName: string, series: SeriesRef): Reading | null {
    return this.#entries.get(keyOf(ruleName, series))?.reading ?? null;
  }

  /** When the alert last changed phase; null before its first transition. Evaluation time may not go before it. */
  lastTransitionMs(ruleName: string, series: SeriesRef): number | null {
    return this.#entries.get(keyOf(ruleName, series))?.lifecycle.sinceMs ?? null;
  }

  phaseOf(ruleName: string, series: SeriesRef): AlertPhase {
    return this.#entries.get(keyOf(ruleName, series))?.lifecycle.phase ?? 'calm';
  }

  /** Plain JSON in a fixed order (rule, model, version, segment), so equal books save equal bytes. */
  toState(): AlertBookState {
    return {
      format: ALERT_STATE_FORMAT,
      alerts: [...this.#entries.values()].sort(byKey).map((e) => ({
        rule: e.rule.name,
        kind: e.rule.kind,
        model: e.series.model,
        version: e.series.version,
        segment: e.series.segment,
        phase: e.lifecycle.phase,
        sinceMs: e.lifecycle.sinceMs,
        seq: e.lifecycle.seq,
        chart: e.chart,
      })),
    };
  }
}

function byKey(a: Entry, b: Entry): number {
  const x = keyOf(a.rule.name, a.series);
  const y = keyOf(b.rule.name, b.series);
  return x < y ? -1 : x > y ? 1 : 0;
}

function requireInput(input: AlertInput, field: string, rule: string): AlertInput {
  if (typeof input !== 'object' || input === null || !(field in input)) throw alertArgument(`rule ${JSON.stringify(rule)} needs an input with ${field}`, { rule });
  return input;
}
