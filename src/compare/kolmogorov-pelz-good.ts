/**
 * Pelz and Good's (1976) approximation of P(Dₙ <= d): the Li-Chien/Korolyuk expansion
 * K₀(z) + K₁(z)/√n + K₂(z)/n + K₃(z)/n^{3/2} with z = d√n, each Kᵢ rewritten through the Jacobi theta
 * functional equation so that its series converges fast for small z. The coefficients are as given by
 * Simard and L'Ecuyer (2011). kolmogorov.ts uses it only where Simard and L'Ecuyer
 * found it accurate (large n, small n·d²), as SciPy's kstwo does.
 */
const SQRT_2PI = Math.sqrt(2 * Math.PI);
const PI2 = Math.PI ** 2;
const PI4 = Math.PI ** 4;
const PI6 = Math.PI ** 6;
const MIN_LOG = -708; // below this exp() underflows; the CDF is then 0 to double precision

export function pelzGoodCdf(n: number, d: number): number {
  if (d <= 0) return 0;
  if (d >= 1) return 1;
  const z = Math.sqrt(n) * d;
  const z2 = z * z;
  const z4 = z2 * z2;
  const z6 = z4 * z2;
  const z8 = z4 * z4;
  const logQ = -PI2 / 8 / z2;
  if (logQ < MIN_LOG) return 0;

  // Σ over odd m = 2k−1 of c(m)·exp(−m²π²/(8z²)); the terms fall like exp(−m²), so k <= ⌈16z/π⌉ is ample.
  const kMax = Math.ceil((16 * z) / Math.PI);
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  for (let k = 1; k <= kMax; k++) {
    const m2 = (2 * k - 1) ** 2;
    const m4 = m2 * m2;
    const m6 = m4 * m2;
    const w = Math.exp(logQ * m2);
    s0 += w;
    s1 += w * ((PI2 * m2) / 4 - z2);
    s2 += w * (6 * z6 + 2 * z4 + ((2 * z4 - 5 * z2) * PI2 * m2) / 4 + (PI4 * (1 - 2 * z2) * m4) / 16);
    s3 +=
      w *
      (-30 * z6 -
        90 * z8 +
        (PI2 * (135 * z4 - 96 * z6) * m2) / 4 +
        (PI4 * (-60 * z2 + 212 * z4) * m4) / 16 +
        (PI6 * (5 - 30 * z2) * m6) / 64);
  }
  // The second family: Σ over all k of k²·exp(−k²π²/(2z²)) terms in K₂ and K₃.
  let t2 = 0;
  let t3 = 0;
  for (let k = 1; k <= kMax; k++) {
    const k2 = k * k;
    const w = Math.exp((-PI2 * k2) / 2 / z2);
    t2 += k2 * w;
    t3 += (3 * z2 - PI2 * k2) * k2 * w;
  }
  const K0 = (SQRT_2PI / z) * s0;
  const K1 = (SQRT_2PI / (6 * z4)) * s1;
  const K2 = (SQRT_2PI / (72 * z ** 7)) * s2 - ((PI2 * SQRT_2PI) / (36 * z ** 3)) * t2;
  const K3 = (SQRT_2PI / (6480 * z ** 10)) * s3 + ((PI2 * SQRT_2PI) / (216 * z6)) * t3;
  const sqrtN = Math.sqrt(n);
  return K0 + K1 / sqrtN + K2 / n + K3 / (n * sqrtN);
}
