import { HeadroomError } from '../errors.js';
import type { MarginDistribution } from '../sketch/distribution.js';

export function argumentError(detail: string, context: Record<string, unknown> = {}): HeadroomError {
  return new HeadroomError('HR_ERR_COMPARE_ARGUMENT', detail, { context });
}

/**
 * The single-figure functions refuse empty inputs rather than invent a number; compareToReference checks
 * first and reports `state: 'empty'`, which is the path a window with no events takes.
 */
export function requireNonEmpty(distribution: MarginDistribution, role: string): void {
  if (!(distribution.count > 0)) {
    throw argumentError(`${role} distribution is empty; use compareToReference, which reports state 'empty'`, {
      role,
      count: distribution.count,
    });
  }
}

export function requireProbability(value: number, name: string): void {
  if (!(value >= 0 && value <= 1)) throw argumentError(`${name} must be in [0, 1], got ${value}`, { [name]: value });
}
