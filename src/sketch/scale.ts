/**
 * Scale functions of the merging t-digest (Dunning & Ertl, "Computing extremely accurate quantiles using
 * t-digests", 2019). A centroid whose left edge sits at quantile q0 may grow until its right edge reaches
 * k⁻¹(k(q0) + 1): one unit of k per centroid. Where k is steep (the tails) centroids stay small, which is
 * what keeps the extreme quantiles accurate.
 *
 * k1 = δ/2π · asin(2q − 1) bounds the centroid count by δ but lets the first and last centroids hold
 * about (π/δ)² of the mass. k2 = δ/Z · log(q/(1 − q)) and k3 (its two-sided log form) have infinite
 * slope at 0 and 1, so the outermost centroids are single points; Z = 4·log(n/δ) + 24 is the paper's
 * normaliser that keeps their centroid count near δ.
 */

export const SCALE_NAMES = ['k1', 'k2', 'k3'] as const;

/** Bounds on δ: below 10 a digest is too coarse to be useful; above 10,000 it is a sorted copy of the data. */
export const MIN_COMPRESSION = 10;
export const MAX_COMPRESSION = 10_000;

/**
 * Chosen with test/bench/sketch-accuracy.ts (1e5 samples of three shapes against exact ranks): k1 at
 * δ = 200 keeps the rank error under 0.0015 for every q in [0.01, 0.99] and KS within 0.0015 of exact, with
 * ~120 centroids. k2/k3 are sharper in the extreme tails (q = 0.001) but looser in the middle, which is
 * where KS and the quantile targets bite; δ = 100 roughly halves the size and doubles the error.
 */
export const DEFAULT_COMPRESSION = 200;
export const DEFAULT_SCALE: ScaleName = 'k1';
export type ScaleName = (typeof SCALE_NAMES)[number];

export function isScaleName(value: unknown): value is ScaleName {
  return typeof value === 'string' && (SCALE_NAMES as readonly string[]).includes(value);
}

function normaliser(total: number, compression: number): number {
  return 4 * Math.log(Math.max(total / compression, 1)) + 24;
}

/**
 * k⁻¹(k(q0) + 1): the quantile the right edge of a centroid whose left edge is at q0 may reach.
 * Each form is solved in closed form so that q0 near 0 or 1 does not lose its digits in log/exp.
 */
export function rightEdgeLimit(scale: ScaleName, q0: number, total: number, compression: number): number {
  if (q0 >= 1) return 1;
  switch (scale) {
    case 'k1': {
      const k = Math.asin(2 * q0 - 1) + (2 * Math.PI) / compression;
      return k >= Math.PI / 2 ? 1 : (Math.sin(k) + 1) / 2;
    }
    case 'k2': {
      if (q0 <= 0) return 0;
      const r = (q0 / (1 - q0)) * Math.exp(normaliser(total, compression) / compression);
      return r / (1 + r);
    }
    case 'k3': {
      if (q0 <= 0) return 0;
      const k = (q0 <= 0.5 ? Math.log(2 * q0) : -Math.log(2 * (1 - q0))) + normaliser(total, compression) / compression;
      return k <= 0 ? Math.exp(k) / 2 : 1 - Math.exp(-k) / 2;
    }
  }
}

/** k⁻¹(k(q1) − 1): the quantile the left edge of a centroid whose right edge is at q1 may reach. */
export function leftEdgeLimit(scale: ScaleName, q1: number, total: number, compression: number): number {
  if (q1 <= 0) return 0;
  switch (scale) {
    case 'k1': {
      const k = Math.asin(2 * q1 - 1) - (2 * Math.PI) / compression;
      return k <= -Math.PI / 2 ? 0 : (Math.sin(k) + 1) / 2;
    }
    case 'k2': {
      if (q1 >= 1) return 1;
      const r = (q1 / (1 - q1)) * Math.exp(-normaliser(total, compression) / compression);
      return r / (1 + r);
    }
    case 'k3': {
      if (q1 >= 1) return 1;
      const k = (q1 <= 0.5 ? Math.log(2 * q1) : -Math.log(2 * (1 - q1))) - normaliser(total, compression) / compression;
      return k <= 0 ? Math.exp(k) / 2 : 1 - Math.exp(-k) / 2;
    }
  }
}

/**
 * Largest share of the mass one centroid may hold when its left edge lies `fromLeft` (a share of the
 * mass) after the previous end and `toRight` before the next one. The ends are 0 and 1, and also every
 * protected atom (centroids.ts): next to an exact 0 held by most of the data, the continuous mass beside it
 * behaves like a tail (often a steep one), so it gets tail-sized centroids. With no atoms this is the
 * paper's rule.
 */
export function maxSpan(scale: ScaleName, fromLeft: number, toRight: number, total: number, compression: number): number {
  const a = Math.min(fromLeft, 0.5);
  const b = Math.min(toRight, 0.5);
  const growing = rightEdgeLimit(scale, a, total, compression) - a;
  // Mirrored: a centroid ending at distance b − s from the right end, starting at distance b.
  const shrinking = b - leftEdgeLimit(scale, b, total, compression);
  return Math.min(growing, shrinking);
}
