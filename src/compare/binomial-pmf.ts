/**
 * C(n, x)·pˣ·q^(n−x) without forming the binomial or the powers, after Loader (2000), "Fast and accurate
 * computation of binomial probabilities": the log of the probability is split into Stirling remainders
 * and deviance terms bd0, all of size O(√n) rather than O(n), so the relative error stays near machine
 * precision for n in the millions, where a sum of logs loses n·ε.
 *
 * The caller passes n·p and n·q itself so that it can form them without first rounding p and q.
 */
export function binomialPmf(x: number, n: number, np: number, nq: number): number {
  const p = np / n;
  const q = nq / n;
  if (x === 0) return Math.exp(p < 0.1 ? -bd0(n, nq) - np : n * Math.log1p(-p));
  if (x === n) return Math.exp(q < 0.1 ? -bd0(n, np) - nq : n * Math.log(p));
  const lc = stirlingRemainder(n) - stirlingRemainder(x) - stirlingRemainder(n - x) - bd0(x, np) - bd0(n - x, nq);
  // log(2π·x·(n−x)/n), the Gaussian normaliser of the saddle point.
  const lf = Math.log(2 * Math.PI) + Math.log(x) + Math.log1p(-x / n);
  return Math.exp(lc - 0.5 * lf);
}

/** x·log(x/m) + m − x, by its series when x ≈ m, where the direct form cancels. */
function bd0(x: number, m: number): number {
  if (Math.abs(x - m) < 0.1 * (x + m)) {
    const v = (x - m) / (x + m);
    let s = (x - m) * v;
    let term = 2 * x * v;
    for (let j = 1; j < 1000; j++) {
      term *= v * v;
      const next = s + term / (2 * j + 1);
      if (next === s) return next;
      s = next;
    }
    return s;
  }
  return x * Math.log(x / m) + m - x;
}

const SMALL_REMAINDERS = (() => {
  // log k! − (k + ½)·log k + k − ½·log 2π for k <= 15, where the asymptotic series is not yet accurate;
  // log k! is summed directly, which is exact enough at this size (terms below 30).
  const out = [0];
  let logFactorial = 0;
  for (let k = 1; k <= 15; k++) {
    logFactorial += Math.log(k);
    out.push(logFactorial - (k + 0.5) * Math.log(k) + k - 0.5 * Math.log(2 * Math.PI));
  }
  return out;
})();

/** log n! − log(√(2πn)·(n/e)ⁿ). */
function stirlingRemainder(n: number): number {
  if (n <= 15) return SMALL_REMAINDERS[n] as number;
  const n2 = n * n;
  // Bernoulli-number series 1/12n − 1/360n³ + 1/1260n⁵ − 1/1680n⁷ + 1/1188n⁹; the next term is < 1e-16 at n = 16.
  return (1 / 12 - (1 / 360 - (1 / 1260 - (1 / 1680 - 1 / 1188 / n2) / n2) / n2) / n2) / n;
}
