/**
 * The `alerts` section of the watch configuration: a list of rules, each for one model (or "*", every
 * model) and either its whole-model series (`segment="all"`) or every series of one segment key
 * (`segmentKey: line` → `line=1`, `line=2`, ...). Three kinds:
 *
 * - `shareRise`: the Wilson lower bound of the live low-margin share at θ (`threshold`) over a view
 *   (`window`) is above reference × (1 + `tolerance`), with at least `minCount` events in the view;
 * - `earlyWarning`: a Bernoulli CUSUM on the low-margin indicator at θ, watching for a rise to
 *   `riseFactor` × the reference share, its decision level set so that the chart alarms once per
 *   `inControlEvents` events on average while the share stays at the reference (early-warning.ts);
 * - `drift`: KS D or PSI of a view against the reference above `above`.
 *
 * Every rule shares one lifecycle (lifecycle.ts): the condition must hold for `holdFor` before the
 * alert fires, it clears only once the figure has stayed at or below a lower clear level for `clearFor`,
 * and after clearing it rests for `cooldown` before it can start again.
 *
 * The lead plugs `alertsSectionSchema` into src/config/schema.ts; cross-checks against the rest of the
 * file (a model, window, θ or segment key the rule names must exist) are in checkAlertRules.
 */
import { z } from 'zod';
import { Z_95 } from '../compare/wilson.js';
import { parseDuration, type DurationResult } from '../config/durations.js';
import { HeadroomError } from '../errors.js';
import { fieldPath } from '../field-path.js';

export const ANY_MODEL = '*';

/**
 * Defaults, with the reasons. The early-warning figures they give at a 5 % reference share and a
 * doubling (from bernoulliCusumArl): h ≈ 11.8, one false alarm per 10⁷ in-control events (0.1 per
 * 10⁶), a mean delay of about 540 events after the share doubles (test/bench/alert-simulation.ts).
 */
export const ALERT_DEFAULTS = Object.freeze({
  window: '1h',
  /** shareRise: fire when the lower bound is 50 % above the reference share... */
  tolerance: 0.5,
  /** ...and clear once it is no more than 25 % above (clearTolerance defaults to tolerance / 2). */
  clearToleranceFraction: 0.5,
  /** Below this many events a view says nothing (the Wilson bound would, but it would be weak and noisy). */
  minCount: 500,
  /** Two-sided 95 % interval: its lower end is a one-sided 97.5 % bound. */
  z: Z_95,
  /** earlyWarning: watch for a doubling of the low-margin share. */
  riseFactor: 2,
  /** earlyWarning: mean events between false alarms at the reference share (ARL0). */
  inControlEvents: 10_000_000,
  /** earlyWarning: clear once the CUSUM has fallen to half its decision level. */
  clearFraction: 0.5,
  /** drift: PSI 0.25 and 0.1 are the usual "shifted" and "stable" bands (common practice, not a law). */
  psiAbove: 0.25,
  psiClearBelow: 0.1,
  /** drift: KS D of 0.1, cleared at half of it (a rule of thumb of ours; D does not shrink with n). */
  ksAbove: 0.1,
  ksClearFraction: 0.5,
  /** The CUSUM already accumulates evidence, so it fires at once; the others need the condition for 5m. */
  holdFor: { shareRise: '5m', earlyWarning: '0s', drift: '10m' },
  clearFor: '10m',
  cooldown: '30m',
});

const ZERO_DURATION = /^0+(\.0+)?\s*(ms|s|m|h|d)$/;

/** Like the config's durations (a unit is required), but zero is allowed: "no hold". */
function readDuration(value: unknown): DurationResult {
  return typeof value === 'string' && ZERO_DURATION.test(value.trim()) ? { ok: true, ms: 0 } : parseDuration(value);
}

const duration = z.unknown().transform((value, ctx) => {
  const parsed = readDuration(value);
  if (parsed.ok) return parsed.ms;
  ctx.addIssue({ code: 'custom', message: parsed.detail });
  return z.NEVER;
});

const label = z
  .string({ error: 'must be a string' })
  .min(1, { error: 'must not be empty' })
  .max(128, { error: 'must be at most 128 characters' })
  // eslint-disable-next-line no-control-regex
  .refine((s) => !/[\u0000-\u001f\u007f]/.test(s), { error: 'must not hold control characters' });
const unitInterval = z.number({ error: 'must be a number' }).gt(0, { error: 'must be in (0, 1)' }).lt(1, { error: 'must be in (0, 1)' });
const positive = z.number({ error: 'must be a number' }).gt(0, { error: 'must be greater than 0' });
const whole = z.number({ error: 'must be a number' }).int({ error: 'must be a whole number' }).min(1, { error: 'must be at least 1' });

const common = {
  name: label,
  model: label.default(ANY_MODEL),
  /** null: the whole-model series only; a key: every series of that key (`key=value`, `key=other`). */
  segmentKey: label.nullable().default(null),
  holdFor: duration.optional(),
  clearFor: duration.prefault(ALERT_DEFAULTS.clearFor),
  cooldown: duration.prefault(ALERT_DEFAULTS.cooldown),
};

