import type { MarginDistribution } from '../sketch/distribution.js';
import { argumentError, requireProbability } from './arguments.js';

export const DEFAULT_QUANTILE_LEVELS: readonly number[] = Object.freeze([0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]);

export interface QuantileShift {
  readonly q: number;
  /** null when that side is empty. */
  readonly live: number | null;
  readonly reference: number | null;
  /** live − reference: negative means the live margins at this level are lower (less sure). */
  readonly shift: number | null;
}

/** Quantile shifts at each level; an empty side gives nulls rather than failing, so a page can show a row. */
export function quantileShifts(
  live: MarginDistribution,
  reference: MarginDistribution,
  levels: readonly number[] = DEFAULT_QUANTILE_LEVELS,
): QuantileShift[] {
  if (levels.length === 0) throw argumentError('quantile levels must not be empty');
  for (const q of levels) requireProbability(q, 'quantile level');
  return levels.map((q) => {
    const l = live.count > 0 ? live.quantile(q) : null;
    const r = reference.count > 0 ? reference.quantile(q) : null;
    return { q, live: l, reference: r, shift: l === null || r === null ? null : l - r };
  });
}
