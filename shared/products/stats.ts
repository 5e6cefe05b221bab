/**
 * Layer statistics for summaries: min, median, max and the no-data count of a grid's finite values. The median
 * is the type-7 quantile at p = 0.5 (Hyndman & Fan 1996; the mean of the two middle values for an even count),
 * found by selection (Hoare's quickselect, expected O(n)) on one copy of the finite values.
 */

export interface LayerStats {
  min: number | null;
  max: number | null;
  median: number | null;
  noData: number;
}

/** k-th smallest (0-based) of a[0..n) by quickselect; reorders a. */
function select(a: Float64Array, n: number, k: number): number {
  let lo = 0, hi = n - 1;
  while (hi > lo) {
    const pivot = a[(lo + hi) >>> 1];
    let i = lo, j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i]; a[i] = a[j]; a[j] = t;
        i++; j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

/** Min, median, max and no-data count (NaN and ±∞ count as no data). `scratch` may be passed to avoid an allocation. */
export function layerStats(values: ArrayLike<number>, scratch?: Float64Array): LayerStats {
  const buf = scratch !== undefined && scratch.length >= values.length ? scratch : new Float64Array(values.length);
  let n = 0, min = Infinity, max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v && v !== Infinity && v !== -Infinity) {
      buf[n++] = v;
      if (v < min) min = v;
      if (v > max) max = v;
    }
  }
  const noData = values.length - n;
  if (n === 0) return { min: null, max: null, median: null, noData };
  let median: number;
  if (n % 2 === 1) median = select(buf, n, (n - 1) / 2);
  else {
    const hi = select(buf, n, n / 2);
    // After selecting n/2 every element before it is ≤ it: the lower middle is the largest of those.
    let lo = -Infinity;
    for (let i = 0; i < n / 2; i++) if (buf[i] > lo) lo = buf[i];
    median = (lo + hi) / 2;
  }
  return { min, max, median, noData };
}
