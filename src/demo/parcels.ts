/**
 * The invented parcel-inspection model every example and the demo share: `parcel-damage` scores a photo
 * of each parcel on sorting lines 1-3 with the probability that it is damaged. Line 3's camera is worn,
 * so the model is less sure there; "fog" on a line's camera makes it less sure still. Pure and seeded:
 * the same seed draws the same parcels, in the same order, wherever they are drawn
 * (examples/parcel-damage/make-events.ts and make-log.ts, src/demo/scenario.ts).
 */

export const PARCEL_MODEL = 'parcel-damage';
export const PARCEL_VERSION = '2026.11.3';
export const PARCEL_LINES: readonly string[] = Object.freeze(['1', '2', '3']);
/** Share of parcels that are damaged. */
const DAMAGED = 0.12;

/** A small, fast, seeded generator (mulberry32): uniform numbers in [0, 1). */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * How sure the model is on a line, as the exponent k of sureness = u^k (u uniform): the confidence
 * margin |2p − 1| is that sureness, so the low-margin share at θ is θ^(1/k). Lines 1-2: k = 0.35
 * (share 0.019 at θ = 0.25); line 3, worn camera: k = 1.2 (share 0.31). Fog adds to k.
 */
export function surenessExponent(line: string, fog = 0): number {
  return (line === '3' ? 1.2 : 0.35) + fog;
}

export interface Parcel {
  readonly line: string;
  readonly damaged: boolean;
  /** Probability of damage, rounded to 4 decimals as a scorer's log would keep it. */
  readonly p: number;
}

/** Draws one parcel: three numbers from `random` (line, damaged, sureness), in that order. */
export function drawParcel(random: () => number, fogOf: (line: string) => number = () => 0): Parcel {
  const line = String(1 + Math.floor(random() * 3));
  const damaged = random() < DAMAGED;
  const sureness = random() ** surenessExponent(line, fogOf(line));
  const p = Math.round((damaged ? 0.5 + 0.5 * sureness : 0.5 - 0.5 * sureness) * 1e4) / 1e4;
  return { line, damaged, p };
}
