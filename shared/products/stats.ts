/**
 * Layer statistics for summaries: min, median, max and the no-data count of a grid's finite values. The median
 * is the type-7 quantile at p = 0.5 (Hyndman & Fan 1996; the mean of the two middle values for an even count),
 * found by selection (shared/stats/quantile.ts) on one copy of the finite values.
 */
import { percentilesBySelection } from '../stats/quantile.ts';

const HALF = [0.5];

export interface LayerStats {
  min: number | null;
  max: number | null;
  median: number | null;
  noData: number;
}

/** Min, median, max and no-data count (NaN and ±∞ count as no data). `scratch` may be passed to avoid an allocation. */
export function layerStats(values: ArrayLike<number>, scratch?: Float64Array): LayerStats {
  const buf = scratch !== undefined && scratch.length >= values.length ? scratch : new Float64Array(values.length);
  let n = 0,
    min = Infinity,
    max = -Infinity;
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
  const median = new Float64Array(1);
  percentilesBySelection(buf, n, HALF, median);
  return { min, max, median: median[0], noData };
}
