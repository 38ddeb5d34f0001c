/**
 * The merge pass of the merging t-digest: sort every centroid and buffered point by mean, then sweep once,
 * folding each item into the centroid on its left while the scale function allows it.
 *
 * Each centroid keeps, beside its mean and weight, the exact smallest and largest value it holds (lo, hi).
 * That costs two numbers a centroid and buys three things: a centroid with lo === hi is known to hold one
 * repeated value, so the CDF can jump there (margins of exactly 0 or 1, a producer sending a handful of
 * distinct values); the CDF is exact at the edge of every centroid whose range no other overlaps, and flat
 * across gaps between them; and min/max come out exact.
 */
import { maxSpan, type ScaleName } from './scale.js';

/** Parallel arrays, sorted by mean. */
export interface Centroids {
  readonly mean: Float64Array;
  readonly weight: Float64Array;
  readonly lo: Float64Array;
  readonly hi: Float64Array;
}

/**
 * Anything shaped like centroids: compressed ones, or a buffer of points and merged-in centroids. Always
 * typed arrays, so that the loops below see one array kind and stay fast.
 */
export type Items = Centroids;

export const EMPTY_CENTROIDS: Centroids = Object.freeze({
  mean: new Float64Array(0),
  weight: new Float64Array(0),
  lo: new Float64Array(0),
  hi: new Float64Array(0),
});

/**
 * A repeated value holding at least 0.25/compression of the mass (0.125% at δ = 200) is never blended
 * with its neighbours, whatever the scale function would allow: blending it would cost up to its own mass
 * in rank error. Smaller repeated values may be blended, at a cost bounded by their small mass. The floor
 * also bounds the protected atoms of one digest to 4·compression.
 */
const ATOM_SHARE_TIMES_COMPRESSION = 0.25;

/**
 * The total order of the merge pass: by mean, then single values before spread centroids (so copies of
 * one value always meet), then lo, hi, weight. A total order, not just by mean, makes the result
 * independent of the order of the sources: merging a into b gives the same centroids as b into a.
 */
function compareAt(a: Items, i: number, b: Items, j: number): number {
  return (
    (a.mean[i] as number) - (b.mean[j] as number) ||
    Number(a.lo[i] !== a.hi[i]) - Number(b.lo[j] !== b.hi[j]) ||
    (a.lo[i] as number) - (b.lo[j] as number) ||
    (a.hi[i] as number) - (b.hi[j] as number) ||
    (a.weight[i] as number) - (b.weight[j] as number)
  );
}

function columns(length: number): Centroids {
  return { mean: new Float64Array(length), weight: new Float64Array(length), lo: new Float64Array(length), hi: new Float64Array(length) };
}

/**
 * Working columns of the merge pass, reused. A flush of a default digest (1,000 points into ~120
 * centroids) used to allocate 17 typed arrays of ~1,100 doubles, each a malloc'd backing store the GC
 * must track; they cost more than the sweep's arithmetic. compress() is synchronous and never re-entered,
 * so one set serves every digest. Passes longer than SCRATCH_ITEMS (a view merging many buckets, a huge
 * compression) get fresh arrays instead, so what stays allocated is bounded (17 × 32 KB at most).
 */
const SCRATCH_ITEMS = 4096;
const scratch: Float64Array[] = [];
const MERGED = [0, 4] as const; // two column sets, so several sources can be merged in turn
const DEDUPED = 8;
const NEXT_END = 12;
const OUT = 13;

function scratchColumn(role: number, length: number): Float64Array {
  if (length > SCRATCH_ITEMS) return new Float64Array(length);
  let buffer = scratch[role];
  if (buffer === undefined || buffer.length < length) {
    buffer = new Float64Array(Math.min(SCRATCH_ITEMS, Math.max(1024, 2 ** Math.ceil(Math.log2(length)))));
    scratch[role] = buffer;
  }
  return buffer.subarray(0, length);
}

function scratchColumns(role: number, length: number): Centroids {
  return {
    mean: scratchColumn(role, length),
    weight: scratchColumn(role + 1, length),
    lo: scratchColumn(role + 2, length),
    hi: scratchColumn(role + 3, length),
  };
}

function copyItem(from: Items, i: number, to: Centroids, k: number): void {
  to.mean[k] = from.mean[i] as number;
  to.weight[k] = from.weight[i] as number;
  to.lo[k] = from.lo[i] as number;
  to.hi[k] = from.hi[i] as number;
}

/** `s` itself when already in order (compressed centroids, natively sorted points), else a sorted copy. */
function sortedItems(s: Items): Items {
  const n = s.mean.length;
  let sorted = true;
  for (let i = 1; i < n && sorted; i += 1) sorted = compareAt(s, i - 1, s, i) <= 0;
  if (sorted) return s;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => compareAt(s, a, s, b));
  const out = columns(n);
  order.forEach((i, k) => copyItem(s, i, out, k));
  return out;
}

/** Both inputs in order, merged into `out` (length na + nb). */
function mergeSorted(a: Items, b: Items, out: Centroids): Items {
  const na = a.mean.length;
  const nb = b.mean.length;
  let i = 0;
  let j = 0;
  let k = 0;
  while (i < na && j < nb) {
    if (compareAt(a, i, b, j) <= 0) copyItem(a, i++, out, k++);
    else copyItem(b, j++, out, k++);
  }
  while (i < na) copyItem(a, i++, out, k++);
  while (j < nb) copyItem(b, j++, out, k++);
  return out;
}

