/**
 * Paleo-gradients from peak P–T: depth at peak from lithostatic pressure z = P/(ρ g) for a uniform overburden
 * (ρ default 2700 kg/m³, the thermal model's default density; g 9.81 m/s²), the apparent gradient
 * (T − T0)/z and the facies (shared/petrology peakConditions). With a thermal model: the depth from the model's own
 * density column (P = ∫ρ g dz, shared/thermal depthFromLithostaticPressure), and the depth at which today's
 * steady-state geotherm for the given surface heat flow reaches the sample's peak temperature
 * (shared/thermal columnIsothermDepth). A screening comparison: it assumes lithostatic pressure at peak (no
 * tectonic overpressure) and compares a transient metamorphic peak with a steady conductive geotherm.
 */
import { peakConditions } from '../petrology/index.ts';
import { ColumnState, columnIsothermDepth, depthFromLithostaticPressure, mpaFromKbar, solveColumn, type CompiledModel } from '../thermal/index.ts';

export const DEFAULT_PALEO_DENSITY_KG_M3 = 2700;

export interface PaleoOptions {
  /** Mean overburden density, kg/m³ (default 2700). */
  densityKgM3?: number;
  gravityMS2?: number;
  /** Surface temperature at the time of the peak, °C (default: the model's, else 10). */
  surfaceTemperatureC?: number;
  /** Today's thermal model (compiled) and surface heat flow, mW/m² (default the model's). */
  model?: CompiledModel | null;
  heatFlowMWm2?: number;
}

export interface PaleoGradient {
  id: string;
  peakTemperatureC: number;
  peakPressureKbar: number;
  /** Depth at peak for the uniform density, km. */
  depthKm: number;
  apparentGradientCPerKm: number;
  facies: string | null;
  faciesApproximate: boolean;
  /** Depth at peak from the model's density column, km (null without a model). */
  modelDepthKm: number | null;
  /** Depth at which today's geotherm reaches the peak temperature, km (null without a model or when not reached). */
  todayDepthKm: number | null;
}

/** Paleo-gradients of the samples that carry peak T (°C) and P (kbar). */
export function paleoGradients(
  samples: readonly { id: string; peakTemperatureC?: number; peakPressureKbar?: number }[],
  o: PaleoOptions = {},
): PaleoGradient[] {
  const rho = o.densityKgM3 ?? DEFAULT_PALEO_DENSITY_KG_M3;
  const g = o.gravityMS2 ?? 9.81;
  if (!(rho > 0) || !(g > 0)) throw new RangeError(`density and gravity must be > 0, got ${rho}, ${g}`);
  const cm = o.model ?? null;
  const t0 = o.surfaceTemperatureC ?? cm?.surfaceTemperatureC ?? 10;
  let st: ColumnState | null = null;
  if (cm !== null) {
    const q0 = o.heatFlowMWm2 ?? cm.surfaceHeatFlowMWm2;
    if (!(q0 > 0)) throw new RangeError("a surface heat flow > 0 is needed for today's geotherm");
    st = new ColumnState(cm.nLayers);
    solveColumn(cm, q0, cm.surfaceTemperatureC, st);
  }
  const out: PaleoGradient[] = [];
  for (const s of samples) {
    const T = s.peakTemperatureC,
      P = s.peakPressureKbar;
    if (!(Number.isFinite(T) && Number.isFinite(P))) continue;
    const pc = peakConditions(T as number, P as number, { densityKgM3: rho, gravityMS2: g, surfaceTemperatureC: t0 });
    let modelDepthKm: number | null = null,
      todayDepthKm: number | null = null;
    if (cm !== null && st !== null) {
      const z = depthFromLithostaticPressure(cm, mpaFromKbar(P as number));
      modelDepthKm = Number.isFinite(z) ? z : null;
      const zt = columnIsothermDepth(cm, st, T as number, cm.maxDepthKm);
      todayDepthKm = Number.isFinite(zt) ? zt : null;
    }
    out.push({
      id: s.id,
      peakTemperatureC: T as number,
      peakPressureKbar: P as number,
      depthKm: pc.depthKm,
      apparentGradientCPerKm: pc.apparentGradientCPerKm,
      facies: pc.facies.facies,
      faciesApproximate: pc.facies.approximate,
      modelDepthKm,
      todayDepthKm,
    });
  }
  return out;
}