const shareRise = z.strictObject({
  kind: z.literal('shareRise'),
  ...common,
  threshold: unitInterval,
  window: label.default(ALERT_DEFAULTS.window),
  tolerance: z.number({ error: 'must be a number' }).min(0, { error: 'must be at least 0' }).default(ALERT_DEFAULTS.tolerance),
  clearTolerance: z.number({ error: 'must be a number' }).min(0, { error: 'must be at least 0' }).optional(),
  minCount: whole.default(ALERT_DEFAULTS.minCount),
  z: positive.default(ALERT_DEFAULTS.z),
});

const earlyWarning = z.strictObject({
  kind: z.literal('earlyWarning'),
  ...common,
  threshold: unitInterval,
  riseFactor: z.number({ error: 'must be a number' }).gt(1, { error: 'must be greater than 1 (the chart watches for a rise)' }).default(ALERT_DEFAULTS.riseFactor),
  inControlEvents: z.number({ error: 'must be a number' }).min(100, { error: 'must be at least 100' }).max(1e12, { error: 'must be at most 1e12' }).default(ALERT_DEFAULTS.inControlEvents),
  clearFraction: z.number({ error: 'must be a number' }).min(0, { error: 'must be in [0, 1)' }).lt(1, { error: 'must be in [0, 1)' }).default(ALERT_DEFAULTS.clearFraction),
});

const drift = z.strictObject({
  kind: z.literal('drift'),
  ...common,
  statistic: z.enum(['psi', 'ks'], { error: 'must be psi or ks' }),
  window: label.default(ALERT_DEFAULTS.window),
  above: positive.optional(),
  clearBelow: z.number({ error: 'must be a number' }).min(0, { error: 'must be at least 0' }).optional(),
  minCount: whole.default(ALERT_DEFAULTS.minCount),
});

const KINDS = 'shareRise, earlyWarning or drift';

const rule = z
  .discriminatedUnion('kind', [shareRise, earlyWarning, drift], { error: `must be one of ${KINDS}` })
  .superRefine((r, ctx) => {
    if (r.kind === 'shareRise' && r.clearTolerance !== undefined && r.clearTolerance >= r.tolerance) {
      ctx.addIssue({ code: 'custom', path: ['clearTolerance'], message: `must be below tolerance (${r.tolerance}): the clear level must sit under the fire level, or the alert flaps` });
    }
    if (r.kind === 'drift') {
      const above = r.above ?? defaultAbove(r.statistic);
      const clearBelow = r.clearBelow ?? defaultClearBelow(r.statistic, above);
      if (clearBelow >= above) ctx.addIssue({ code: 'custom', path: ['clearBelow'], message: `must be below above (${above}): the clear level must sit under the fire level, or the alert flaps` });
    }
  })
  .transform((r): AlertRule => {
    const timing = { holdMs: r.holdFor ?? durationMs(ALERT_DEFAULTS.holdFor[r.kind]), clearMs: r.clearFor, cooldownMs: r.cooldown };
    const base = { name: r.name, model: r.model, segmentKey: r.segmentKey, ...timing };
    switch (r.kind) {
      case 'shareRise':
        return { ...base, kind: r.kind, threshold: r.threshold, window: r.window, tolerance: r.tolerance, clearTolerance: r.clearTolerance ?? r.tolerance * ALERT_DEFAULTS.clearToleranceFraction, minCount: r.minCount, z: r.z };
      case 'earlyWarning':
        return { ...base, kind: r.kind, threshold: r.threshold, riseFactor: r.riseFactor, inControlEvents: r.inControlEvents, clearFraction: r.clearFraction };
      case 'drift': {
        const above = r.above ?? defaultAbove(r.statistic);
        return { ...base, kind: r.kind, statistic: r.statistic, window: r.window, above, clearBelow: r.clearBelow ?? defaultClearBelow(r.statistic, above), minCount: r.minCount };
      }
    }
  });

/** A default written in this file; it parses, or the tests of the defaults fail. */
function durationMs(text: string): number {
  const d = readDuration(text);
  if (!d.ok) throw new Error(`bad default duration ${text}`);
  return d.ms;
}

function defaultAbove(statistic: 'psi' | 'ks'): number {
  return statistic === 'psi' ? ALERT_DEFAULTS.psiAbove : ALERT_DEFAULTS.ksAbove;
}

function defaultClearBelow(statistic: 'psi' | 'ks', above: number): number {
  return statistic === 'psi' ? Math.min(ALERT_DEFAULTS.psiClearBelow, above / 2) : above * ALERT_DEFAULTS.ksClearFraction;
}

/** `alerts.rules`: the watch config's section (src/config/schema.ts) holds it beside its own settings. */
export const alertRulesSchema = z
  .array(rule, { error: 'must be a list of rules' })
  .default([])
  .superRefine((rules, ctx) => {
    rules.forEach((r, i) => {
      const first = rules.findIndex((o) => o.name === r.name);
      if (first !== i) ctx.addIssue({ code: 'custom', path: [i, 'name'], message: `repeats ${JSON.stringify(r.name)} (rules[${first}].name); each rule needs its own name, it is the rule label of the alert metrics` });
    });
  });

