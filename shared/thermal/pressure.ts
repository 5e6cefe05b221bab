/**
 * Pressure in a column: lithostatic P = ∫ρ g dz from the layer densities, hydrostatic Pf = ρf·g·z, the pore-fluid
 * factor λ = Pf/Plith and the effective pressure Plith − Pf (Hubbert & Rubey 1959). Units: MPa, 1 kbar = 100 MPa;
 * ρ kg/m³ · g m/s² · z km · 10³ = Pa, so P [MPa] = ρ·g·z·10⁻³.
 */
import type { CompiledModel } from './compile.ts';
import { layerAt } from './column.ts';

/** Standard gravity, m/s² (CGPM 1901), offered for the hydrostatic gradient. */
export const STANDARD_GRAVITY_MS2 = 9.80665;
/** Fresh-water density, kg/m³ (default pore fluid). */
export const FRESH_WATER_DENSITY_KG_M3 = 1000;

/** MPa → kbar (1 kbar = 100 MPa). */
export function kbarFromMPa(pMPa: number): number {
  return pMPa / 100;
}

/** kbar → MPa. */
export function mpaFromKbar(pKbar: number): number {
  return pKbar * 100;
}

/** Lithostatic pressure (MPa) at depthKm below the surface, from the compiled layer densities and gravity. */
export function lithostaticPressureMPa(cm: CompiledModel, depthKm: number): number {
  if (!(depthKm >= 0)) return NaN;
  const i = layerAt(cm, depthKm);
  return cm.pressureTopMPa[i] + cm.densityKgM3[i] * cm.gravityMS2 * (depthKm - cm.topKm[i]) * 1e-3;
}

/** Lithostatic pressure (MPa) of a uniform column: ρ·g·z (ρ kg/m³, z km, g m/s², default 9.81). */
export function uniformLithostaticPressureMPa(depthKm: number, densityKgM3: number, gravityMS2 = 9.81): number {
  return densityKgM3 * gravityMS2 * depthKm * 1e-3;
}

/** Depth (km) at which the compiled column's lithostatic pressure reaches pMPa (inverse of lithostaticPressureMPa). */
export function depthFromLithostaticPressure(cm: CompiledModel, pMPa: number): number {
  if (!(pMPa >= 0)) return NaN;
  let i = 0;
  while (i + 1 < cm.nLayers && pMPa >= cm.pressureTopMPa[i + 1]) i++;
  return cm.topKm[i] + ((pMPa - cm.pressureTopMPa[i]) * 1e3) / (cm.densityKgM3[i] * cm.gravityMS2);
}

export interface HydrostaticOptions {
  /** Pore-fluid density, kg/m³ (default 1000, fresh water). */
  fluidDensityKgM3?: number;
  /** Gravity, m/s² (default 9.81 to match the lithostatic default; 9.80665 = standard gravity). */
  gravityMS2?: number;
}

/** Hydrostatic pore pressure (MPa) at depthKm: ρf·g·z, with the water table at the surface. */
export function hydrostaticPressureMPa(depthKm: number, o: HydrostaticOptions = {}): number {
  const rho = o.fluidDensityKgM3 ?? FRESH_WATER_DENSITY_KG_M3;
  const g = o.gravityMS2 ?? 9.81;
  if (!(depthKm >= 0) || !(rho > 0) || !(g > 0)) return NaN;
  return rho * g * depthKm * 1e-3;
}

/** Pore-fluid factor λ = Pf/Plith (Hubbert & Rubey 1959); NaN when Plith ≤ 0. */
export function poreFluidFactor(fluidPressureMPa: number, lithostaticMPa: number): number {
  return lithostaticMPa > 0 ? fluidPressureMPa / lithostaticMPa : NaN;
}

/** Effective pressure Plith − Pf (MPa) (Hubbert & Rubey 1959). */
export function effectivePressureMPa(lithostaticMPa: number, fluidPressureMPa: number): number {
  return lithostaticMPa - fluidPressureMPa;
}

/** λ at and above which the project warns of a hydraulic-fracturing hazard. */
export const PORE_FLUID_FACTOR_WARNING = 0.6;

export interface PoreFluidAssessment {
  lambda: number;
  level: 'normal' | 'elevated' | 'high' | 'exceeds-lithostatic';
  /** A warning sentence (null when λ < 0.6). */
  warning: string | null;
}

/**
 * Flags a high pore-fluid factor as a hydraulic-fracturing hazard. Fractures open when fluid pressure exceeds the
 * least principal stress plus the small tensile strength (Hubbert & Willis 1957); in extensional and strike-slip
 * settings that stress is well below lithostatic, so λ of about 0.6–0.9 can suffice. Levels: ≥ 0.6 elevated,
 * ≥ 0.8 high, ≥ 1 exceeds lithostatic. No level is a statement of safety.
 */
export function assessPoreFluidFactor(lambda: number): PoreFluidAssessment {
  const caveat = 'λ < 1 is never a guarantee of safety: the least principal stress, not the lithostatic load, controls fracturing';
  if (!Number.isFinite(lambda)) return { lambda, level: 'normal', warning: `pore-fluid factor undefined; ${caveat}` };
  if (lambda >= 1)
    return {
      lambda,
      level: 'exceeds-lithostatic',
      warning: `pore-fluid factor λ = ${lambda.toFixed(3)} ≥ 1: fluid pressure exceeds the overburden; hydraulic fracturing expected`,
    };
  if (lambda >= 0.8)
    return { lambda, level: 'high', warning: `pore-fluid factor λ = ${lambda.toFixed(3)}: high overpressure, hydraulic-fracturing hazard; ${caveat}` };
  if (lambda >= PORE_FLUID_FACTOR_WARNING)
    return {
      lambda,
      level: 'elevated',
      warning: `pore-fluid factor λ = ${lambda.toFixed(3)} ≥ ${PORE_FLUID_FACTOR_WARNING}: possible hydraulic-fracturing hazard where the least stress is below lithostatic; ${caveat}`,
    };
  return { lambda, level: 'normal', warning: null };
}
