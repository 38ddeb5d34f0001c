/**
 * Ascending in-place sort of finite doubles, in exactly the order TypedArray.prototype.sort gives (-0
 * before +0). Every digest flush sorts its buffer of points (1,000 at the default compression), and V8's
 * native typed-array sort took about 1.6 times as long as this quicksort on that size: it is a call into
 * the runtime with a generic comparison. Finite input only: the digest refuses NaN before buffering.
 */

/** Ranges this short are finished by insertion sort. */
const INSERTION_MAX = 16;

export function sortFinite(a: Float64Array): void {
  const n = a.length;
  // Introsort's guard: past this depth the input is adversarial for median-of-three, so the native sort
  // (O(n log n) whatever the input) finishes that range and a crafted stream cannot make a flush quadratic.
  quicksort(a, 0, n, 2 * Math.ceil(Math.log2(n + 1)));
  negativeZerosFirst(a);
}

function quicksort(a: Float64Array, from: number, to: number, depth: number): void {
  while (to - from > INSERTION_MAX) {
    if (depth-- === 0) {
      a.subarray(from, to).sort();
      return;
    }
    const x = a[from] as number;
    const y = a[(from + to) >>> 1] as number;
    const z = a[to - 1] as number;
    const pivot = x < y ? (y < z ? y : x < z ? z : x) : x < z ? x : y < z ? z : y;
    let i = from;
    let j = to - 1;
    // Hoare partition: the pivot is in the range, so both scans stop without a bounds check.
    while (i <= j) {
      while ((a[i] as number) < pivot) i += 1;
      while ((a[j] as number) > pivot) j -= 1;
      if (i <= j) {
        const t = a[i] as number;
        a[i] = a[j] as number;
        a[j] = t;
        i += 1;
        j -= 1;
      }
    }
    // Recurse into the smaller side, loop on the larger: the stack stays O(log n).
    if (j + 1 - from < to - i) {
      quicksort(a, from, j + 1, depth);
      from = i;
    } else {
      quicksort(a, i, to, depth);
      to = j + 1;
    }
  }
  for (let i = from + 1; i < to; i += 1) {
    const v = a[i] as number;
    let j = i - 1;
    while (j >= from && (a[j] as number) > v) {
      a[j + 1] = a[j] as number;
      j -= 1;
    }
    a[j + 1] = v;
  }
}

/** `<` cannot tell -0 from +0, the native order can: put the zeros' run in native order. */
function negativeZerosFirst(a: Float64Array): void {
  let lo = 0;
  let hi = a.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((a[mid] as number) < 0) lo = mid + 1;
    else hi = mid;
  }
  let negative = 0;
  let end = lo;
  for (; end < a.length && a[end] === 0; end += 1) if (Object.is(a[end], -0)) negative += 1;
  if (negative === 0) return;
  for (let i = lo; i < end; i += 1) a[i] = i - lo < negative ? -0 : 0;
}
