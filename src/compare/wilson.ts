import { argumentError } from './arguments.js';

/** Φ⁻¹(0.975), the two-sided 95 % normal quantile (SciPy's ndtri(0.975)). */
export const Z_95 = 1.959963984540054;

export interface ShareInterval {
  readonly successes: number;
  readonly trials: number;
  /** successes / trials; null when trials = 0 (no estimate, and NaN would not survive JSON). */
  readonly share: number | null;
  readonly lower: number;
  readonly upper: number;
}

/**
 * Wilson score interval for a binomial proportion, as `scipy.stats.binomtest(k, n)
 * .proportion_ci(method='wilson')` gives it (Newcombe 1998's form): unlike the Wald interval it stays
 * inside [0, 1] and does not collapse to a point at k = 0 or k = n, which is the normal case for a
 * low-margin share in a quiet window. The bound at 0 (k = 0) or 1 (k = n) is set exactly, as SciPy
 * does, rather than left to rounding. trials = 0 gives the vacuous interval [0, 1].
 */
export function wilsonInterval(successes: number, trials: number, z: number = Z_95): ShareInterval {
  if (!(Number.isInteger(trials) && trials >= 0)) {
    throw argumentError(`trials must be a non-negative integer, got ${trials}`, { trials });
  }
  if (!(Number.isInteger(successes) && successes >= 0 && successes <= trials)) {
    throw argumentError(`successes must be an integer in [0, trials = ${trials}], got ${successes}`, { successes, trials });
  }
  if (!(z > 0 && Number.isFinite(z))) throw argumentError(`z must be positive and finite, got ${z}`, { z });
  if (trials === 0) return { successes, trials, share: null, lower: 0, upper: 1 };
  const n = trials;
  const p = successes / n;
  const z2 = z * z;
  const denominator = 2 * (n + z2);
  const centre = (2 * n * p + z2) / denominator;
  const half = (z / denominator) * Math.sqrt(4 * n * p * (1 - p) + z2);
  return {
    successes,
    trials,
    share: p,
    lower: successes === 0 ? 0 : centre - half,
    upper: successes === trials ? 1 : centre + half,
  };
}