export const alertsSectionSchema = z.strictObject({ rules: alertRulesSchema });

/** What `alerts:` gives when the file leaves it out. */
export const DEFAULT_ALERTS_SECTION: AlertsSection = Object.freeze({ rules: Object.freeze([]) as readonly AlertRule[] });

/** Every key the section knows, for the config's "did you mean" on a misspelt key. */
export const ALERT_CONFIG_KEYS: readonly string[] = Object.freeze([
  ...new Set(['rules', ...[shareRise, earlyWarning, drift].flatMap((s) => Object.keys(s.shape))]),
]);

interface RuleBase {
  readonly name: string;
  /** A model name, or "*" for every model. */
  readonly model: string;
  readonly segmentKey: string | null;
  readonly holdMs: number;
  readonly clearMs: number;
  readonly cooldownMs: number;
}

export interface ShareRiseRule extends RuleBase {
  readonly kind: 'shareRise';
  /** θ: one of the model's thresholds. */
  readonly threshold: number;
  /** A view name from `windows`. */
  readonly window: string;
  readonly tolerance: number;
  readonly clearTolerance: number;
  readonly minCount: number;
  readonly z: number;
}

export interface EarlyWarningRule extends RuleBase {
  readonly kind: 'earlyWarning';
  readonly threshold: number;
  readonly riseFactor: number;
  readonly inControlEvents: number;
  readonly clearFraction: number;
}

export interface DriftRule extends RuleBase {
  readonly kind: 'drift';
  readonly statistic: 'psi' | 'ks';
  readonly window: string;
  readonly above: number;
  readonly clearBelow: number;
  readonly minCount: number;
}

export type AlertRule = ShareRiseRule | EarlyWarningRule | DriftRule;

export interface AlertsSection {
  readonly rules: readonly AlertRule[];
}

/**
 * The section on its own (tests, tools): throws HR_ERR_CONFIG_INVALID listing every problem, each
 * naming its field as the config does (`alerts.rules[0].tolerance: ...`).
 */
export function parseAlertsSection(value: unknown, source = 'alerts', at: readonly PropertyKey[] = ['alerts']): AlertsSection {
  const result = alertsSectionSchema.safeParse(value ?? {});
  if (result.success) return result.data;
  const lines = result.error.issues.map((issue) => {
    const path = [...at, ...issue.path];
    if (issue.code === 'unrecognized_keys') return issue.keys.map((k) => `${source}: ${fieldPath([...path, k])}: is not a setting here`).join('\n');
    return `${source}: ${fieldPath(path)}: ${issue.message}`;
  });
  throw new HeadroomError('HR_ERR_CONFIG_INVALID', lines.join('\n'), { context: { source, issues: result.error.issues.length } });
}

/** What of the rest of the config a rule may name. */
export interface AlertRuleContext {
  readonly models: ReadonlyArray<{ readonly name: string; readonly thresholds: readonly number[]; readonly segmentKeys: readonly string[] }>;
  readonly windows: ReadonlyArray<{ readonly name: string }>;
}

/**
 * Cross-checks for src/config/resolve.ts: each rule's model, θ, window and segment key must exist in
 * the file. Calls `report(path, detail)` once per problem, with the path from the file's root.
 */
export function checkAlertRules(rules: readonly AlertRule[], context: AlertRuleContext, report: (path: PropertyKey[], detail: string) => void): void {
  rules.forEach((r, i) => {
    const at = ['alerts', 'rules', i];
    const models = r.model === ANY_MODEL ? context.models : context.models.filter((m) => m.name === r.model || m.name === ANY_MODEL);
    if (models.length === 0) {
      report([...at, 'model'], `${JSON.stringify(r.model)} is not in models[]; name a configured model or "*"`);
      return;
    }
    if (r.kind !== 'drift') {
      const without = models.filter((m) => !m.thresholds.includes(r.threshold)).map((m) => m.name);
      if (without.length > 0) report([...at, 'threshold'], `${r.threshold} is not among the thresholds of ${without.map((n) => JSON.stringify(n)).join(', ')}; low-margin counts are kept only at configured thresholds`);
    }
    if (r.kind !== 'earlyWarning' && !context.windows.some((w) => w.name === r.window)) {
      report([...at, 'window'], `${JSON.stringify(r.window)} is not one of windows (${context.windows.map((w) => w.name).join(', ')})`);
    }
    if (r.segmentKey !== null) {
      const key = r.segmentKey;
      const without = models.filter((m) => !m.segmentKeys.includes(key)).map((m) => m.name);
      if (without.length > 0) report([...at, 'segmentKey'], `${JSON.stringify(key)} is not a segment key of ${without.map((n) => JSON.stringify(n)).join(', ')}; add it to segmentKeys`);
    }
  });
}
