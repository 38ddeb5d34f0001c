import { argumentError } from './arguments.js';
import { durbinCdf } from './kolmogorov-durbin.js';
import { pelzGoodCdf } from './kolmogorov-pelz-good.js';
import { smirnovSf } from './smirnov.js';

/**
 * P(Dₙ >= d) for the two-sided one-sample Kolmogorov–Smirnov statistic: the distribution SciPy calls
 * `kstwo`, and the one `ks_2samp(method='asymp')` evaluates at the rounded effective n.
 *
 * Method selection follows Simard and L'Ecuyer (2011), with the same switch points SciPy uses, so the
 * two agree closely (test/unit/compare/kolmogorov.test.ts measures it):
 *   n·d <= 1 or n·d >= n − 1   Ruben and Gambino's closed forms (exact);
 *   d >= 1/2                   2·P(D⁺ₙ >= d), exact because D⁺ and D⁻ cannot both reach d > 1/2;
 *   n <= 140:  n·d² <= 4       Durbin's matrix, exact (Simard and L'Ecuyer use Pomeranz's recursion
 *                              above n·d² = 0.754693; both are exact, Durbin is simpler to keep),
 *              otherwise       2·P(D⁺ₙ >= d) (Miller's approximation: drops the chance that both
 *                              one-sided statistics reach d, negligible in this tail);
 *   n > 140:   n·d² >= 370     0 (below the smallest double SciPy reports here);
 *              n·d² >= 2.2     2·P(D⁺ₙ >= d) as above;
 *              n <= 100000 and n·d^{3/2} <= 1.4: Durbin's matrix (exact);
 *              otherwise       Pelz and Good's asymptotic series, as SciPy. Against Durbin's exact
 *                              value its CDF is off by at most 2e-6 at n = 141, 5e-8 at n = 1000 and
 *                              2e-9 at n = 5000 (kolmogorov.test.ts checks these bounds).
 * Agreement with SciPy 1.17 on test/reference/compare.json (every branch, n from 1 to 10⁶):
 * |ours − SciPy| <= 1e-14 + 2e-11·SciPy. The largest relative gaps sit at n·d² near 4 for n <= 140,
 * where both sides form 1 − CDF with a CDF near 1 and lose the same ~5e-15 absolutely.
 * Cost: Durbin O(m³ log n) with m = 2⌈n·d⌉ − 1 (tens of ms at n = 10⁵), smirnov O(n) (about 0.15 s at
 * n = 10⁶); only windows of millions of events pay that.
 */
export function kolmogorovSf(n: number, d: number): number {
  if (!(Number.isInteger(n) && n >= 1)) throw argumentError(`n must be a positive integer, got ${n}`, { n });
  if (Number.isNaN(d)) return Number.NaN;
  if (d >= 1) return 0;
  if (d <= 0) return 1;
  const t = n * d;
  if (t <= 1) {
    if (t <= 0.5) return 1;
    // P(Dₙ < d) = n!/nⁿ · (2t − 1)ⁿ; the product is formed in that order to stay in range.
    let cdf = 1;
    for (let i = 1; i <= n && cdf > 0; i++) cdf *= (i / n) * (2 * t - 1);
    return clip(1 - cdf);
  }
  if (t >= n - 1) return clip(2 * (1 - d) ** n);
  const nd2 = t * d;
  // Checked before d >= 1/2 only to skip an O(n) sum: 2·smirnov there is below 1e-320 anyway.
  if (n > 140 && nd2 >= 370) return 0;
  if (d >= 0.5) return clip(2 * smirnovSf(n, d));

  if (n <= 140) {
    if (nd2 <= 4) return clip(1 - durbinCdf(n, d));
    return clip(2 * smirnovSf(n, d));
  }
  if (nd2 >= 2.2) return clip(2 * smirnovSf(n, d));
  const cdf = n <= 100_000 && n * d ** 1.5 <= 1.4 ? durbinCdf(n, d) : pelzGoodCdf(n, d);
  return clip(1 - cdf);
}

function clip(p: number): number {
  return Math.min(1, Math.max(0, p));
}
