import { percentilesBySelection } from '../stats/quantile.ts';

/** Per-target summaries of conditional realizations (simulateField.ts), for the simulate verb's maps and tables. */

const PROBS = [0.1, 0.5, 0.9];

export interface TargetSummaries {
  mean: Float32Array;
  sd: Float32Array;
  p10: Float32Array;
  p50: Float32Array;
  p90: Float32Array;
}

/**
 * Per-target mean, sample standard deviation (n − 1) and P10/P50/P90 (Hyndman & Fan 1996 type 7, linear between
 * order statistics found by selection, Hoare 1961) over the realizations; NaN where any realization is NaN.
 */
export function summarizeTargets(values: Float32Array, R: number, T: number): TargetSummaries {
  const out: TargetSummaries = {
    mean: new Float32Array(T),
    sd: new Float32Array(T),
    p10: new Float32Array(T),
    p50: new Float32Array(T),
    p90: new Float32Array(T),
  };
  // Cells in blocks: the block's values are gathered realization by realization (contiguous reads), then each
  // cell's R values are summarized (percentiles by selection, shared/stats/quantile.ts).
  const BLOCK = 512;
  const blk = new Float64Array(R * BLOCK);
  const pct = new Float64Array(PROBS.length);
  for (let t0 = 0; t0 < T; t0 += BLOCK) {
    const nb = Math.min(BLOCK, T - t0);
    for (let r = 0; r < R; r++) {
      const base = r * T + t0;
      for (let j = 0; j < nb; j++) blk[j * R + r] = values[base + j];
    }
    for (let j = 0; j < nb; j++) {
      const t = t0 + j;
      const buf = blk.subarray(j * R, j * R + R);
      let s = 0,
        bad = false;
      for (let r = 0; r < R; r++) {
        const v = buf[r];
        if (v !== v) {
          bad = true;
          break;
        }
        s += v;
      }
      if (bad) {
        out.mean[t] = out.sd[t] = out.p10[t] = out.p50[t] = out.p90[t] = NaN;
        continue;
      }
      const mean = s / R;
      let ss = 0;
      for (let r = 0; r < R; r++) ss += (buf[r] - mean) ** 2;
      out.mean[t] = mean;
      out.sd[t] = R > 1 ? Math.sqrt(ss / (R - 1)) : NaN;
      percentilesBySelection(buf, R, PROBS, pct);
      out.p10[t] = pct[0];
      out.p50[t] = pct[1];
      out.p90[t] = pct[2];
    }
  }
  return out;
}
