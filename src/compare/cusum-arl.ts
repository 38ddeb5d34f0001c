import { argumentError, requireProbability } from './arguments.js';

export interface CusumArlOptions {
  /** True rate of low margins; defaults to p0 (the in-control ARL0). Pass p1 for the detection delay. */
  readonly rate?: number;
  /** Lattice points per step of the smaller increment; more is finer and slower. Default 50. */
  readonly resolution?: number;
  /** Give up (and throw) after this many steps of the chain. Default 10⁶. */
  readonly maxSteps?: number;
}

/**
 * Average run length of a Bernoulli CUSUM started at S = 0: the expected number of events up to and
 * including the first at which S >= h. At rate = p0 that is ARL0, so 1/ARL0 is the false-alarm rate per
 * event; at rate = p1 it is the mean delay to detect the shift.
 *
 * Method: a Markov chain on a lattice (after Brook and Evans, 1972). The unit is the smaller increment's
 * size / resolution, so that step is exact; the other is a + f units with 0 <= f < 1 and is taken as
 * a + 1 with probability f and a otherwise, which keeps the mean increment exact. Keeping the small
 * step exact matters: when many small steps are needed to reach h, rounding them would move the
 * threshold by a whole step. States are 0 … ⌈h/unit⌉ − 1; signalling states are absorbed. The survival P(RL > t) is advanced one event at a
 * time; once its hazard (the share of the surviving mass absorbed) from one step to the next has settled (the chain has reached its slowest mode),
 * the remaining tail is summed as a geometric series. Against a seeded Monte Carlo of BernoulliCusum
 * itself the result agrees within its sampling error (cusum.test.ts). Cost: O(⌈h/unit⌉) per step.
 */
export function bernoulliCusumArl(
  config: { readonly p0: number; readonly p1: number; readonly threshold: number },
  options: CusumArlOptions = {},
): number {
  const { p0, p1, threshold } = config;
  if (!(p0 > 0 && p0 < 1 && p1 > 0 && p1 < 1 && p0 !== p1)) {
    throw argumentError(`ARL needs p0 and p1 in (0, 1) and different, got ${p0} and ${p1}`, { p0, p1 });
  }
  if (!(threshold > 0 && Number.isFinite(threshold))) throw argumentError(`ARL threshold must be positive, got ${threshold}`, { threshold });
  const rate = options.rate ?? p0;
  requireProbability(rate, 'rate');
  const resolution = options.resolution ?? 50;
  if (!(Number.isInteger(resolution) && resolution >= 1)) throw argumentError(`resolution must be a positive integer, got ${resolution}`);
  const maxSteps = options.maxSteps ?? 1_000_000;

  const lowIncrement = Math.log(p1 / p0);
  const highIncrement = Math.log1p(-p1) - Math.log1p(-p0);
  // Exactly one increment is positive: lows push S up when watching for a rise (p1 > p0).
  const up = Math.max(lowIncrement, highIncrement);
  const down = -Math.min(lowIncrement, highIncrement);
  const pUp = lowIncrement > 0 ? rate : 1 - rate;
  const unit = Math.min(up, down) / resolution;
  // The exact step is resolution units up to rounding; snap it so that it is not split 1e-16 : 1.
  const snap = (x: number): number => (Math.abs(x - Math.round(x)) < 1e-9 ? Math.round(x) : x);
  const upUnits = snap(up / unit);
  const downUnits = snap(down / unit);
  const upFloor = Math.floor(upUnits);
  const upFraction = upUnits - upFloor;
  const downFloor = Math.floor(downUnits);
  const downFraction = downUnits - downFloor;
  const states = Math.ceil(threshold / unit);

  let mass = new Float64Array(states);
  let next = new Float64Array(states);
  mass[0] = 1;
  let arl = 1; // P(RL > 0)
  let previousHazard = Number.NaN;
  let survival = 1;
  let settled = 0;
  let absorbed = 0;
  const add = (j: number, m: number): void => {
    if (j < states) next[j < 0 ? 0 : j] = (next[j < 0 ? 0 : j] as number) + m;
    else absorbed += m;
  };
  for (let step = 1; step <= maxSteps; step++) {
    next.fill(0);
    absorbed = 0;
    for (let j = 0; j < states; j++) {
      const m = mass[j] as number;
      if (m === 0) continue;
      add(j - downFloor, m * (1 - pUp) * (1 - downFraction));
      if (downFraction > 0) add(j - downFloor - 1, m * (1 - pUp) * downFraction);
      add(j + upFloor, m * pUp * (1 - upFraction));
      if (upFraction > 0) add(j + upFloor + 1, m * pUp * upFraction);
    }
    [mass, next] = [next, mass];
    let s = 0;
    for (let j = 0; j < states; j++) s += mass[j] as number;
    if (s === 0) return arl;
    // The hazard (1 − the survival ratio) is taken from the mass absorbed this step, not as 1 − s/survival:
    // at an ARL of 10⁶ the ratio is 1 − 10⁻⁶, and subtracting it from 1 leaves too few digits to judge
    // "settled" by (the old test could never pass beyond an ARL of about 10⁵).
    const hazard = absorbed / survival;
    survival = s;
    // The geometric tail s/hazard is only as good as the hazard, so "settled" is judged relative to it.
    // Early on, before any path can reach h, the hazard is exactly 0.
    settled = hazard > 0 && Math.abs(hazard - previousHazard) < 1e-9 * hazard ? settled + 1 : 0;
    previousHazard = hazard;
    if (settled >= 10) return arl + s / hazard;
    arl += s;
  }
  throw argumentError(`ARL did not converge in ${maxSteps} steps; lower the threshold or the resolution`, {
    p0,
    p1,
    threshold,
    rate,
  });
}
