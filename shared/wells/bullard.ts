import { thermalResistance } from './conductivity.ts';
import { DEFAULT_ANCHOR_SD_C } from './gradient.ts';
import { fitLine } from './linear-fit.ts';
import type { ConductivityInterval, CorrectedPoint } from './types.ts';

export interface BullardFit {
  /** Heat flow = slope of T against R (mW/m²). */
  heatFlowMWm2: number;
  /** Standard error of the slope (mW/m²), Birge-scaled as in the gradient fit. */
  seHeatFlowMWm2: number;
  /** Temperature at R = 0, i.e. at the column's top (°C). */
  interceptC: number;
  /** Cumulative thermal resistance of each corrected point from the column's top (m²K/W; NaN = outside the
   * column or past a gap, not fitted). Aligned with the input points. */
  resistanceM2KW: Float64Array;
  /** Measured points in the fit (the anchor not counted). */
  nPoints: number;
  anchored: boolean;
  /** Depth of R = 0 (the column's top), m. */
  originM: number;
  dof: number;
}

/**
 * Bullard (1939) plot: temperature against cumulative thermal resistance R(z) = Σ Δzᵢ/kᵢ, so that for steady
 * conduction without heat sources in the interval T = T(z₀) + q·R, and the slope q is the heat flow.
 * Units: R in m²·K/W (Δz in m over k in W/m/K); T in K (= °C differences); the slope K/(m²K/W) = W/m², reported
 * ×1000 as mW/m². Weighted least squares with the corrected points' σ (Birge scaling, as in fitGradient). The
 * surface temperature joins as a pseudo-point at R = 0 only when the column starts at the surface. Points outside
 * the column (or below a gap in it) are left out. Temperature-dependent intervals use the line `line` for T(z).
 * `column` sorted, non-overlapping. Returns null with fewer than two usable points (anchor included).
 */
export function bullardFit(
  points: CorrectedPoint[],
  column: ConductivityInterval[],
  opts: { surfaceTemperatureC?: number; anchorSdC?: number; anchor?: boolean; line?: { t0C: number; gradientCPerKm: number } } = {},
): BullardFit | null {
  if (column.length === 0) return null;
  const originM = column[0].topM;
  const depths = new Float64Array(points.length);
  points.forEach((p, i) => (depths[i] = p.depthM));
  const r = thermalResistance(column, originM, depths, opts.line);
  const ts = opts.surfaceTemperatureC;
  const anchored = (opts.anchor ?? true) && ts !== undefined && Number.isFinite(ts) && originM === 0;
  const n = points.length + (anchored ? 1 : 0);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const sd = new Float64Array(n);
  const include = new Uint8Array(n);
  let nPoints = 0;
  points.forEach((p, i) => {
    const ok = p.used && Number.isFinite(r[i]);
    x[i] = ok ? r[i] : 0;
    y[i] = p.temperatureC;
    sd[i] = p.sdC;
    include[i] = ok ? 1 : 0;
    if (ok) nPoints++;
  });
  if (anchored) {
    const a = points.length;
    x[a] = 0;
    y[a] = ts;
    sd[a] = opts.anchorSdC ?? DEFAULT_ANCHOR_SD_C;
    include[a] = 1;
  }
  const fit = fitLine(x, y, sd, 'birge', include);
  if (fit === null) return null;
  return {
    heatFlowMWm2: fit.slope * 1000,
    seHeatFlowMWm2: fit.seSlope * 1000,
    interceptC: fit.intercept,
    resistanceM2KW: r,
    nPoints,
    anchored,
    originM,
    dof: fit.dof,
  };
}
