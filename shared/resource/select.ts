/**
 * Type-7 percentiles (Hyndman & Fan 1996; linear interpolation between the order statistics at ⌊h⌋ and ⌊h⌋ + 1,
 * h = (n − 1)·p) of an unsorted array by selection instead of a full sort: Hoare's quickselect (Hoare 1961,
 * Algorithm 65 "Find") with a median-of-three pivot, run for the needed ranks in ascending order, each on the part
 * to the right of the previous rank. The order statistics are those of the sorted array, so the result equals
 * quantileSorted after a sort, at a fraction of the cost for the few ranks a P10/P50/P90 needs.
 */

/** Rearranges a[lo..hi] so that a[k] holds the value of rank k (ascending), smaller ones left, larger right. */
export function selectInPlace(a: Float64Array, lo: number, hi: number, k: number): void {
  while (hi > lo) {
    const mid = (lo + hi) >>> 1;
    // Median of three as pivot, moved to a[hi].
    if (a[mid] < a[lo]) swap(a, mid, lo);
    if (a[hi] < a[lo]) swap(a, hi, lo);
    if (a[mid] < a[hi]) swap(a, mid, hi);
    const pivot = a[hi];
    let i = lo;
    for (let j = lo; j < hi; j++) {
      if (a[j] < pivot) {
        swap(a, i, j);
        i++;
      }
    }
    swap(a, i, hi);
    if (i === k) return;
    if (k < i) hi = i - 1;
    else lo = i + 1;
  }
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}

/**
 * Percentiles ps (ascending, each in [0, 1]) of a[0..n) (finite values; reordered in place) into out. NaN for n = 0.
 */
export function percentilesBySelection(a: Float64Array, n: number, ps: ArrayLike<number>, out: Float64Array): void {
  if (n <= 0) {
    out.fill(NaN);
    return;
  }
  let from = 0; // ranks below `from` are settled
  for (let i = 0; i < ps.length; i++) {
    const h = (n - 1) * ps[i];
    const lo = Math.floor(h);
    const f = h - lo;
    if (lo >= from) {
      selectInPlace(a, from, n - 1, lo);
      from = lo;
    }
    const x0 = a[lo];
    if (f === 0 || lo + 1 >= n) {
      out[i] = x0;
      continue;
    }
    // Rank lo + 1 is the smallest value to the right of rank lo.
    let x1 = Infinity, at = lo + 1;
    for (let j = lo + 1; j < n; j++) if (a[j] < x1) {
      x1 = a[j];
      at = j;
    }
    swap(a, lo + 1, at);
    from = lo + 1;
    out[i] = x0 + f * (x1 - x0);
  }
}
