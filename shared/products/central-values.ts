/**
 * The central values of a Monte Carlo product over the grid: the realizations' per-cell mean and P50 averaged over
 * the cells, beside the deterministic map's average over the same cells and the difference (mean − deterministic).
 * The mean of the realizations is the central value a run reports; the deterministic map (the interpolated heat
 * flow with each model distribution at its central value) is shown beside it, labelled, because a product that is
 * not linear in heat flow (the depth to an isotherm, z = k·ΔT/q on a linear geotherm) has a mean that differs from
 * its value at the mean heat flow (Jensen's inequality).
 */
import type { SummaryGrids } from './uncertainty.ts';

export interface ProductCentralValue {
  /** Product name (e.g. depth-300C, temperature-5km) and units. */
  product: string;
  units: string;
  /** Cells where the realization mean, the P50 and the deterministic value are all defined: the averages run over them. */
  cells: number;
  /** Cells with heat flow where the realization mean is NoData (some valid realization not finite: an isotherm not reached). */
  cellsMeanUndefined: number;
  /** Cells with heat flow where the deterministic value is NoData. */
  cellsDeterministicUndefined: number;
  /** Averages over `cells` of the per-cell mean, P50 and deterministic value, and mean − deterministic (null without cells). */
  mean: number | null;
  p50: number | null;
  deterministic: number | null;
  difference: number | null;
}

/** The central values of one product from its summary grids, its deterministic grid and the heat-flow grid (NaN = no data). */
export function productCentralValue(
  product: string,
  units: string,
  s: SummaryGrids,
  deterministic: Float32Array,
  heatFlow: ArrayLike<number>,
): ProductCentralValue {
  let n = 0,
    meanUndef = 0,
    detUndef = 0,
    sm = 0,
    sp = 0,
    sd = 0;
  for (let c = 0; c < deterministic.length; c++) {
    if (!(heatFlow[c] === heatFlow[c])) continue;
    const m = s.mean[c],
      p = s.p50[c],
      d = deterministic[c];
    const okM = Number.isFinite(m),
      okD = Number.isFinite(d);
    if (!okM) meanUndef++;
    if (!okD) detUndef++;
    if (okM && okD && Number.isFinite(p)) {
      n++;
      sm += m;
      sp += p;
      sd += d;
    }
  }
  const avg = (v: number) => (n > 0 ? v / n : null);
  return {
    product,
    units,
    cells: n,
    cellsMeanUndefined: meanUndef,
    cellsDeterministicUndefined: detUndef,
    mean: avg(sm),
    p50: avg(sp),
    deterministic: avg(sd),
    difference: n > 0 ? (sm - sd) / n : null,
  };
}
