/**
 * Layer statistics for summaries: min, median, max and the no-data count of a grid's finite values. The median
 * is the type-7 quantile at p = 0.5 (Hyndman & Fan 1996; the mean of the two middle values for an even count).
 * A Float32 grid's median is found by radix selection on the values' bit patterns (two counting passes per rank
 * over 2¹⁶ buckets; docs/sources.md#selection), with no copy of the grid; other inputs by selection
 * (shared/stats/quantile.ts) on one copy of the finite values.
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
  if (values instanceof Float32Array) return float32Stats(values);
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

/**
 * Order-preserving key of a Float32's bits as an unsigned integer: a negative number's bits all flipped, a
 * positive number's sign bit set (so −0 sorts just below +0, which are equal as numbers).
 */
const keyOf = (u: number) => (u & 0x80000000 ? ~u : u | 0x80000000) >>> 0;
const floatOfKey = (k: number, f: Float32Array, u: Uint32Array) => {
  u[0] = k & 0x80000000 ? k & 0x7fffffff : ~k;
  return f[0];
};

/** layerStats of a Float32 grid: one pass for the counts and the high 16 bits' histogram, then each middle rank found by its low 16 bits. */
function float32Stats(values: Float32Array): LayerStats {
  const bits = new Uint32Array(values.buffer, values.byteOffset, values.length);
  const high = new Float64Array(65536);
  let n = 0,
    min = Infinity,
    max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v - v === 0) {
      n++;
      if (v < min) min = v;
      if (v > max) max = v;
      high[keyOf(bits[i]) >>> 16]++;
    }
  }
  const noData = values.length - n;
  if (n === 0) return { min: null, max: null, median: null, noData };
  const h = (n - 1) * 0.5,
    lo = Math.floor(h),
    f = h - lo;
  const x0 = rankOf(values, bits, high, lo);
  const median = f === 0 ? x0 : x0 + f * (rankOf(values, bits, high, lo + 1) - x0);
  return { min, max, median, noData };
}

/** The finite value of rank k (0-based, ascending) given the high 16 bits' histogram of the finite values. */
function rankOf(values: Float32Array, bits: Uint32Array, high: Float64Array, k: number): number {
  let bucket = 0,
    below = 0;
  while (below + high[bucket] <= k) below += high[bucket++];
  const low = new Float64Array(65536);
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v - v === 0) {
      const key = keyOf(bits[i]);
      if (key >>> 16 === bucket) low[key & 0xffff]++;
    }
  }
  let j = 0;
  while (below + low[j] <= k) below += low[j++];
  const one = new Float32Array(1);
  return floatOfKey(((bucket << 16) | j) >>> 0, one, new Uint32Array(one.buffer));
}
