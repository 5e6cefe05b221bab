/**
 * The one type-7 quantile of the project (Hyndman & Fan 1996, definition 7; the R and d3-array default): linear
 * interpolation between the order statistics at ⌊h⌋ and ⌊h⌋ + 1 with h = (n − 1)·p, p ∈ [0, 1]. Two ways to reach
 * the order statistics: from sorted values (`quantileSorted`), or by selection on unsorted values
 * (`percentilesBySelection`, Hoare's quickselect, Hoare 1961, Algorithm 65 "Find"), which gives the same numbers at
 * a fraction of the cost when only a few ranks (P10, P50, P90, a median) are needed.
 */

/**
 * Type-7 quantile p ∈ [0, 1] of sorted values a[from .. from + n). +Infinity stands for "not reached" (e.g. an
 * isotherm deeper than any depth): a quantile whose interpolation touches a non-finite value is NaN.
 */
export function quantileSorted(a: ArrayLike<number>, from: number, n: number, p: number): number {
  if (n <= 0) return NaN;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const f = h - lo;
  const x0 = a[from + lo];
  if (f === 0 || lo + 1 >= n) return Number.isFinite(x0) ? x0 : NaN;
  const x1 = a[from + lo + 1];
  if (!Number.isFinite(x0) || !Number.isFinite(x1)) return NaN;
  return x0 + f * (x1 - x0);
}

/**
 * Rearranges a[lo..hi] so that a[k] holds the value of rank k (ascending), with nothing larger to its left and
 * nothing smaller to its right. Hoare partitioning around the middle element: runs of equal values split evenly, so
 * a constant array costs O(n), not O(n²).
 */
export function selectInPlace(a: Float64Array, lo: number, hi: number, k: number): void {
  while (hi > lo) {
    const pivot = a[(lo + hi) >>> 1];
    let i = lo,
      j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return; // a[j + 1 .. i − 1] all equal the pivot
  }
}

/**
 * Type-7 percentiles ps (ascending, each in [0, 1]) of a[0..n) (finite values; reordered in place) into out, by
 * selection. NaN for n = 0.
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
    let x1 = Infinity,
      at = lo + 1;
    for (let j = lo + 1; j < n; j++) {
      if (a[j] < x1) {
        x1 = a[j];
        at = j;
      }
    }
    a[at] = a[lo + 1];
    a[lo + 1] = x1;
    from = lo + 1;
    out[i] = x0 + f * (x1 - x0);
  }
}
