/**
 * A one-dimensional distribution as the comparisons see it: exact samples (tests, small references) or a
 * sketch (live windows). One shape for both lets src/compare compute KS, Wasserstein and PSI exactly on
 * whatever it is given, atoms included.
 *
 * Shape of the CDF: between two consecutive breakpoints a < b it runs linearly from cdf(a) to
 * cdfBelow(b) (for exact samples that segment is flat; for a sketch it interpolates). At a breakpoint it
 * may jump: cdf(x) - cdfBelow(x) is the mass sitting exactly at x (an atom, e.g. margins of exactly 0 or 1).
 * Below the first breakpoint the CDF is 0; from the last one on it is 1.
 */
export interface MarginDistribution {
  /** Number of observations summarised. */
  readonly count: number;
  /** P(X <= x). */
  cdf(x: number): number;
  /** P(X < x); equals cdf(x) except at an atom. */
  cdfBelow(x: number): number;
  /** Ascending, distinct points where the CDF may jump or change slope. Empty when count is 0. */
  breakpoints(): readonly number[];
  /**
   * Smallest x with cdf(x) >= q, for q in [0, 1]. NaN when count is 0. For q = 0 that is read as the first
   * breakpoint (the smallest value held), as numpy.quantile(..., method='inverted_cdf') does; a q inside an
   * atom's jump gives the atom's value. src/sketch/digest.ts throws HR_ERR_SKETCH_ARGUMENT for q outside [0, 1].
   */
  quantile(q: number): number;
}
