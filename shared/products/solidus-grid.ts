/**
 * Depth of the first solidus crossing of a solved column, fast enough for grids and equal to the thermal engine's
 * scan (shared/thermal/solidus-crossing.ts: the shallowest point of the step grid z_j = min(j·step, zMax) where
 * T(z) ≥ T_solidus(P_lith(z)), then bisection to 1e-6 km).
 *
 * The first crossing is that of the water-saturated granite solidus (after Huang & Wyllie 1973): it lies below
 * the dry peridotite solidus (Hirschmann 2000, ≥ 1120 °C) at every pressure, so a geotherm always meets it first.
 * Why a search instead of the scan: within the valid part of a column T(z) increases (q > 0), P_lith(z) increases,
 * and the wet-granite curve does not increase with pressure (a monotone PCHIP through decreasing nodes, held flat
 * above 10 kbar), so f(z) = T − T_solidus is non-decreasing wherever the curve is defined (P ≥ 0.5 kbar, one
 * contiguous depth range). The first step with f ≥ 0 is then found by binary search on the step index, and the
 * bisection after it repeats the engine's own, so the answer is the engine's (about 30 evaluations a cell instead
 * of up to maxDepth/step).
 */
import { columnTemperature, lithostaticPressureMPa, WET_GRANITE_SOLIDUS_MPA, type ColumnState, type CompiledModel } from '../thermal/index.ts';

/** Per compiled model: the step grid and the first step where the curve is defined. */
export interface SolidusScan {
  stepKm: number;
  maxDepthKm: number;
  /** Last step index (z_n = maxDepthKm). */
  n: number;
  /** First step index where the solidus is defined (n + 1 when nowhere). */
  jDefined: number;
}

/** Prepares the step grid of one compiled model (the engine's: n = ⌈zMax/step − 1e-9⌉). */
export function prepareSolidusScan(cm: CompiledModel, maxDepthKm: number, stepKm = 0.1): SolidusScan {
  if (!(stepKm > 0) || !(maxDepthKm > 0)) throw new RangeError(`solidus scan needs step > 0 and maxDepth > 0 km, got ${stepKm}, ${maxDepthKm}`);
  const n = Math.ceil(maxDepthKm / stepKm - 1e-9);
  let j = 0;
  while (j <= n && !Number.isFinite(WET_GRANITE_SOLIDUS_MPA(lithostaticPressureMPa(cm, Math.min(j * stepKm, maxDepthKm))))) j++;
  return { stepKm, maxDepthKm, n, jDefined: j };
}

/** Depth (km) of the first solidus crossing of the solved column `st`; NaN when not reached in its valid part. */
export function firstSolidusCrossingKm(cm: CompiledModel, st: ColumnState, scan: SolidusScan): number {
  const { stepKm, maxDepthKm, n, jDefined } = scan;
  const zOf = (j: number) => Math.min(j * stepKm, maxDepthKm);
  const f = (z: number) => columnTemperature(cm, st, z) - WET_GRANITE_SOLIDUS_MPA(lithostaticPressureMPa(cm, z));
  const valid = st.validToKm;
  if (!(valid >= 0)) return NaN;
  // Last step inside the valid part of the column (the engine stops at the first z > validToKm).
  let jMax = valid >= maxDepthKm ? n : Math.min(n, Math.floor(valid / stepKm));
  while (jMax + 1 <= n && zOf(jMax + 1) <= valid) jMax++;
  while (jMax >= 0 && zOf(jMax) > valid) jMax--;
  if (jMax < jDefined) return NaN;
  if (!(f(zOf(jMax)) >= 0)) return NaN;
  let lo = jDefined,
    hi = jMax; // f(z_hi) ≥ 0; find the smallest such index
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (f(zOf(mid)) >= 0) hi = mid;
    else lo = mid + 1;
  }
  const j = lo;
  // Before jDefined the curve is undefined (the engine's previous point is then "none"): the step point itself.
  if (j === jDefined) return zOf(j);
  let a = zOf(j - 1),
    b = zOf(j);
  while (b - a > 1e-6) {
    const m = 0.5 * (a + b);
    if (f(m) >= 0) b = m;
    else a = m;
  }
  return b;
}
