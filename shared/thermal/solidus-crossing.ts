/**
 * Depth where a geotherm first reaches a solidus: the shallowest z with T(z) ≥ T_solidus(P_lith(z)), scanned every
 * stepKm and refined by bisection to 1e-6 km. Solidus curves from shared/petrology/solidus.ts (water-saturated
 * granite after Huang & Wyllie 1973; dry peridotite after Hirschmann 2000).
 */
import { dryPeridotiteSolidusC, wetGraniteSolidusC } from '../petrology/solidus.ts';
import type { CompiledModel } from './compile.ts';
import type { ColumnState } from './column.ts';
import { columnTemperature } from './column.ts';
import { lithostaticPressureMPa } from './pressure.ts';

/** Solidus temperature (°C) at lithostatic pressure (MPa). */
export type SolidusCurveMPa = (pressureMPa: number) => number;

export const WET_GRANITE_SOLIDUS_MPA: SolidusCurveMPa = (p) => wetGraniteSolidusC(p / 100);
export const DRY_PERIDOTITE_SOLIDUS_MPA: SolidusCurveMPa = (p) => dryPeridotiteSolidusC(p / 1000);

/**
 * First depth (km) above maxDepthKm where the solved column's temperature reaches the solidus; NaN when it does
 * not (or the column stops being valid first). Depths where the curve is undefined are skipped.
 */
export function solidusCrossingDepth(cm: CompiledModel, st: ColumnState, solidus: SolidusCurveMPa, maxDepthKm: number, stepKm = 0.1): number {
  const f = (z: number) => columnTemperature(cm, st, z) - solidus(lithostaticPressureMPa(cm, z));
  let zPrev = NaN;
  const n = Math.ceil(maxDepthKm / stepKm - 1e-9);
  for (let j = 0; j <= n; j++) {
    const z = Math.min(j * stepKm, maxDepthKm);
    if (z > st.validToKm) return NaN;
    const v = f(z);
    if (v !== v) {
      zPrev = NaN;
      continue;
    }
    if (v >= 0) {
      if (zPrev !== zPrev) return z;
      let lo = zPrev,
        hi = z;
      while (hi - lo > 1e-6) {
        const mid = 0.5 * (lo + hi);
        const fm = f(mid);
        if (fm >= 0) hi = mid;
        else lo = mid;
      }
      return hi;
    }
    zPrev = z;
  }
  return NaN;
}

/** Both crossings of the project's default curves, km (NaN = not reached). */
export function solidusCrossings(cm: CompiledModel, st: ColumnState, maxDepthKm: number, stepKm = 0.1): { wetGranite: number; dryPeridotite: number } {
  return {
    wetGranite: solidusCrossingDepth(cm, st, WET_GRANITE_SOLIDUS_MPA, maxDepthKm, stepKm),
    dryPeridotite: solidusCrossingDepth(cm, st, DRY_PERIDOTITE_SOLIDUS_MPA, maxDepthKm, stepKm),
  };
}
