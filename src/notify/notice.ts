/**
 * A notice: one alert transition plus what a receiver needs to act on it without asking back (the
 * rule's kind and a sentence saying what it watches, the reading's value and levels, a link). Pure:
 * the webhook body and the log fields are both made here, so the two never disagree.
 */
import type { AlertRule } from '../alerts/config.js';
import { ANY_MODEL } from '../alerts/config.js';
import type { AlertTransition, Reading } from '../alerts/lifecycle.js';

export const WEBHOOK_FORMAT = 'headroom-alert/1';

export interface AlertNotice {
  readonly transition: AlertTransition;
  readonly ruleKind: AlertRule['kind'];
  /** One sentence: what the rule watches and when it fires and clears. */
  readonly description: string;
  /** The figure compared at the transition (a Wilson bound, a CUSUM statistic, PSI or KS D). */
  readonly value: number | null;
  readonly fireLevel: number | null;
  readonly clearLevel: number | null;
  /** The series in the JSON API, when `alerts.linkBase` is set. */
  readonly link: string | null;
}

export interface NoticeOptions {
  /** The reading of the evaluation that made the transition; without it the levels are null. */
  readonly reading?: Reading | null;
  readonly linkBase?: string | null;
}

export function noticeOf(transition: AlertTransition, rule: AlertRule, options: NoticeOptions = {}): AlertNotice {
  const reading = options.reading ?? null;
  return {
    transition,
    ruleKind: rule.kind,
    description: describeRule(rule),
    value: transition.value,
    fireLevel: reading?.fireLevel ?? null,
    clearLevel: reading?.clearLevel ?? null,
    link: options.linkBase ? seriesLink(options.linkBase, transition) : null,
  };
}

/** The series route of the JSON API under `base` (a trailing slash or path on base is kept). */
export function seriesLink(base: string, t: AlertTransition): string {
  const root = base.endsWith('/') ? base.slice(0, -1) : base;
  const part = (s: string): string => encodeURIComponent(s);
  return `${root}/api/series/${part(t.series.model)}/${part(t.series.version)}/${part(t.series.segment)}`;
}

/** Six significant digits at most, no exponent for the sizes seen here: 0.0750000001 → "0.075". */
function num(x: number, digits = 6): string {
  return String(Number(x.toPrecision(digits)));
}

function scope(rule: AlertRule): string {
  const model = rule.model === ANY_MODEL ? 'every model' : rule.model;
  return rule.segmentKey === null ? model : `${model}, each ${rule.segmentKey}`;
}

export function describeRule(rule: AlertRule): string {
  switch (rule.kind) {
    case 'shareRise':
      return (
        `${scope(rule)}: share of margins below ${num(rule.threshold)} over ${rule.window} (Wilson lower bound, z ${num(rule.z, 3)}, ` +
        `at least ${rule.minCount} events) above reference × ${num(1 + rule.tolerance)}; clears at or below reference × ${num(1 + rule.clearTolerance)}`
      );
    case 'earlyWarning':
      return (
        `${scope(rule)}: early warning, a CUSUM of margins below ${num(rule.threshold)} watching for the share to reach ${num(rule.riseFactor)} × reference ` +
        `(about one false alarm per ${num(rule.inControlEvents)} events); clears at or below ${num(rule.clearFraction)} × its decision level`
      );
    case 'drift':
      return `${scope(rule)}: ${rule.statistic === 'psi' ? 'PSI' : 'KS D'} of the ${rule.window} view against the reference above ${num(rule.above)} (at least ${rule.minCount} events); clears at or below ${num(rule.clearBelow)}`;
  }
}

/** The webhook body, `headroom-alert/1`; README "Alert notifications" shows one. Field order is fixed. */
export interface WebhookBody {
  readonly format: typeof WEBHOOK_FORMAT;
  readonly id: string;
  readonly rule: { readonly name: string; readonly kind: AlertRule['kind']; readonly description: string };
  readonly series: { readonly model: string; readonly version: string; readonly segment: string };
  readonly seq: number;
  readonly from: string;
  readonly to: string;
  /** Whether the alert counts as raised after this transition (firing or easing). */
  readonly raised: boolean;
  /** Event time of the evaluation, ISO-8601 UTC, and the same in epoch ms. */
  readonly at: string;
  readonly atMs: number;
  readonly reading: { readonly value: number | null; readonly comparedWith: number | null; readonly fireLevel: number | null; readonly clearLevel: number | null };
  readonly link: string | null;
}

export function webhookBody(n: AlertNotice): WebhookBody {
  const t = n.transition;
  return {
    format: WEBHOOK_FORMAT,
    id: t.id,
    rule: { name: t.rule, kind: n.ruleKind, description: n.description },
    series: { model: t.series.model, version: t.series.version, segment: t.series.segment },
    seq: t.seq,
    from: t.from,
    to: t.to,
    raised: t.to === 'firing' || t.to === 'easing',
    at: isoTime(t.at),
    atMs: t.at,
    reading: { value: finiteOrNull(n.value), comparedWith: finiteOrNull(t.threshold), fireLevel: finiteOrNull(n.fireLevel), clearLevel: finiteOrNull(n.clearLevel) },
    link: n.link,
  };
}

/** Flat fields for one structured log line; names are stable (dashboards and log queries read them). */
export function noticeLogFields(n: AlertNotice): Record<string, string | number | boolean | null> {
  const t = n.transition;
  return {
    alertId: t.id,
    rule: t.rule,
    ruleKind: n.ruleKind,
    model: t.series.model,
    version: t.series.version,
    segment: t.series.segment,
    seq: t.seq,
    from: t.from,
    to: t.to,
    at: isoTime(t.at),
    value: finiteOrNull(n.value),
    comparedWith: finiteOrNull(t.threshold),
    fireLevel: finiteOrNull(n.fireLevel),
    clearLevel: finiteOrNull(n.clearLevel),
    link: n.link,
  };
}

/** JSON has no NaN or Infinity; a figure that is not finite is reported as absent, never as a number. */
function finiteOrNull(x: number | null | undefined): number | null {
  return typeof x === 'number' && Number.isFinite(x) ? x : null;
}

function isoTime(ms: number): string {
  const d = new Date(ms);
  return Number.isNaN(d.getTime()) ? String(ms) : d.toISOString();
}
