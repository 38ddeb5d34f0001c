import { argumentError } from './arguments.js';
import { binomialPmf } from './binomial-pmf.js';

/**
 * P(D⁺ₙ >= d), the one-sided one-sample Kolmogorov–Smirnov survival function (SciPy's
 * `scipy.special.smirnov`), summed exactly from the Birnbaum–Tingey (1951) formula
 *
 *     d · Σ_{j=0}^{⌊n(1−d)⌋} C(n, j) (d + j/n)^{j−1} (1 − d − j/n)^{n−j}
 *   = d · Σ_j  Binomial(j; n, p = d + j/n) / (d + j/n).
 *
 * All terms are positive, so the sum is well conditioned; the second form lets each term come from an
 * accurate binomial probability (binomial-pmf.ts) instead of logs of size n, which lose n·ε and would
 * cost seven digits at n = 10⁶. The terms are not unimodal in j (they can rise again near the end), so
 * the loop runs to the last one: O(n) time.
 */
export function smirnovSf(n: number, d: number): number {
  if (!(Number.isInteger(n) && n >= 1)) throw argumentError(`n must be a positive integer, got ${n}`, { n });
  if (Number.isNaN(d)) return Number.NaN;
  if (d <= 0) return 1;
  if (d >= 1) return 0;
  const nd = n * d;
  const last = Math.floor(n - nd);
  let sum = 0;
  for (let j = 0; j <= last; j++) {
    // n·p and n·q formed from integers and the one rounded product n·d, so neither cancels.
    const np = nd + j;
    const nq = n - j - nd;
    if (nq <= 0) break;
    sum += binomialPmf(j, n, np, nq) / (np / n);
  }
  return Math.min(1, d * sum);
}
