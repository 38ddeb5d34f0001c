/**
 * The share-rise and drift rules as pure functions from a view's figures to a Reading. The
 * early-warning rule keeps state between evaluations and lives in early-warning.ts.
 */
import type { ComparisonReport } from '../compare/compare.js';
import { wilsonInterval } from '../compare/wilson.js';
import type { DriftRule, ShareRiseRule } from './config.js';
import { verdictOf, type Reading } from './lifecycle.js';
import { alertArgument } from './fail.js';

export interface ShareRiseInput {
  /** Events of the view (the rule's window) with confidence margin below the rule's θ. */
  readonly low: number;
  /** All events of the view. */
  readonly count: number;
  /** The reference's exact share at θ; null when the model has no reference. */
  readonly referenceShare: number | null;
}

/**
 * Value: the Wilson lower bound of the live share (so "above" means significantly above, not just
 * above by luck of a small window). Fire level: reference × (1 + tolerance); clear level: reference ×
 * (1 + clearTolerance). A reference share of 0 puts both levels at 0: any low margin at all is a rise.
 */
export function shareRiseReading(rule: ShareRiseRule, input: ShareRiseInput): Reading {
  const { low, count, referenceShare } = input;
  const interval = wilsonInterval(low, count, rule.z);
  if (referenceShare === null) return { verdict: 'unknown', value: null, fireLevel: null, clearLevel: null, reason: 'no reference share' };
  if (!(referenceShare >= 0 && referenceShare <= 1)) throw alertArgument(`referenceShare must be in [0, 1], got ${referenceShare}`, { referenceShare });
  const fireLevel = referenceShare * (1 + rule.tolerance);
  const clearLevel = referenceShare * (1 + rule.clearTolerance);
  if (count < rule.minCount) return { verdict: 'unknown', value: interval.lower, fireLevel, clearLevel, reason: `${count} events in the view, fewer than minCount ${rule.minCount}` };
  return { verdict: verdictOf(interval.lower, fireLevel, clearLevel), value: interval.lower, fireLevel, clearLevel };
}

export interface DriftInput {
  /** Events of the view. */
  readonly count: number;
  /** KS D of the view against the reference; null when either side is empty. */
  readonly ks: number | null;
  readonly psi: number | null;
}

/** The figures a drift rule reads, from the comparison the watcher already makes at scrape time. */
export function driftInputOf(report: ComparisonReport): DriftInput {
  return { count: report.liveCount, ks: report.ks?.statistic ?? null, psi: report.psi?.value ?? null };
}

export function driftReading(rule: DriftRule, input: DriftInput): Reading {
  const value = rule.statistic === 'psi' ? input.psi : input.ks;
  const levels = { fireLevel: rule.above, clearLevel: rule.clearBelow };
  if (input.count < rule.minCount) return { verdict: 'unknown', value, ...levels, reason: `${input.count} events in the view, fewer than minCount ${rule.minCount}` };
  if (value === null) return { verdict: 'unknown', value: null, ...levels, reason: `no ${rule.statistic} (an empty side)` };
  if (!Number.isFinite(value) || value < 0) throw alertArgument(`${rule.statistic} must be a finite number >= 0, got ${value}`, { value });
  return { verdict: verdictOf(value, rule.above, rule.clearBelow), value, ...levels };
}