/**
 * Merge pass over several sources at once; `total` is their summed weight. Sources already in order
 * (the hot path: compressed centroids plus a natively sorted buffer of points) are merged in linear time.
 * The sources are only read; the result shares no memory with them or with the working columns.
 */
export function compress(sources: readonly Items[], total: number, compression: number, scale: ScaleName): Centroids {
  let all: Items = EMPTY_CENTROIDS;
  let set = 0;
  for (const source of sources) {
    const s = sortedItems(source);
    if (s.mean.length === 0) continue;
    if (all.mean.length === 0) {
      all = s;
      continue;
    }
    all = mergeSorted(all, s, scratchColumns(MERGED[set] as number, all.mean.length + s.mean.length));
    set = 1 - set;
  }
  const length = all.mean.length;
  if (length === 0) return EMPTY_CENTROIDS;
  const { mean, weight, lo, hi } = all;

  // Copies of one value are summed before any decision: the protection below must see an atom's whole
  // weight, or each new batch of exact zeros would be blended into the neighbour instead of the atom.
  const deduped = scratchColumns(DEDUPED, length);
  const im = deduped.mean;
  const iw = deduped.weight;
  const ilo = deduped.lo;
  const ihi = deduped.hi;
  let n = 0;
  for (let i = 0; i < length; i += 1) {
    const x = lo[i] as number;
    if (x === hi[i] && n > 0 && ilo[n - 1] === x && ihi[n - 1] === x) {
      iw[n - 1] = (iw[n - 1] as number) + (weight[i] as number);
      continue;
    }
    im[n] = mean[i] as number;
    iw[n] = weight[i] as number;
    ilo[n] = x;
    ihi[n] = hi[i] as number;
    n += 1;
  }

  const atomFloor = Math.max(2, (total * ATOM_SHARE_TIMES_COMPRESSION) / compression);
  // Protected atoms are also ends of the scale (maxSpan in scale.ts). Measured on 21 atoms of 0.7% amid
  // continuous mass: worst rank error 0.0004 with 260 centroids, against 0.0029 with 95 when only atoms
  // of 1% or more count as ends; the cost only shows when many atoms sit inside continuous mass.
  // nextEnd[i]: weight before the first protected atom at or after item i (or the total).
  const nextEnd = scratchColumn(NEXT_END, n);
  {
    let weightBefore = 0;
    for (let i = 0; i < n; i += 1) weightBefore += iw[i] as number;
    let end = weightBefore;
    for (let i = n - 1; i >= 0; i -= 1) {
      weightBefore -= iw[i] as number;
      if (ilo[i] === ihi[i] && (iw[i] as number) >= atomFloor) end = weightBefore;
      nextEnd[i] = end;
    }
  }

  // The sweep. Opening and emitting a centroid are written out inline rather than as closures: closures
  // over these running variables would keep them in a heap context, read and written through memory.
  const out = scratchColumns(OUT, n);
  let emitted = 0;
  let before = 0; // weight of the centroids already emitted
  let lastEnd = 0; // weight up to the end of the last protected atom
  let firstProtected = ilo[0] === ihi[0] && (iw[0] as number) >= atomFloor;
  let cMean = im[0] as number;
  let cWeight = iw[0] as number;
  let cLo = ilo[0] as number;
  let cHi = ihi[0] as number;
  let limit = before + total * maxSpan(scale, (before - lastEnd) / total, ((nextEnd[0] as number) - before) / total, total, compression);
  for (let i = 1; i < n; i += 1) {
    const w = iw[i] as number;
    const protectedHere = ilo[i] === ihi[i] && w >= atomFloor;
    if (!firstProtected && !protectedHere && before + cWeight + w <= limit) {
      const joined = cWeight + w;
      // Incremental form keeps the mean inside [lo, hi] better than sum/weight does.
      cMean += ((im[i] as number) - cMean) * (w / joined);
      cWeight = joined;
      cLo = Math.min(cLo, ilo[i] as number);
      cHi = Math.max(cHi, ihi[i] as number);
    } else {
      out.mean[emitted] = Math.min(Math.max(cMean, cLo), cHi);
      out.weight[emitted] = cWeight;
      out.lo[emitted] = cLo;
      out.hi[emitted] = cHi;
      emitted += 1;
      before += cWeight;
      if (firstProtected) lastEnd = before;
      firstProtected = protectedHere;
      cMean = im[i] as number;
      cWeight = w;
      cLo = ilo[i] as number;
      cHi = ihi[i] as number;
      limit = before + total * maxSpan(scale, (before - lastEnd) / total, ((nextEnd[i] as number) - before) / total, total, compression);
    }
  }
  out.mean[emitted] = Math.min(Math.max(cMean, cLo), cHi);
  out.weight[emitted] = cWeight;
  out.lo[emitted] = cLo;
  out.hi[emitted] = cHi;
  emitted += 1;

  // One owned buffer, cut exactly to size, so a digest keeps neither the working columns nor any slack.
  const kept = new Float64Array(4 * emitted);
  kept.set(out.mean.subarray(0, emitted), 0);
  kept.set(out.weight.subarray(0, emitted), emitted);
  kept.set(out.lo.subarray(0, emitted), 2 * emitted);
  kept.set(out.hi.subarray(0, emitted), 3 * emitted);
  return {
    mean: kept.subarray(0, emitted),
    weight: kept.subarray(emitted, 2 * emitted),
    lo: kept.subarray(2 * emitted, 3 * emitted),
    hi: kept.subarray(3 * emitted),
  };
}
