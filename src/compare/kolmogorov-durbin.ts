/**
 * P(Dₙ < d) for the two-sided one-sample Kolmogorov–Smirnov statistic by Durbin's (1968) matrix method
 * in the form of Marsaglia, Tsang and Wang (2003): write n·d = k − h with k a positive integer and
 * 0 <= h < 1; then P(Dₙ < d) = n!/nⁿ · (Hⁿ)[k−1][k−1] for a (2k−1)² matrix H built from h.
 *
 * Exact up to rounding. Cost O(m³ log n) with m = 2k − 1, so kolmogorov.ts only sends it small n·d.
 * Hⁿ overflows long before n!/nⁿ underflows, hence the explicit power-of-two exponent carried along.
 */
const SCALE_EXP = 128;
const BIG = 2 ** SCALE_EXP;
const SMALL = 2 ** -SCALE_EXP;

export function durbinCdf(n: number, d: number): number {
  if (d >= 1) return 1;
  const nd = n * d;
  if (nd <= 0.5) return 0;
  const k = Math.ceil(nd);
  const h = k - nd;
  const m = 2 * k - 1;

  const inverseFactorial = new Float64Array(m + 1);
  inverseFactorial[0] = 1;
  for (let i = 1; i <= m; i++) inverseFactorial[i] = (inverseFactorial[i - 1] as number) / i;

  const H = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j <= Math.min(i + 1, m - 1); j++) H[i * m + j] = inverseFactorial[i - j + 1] as number;
  }
  for (let i = 0; i < m; i++) {
    const edge = (1 - h ** (i + 1)) * (inverseFactorial[i + 1] as number);
    H[i * m] = edge; // first column
    H[(m - 1) * m + (m - 1 - i)] = edge; // last row, mirrored
  }
  H[(m - 1) * m] = (1 - 2 * h ** m + Math.max(0, 2 * h - 1) ** m) * (inverseFactorial[m] as number);

  const centre = (k - 1) * m + (k - 1);
  let base: Float64Array = H;
  let baseExp = 0;
  let result: Float64Array | null = null;
  let resultExp = 0;
  for (let e = n; e > 0; e = Math.floor(e / 2)) {
    if (e % 2 === 1) {
      if (result === null) {
        result = base.slice();
        resultExp = baseExp;
      } else {
        result = multiply(result, base, m);
        resultExp += baseExp;
      }
      if ((result[centre] as number) > BIG) {
        scaleInPlace(result, SMALL);
        resultExp += SCALE_EXP;
      }
    }
    if (e > 1) {
      base = multiply(base, base, m);
      baseExp *= 2;
      if ((base[centre] as number) > BIG) {
        scaleInPlace(base, SMALL);
        baseExp += SCALE_EXP;
      }
    }
  }

  let p = (result as Float64Array)[centre] as number;
  let exponent = resultExp;
  for (let i = 1; i <= n; i++) {
    p = (p * i) / n;
    if (p < SMALL) {
      p *= BIG;
      exponent -= SCALE_EXP;
    }
  }
  return Math.min(1, Math.max(0, ldexp(p, exponent)));
}

/** p·2^e without overflowing 2^e on the way when p·2^e itself is representable. */
function ldexp(p: number, e: number): number {
  let x = p;
  let rest = e;
  while (rest > 1000) {
    x *= 2 ** 1000;
    rest -= 1000;
  }
  while (rest < -1000) {
    x *= 2 ** -1000;
    rest += 1000;
  }
  return x * 2 ** rest;
}

function multiply(a: Float64Array, b: Float64Array, m: number): Float64Array {
  const out = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let l = 0; l < m; l++) {
      const ail = a[i * m + l] as number;
      if (ail === 0) continue;
      for (let j = 0; j < m; j++) out[i * m + j] = (out[i * m + j] as number) + ail * (b[l * m + j] as number);
    }
  }
  return out;
}

function scaleInPlace(a: Float64Array, factor: number): void {
  for (let i = 0; i < a.length; i++) a[i] = (a[i] as number) * factor;
}
