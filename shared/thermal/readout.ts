/**
 * Pieces of the one-column answer that the CLI and the column inspector share: the melt and mantle limits as JSON,
 * the reason a profile sample has no temperature, and pore pressure (hydrostatic or a fixed pore-fluid factor λ)
 * with λ = Pf/Plith and the effective pressure Plith − Pf (Hubbert & Rubey 1959).
 */
import type { CompiledModel } from './compile.ts';
import { layerRock, layerSolidus, type ColumnLimits } from './limits.ts';
import { FRESH_WATER_DENSITY_KG_M3, assessPoreFluidFactor, effectivePressureMPa, hydrostaticPressureMPa, poreFluidFactor } from './pressure.ts';

const r6 = (v: number) => Math.round(v * 1e6) / 1e6;
const num = (v: number): number | null => (Number.isFinite(v) ? r6(v) : null);

/** The limits of a column as JSON (depths in km, null = not reached above the maximum depth). */
export function limitsToJson(cm: CompiledModel, lim: ColumnLimits): Record<string, unknown> {
  const curve = (i: number, which: 'wet' | 'dry') => {
    if (i < 0) return null;
    const c = layerSolidus(cm, i)[which];
    return { layer: cm.names[i], rock: layerRock(cm, i), curve: c.id, label: c.label, source: c.source };
  };
  return {
    meltOnsetKm: num(lim.meltOnsetKm),
    meltOnset: curve(lim.meltOnsetLayer, 'dry'),
    wetSolidusKm: num(lim.wetSolidusKm),
    wetSolidus: curve(lim.wetSolidusLayer, 'wet'),
    lithosphereBaseKm: num(lim.lithosphereBaseKm),
    mantlePotentialTemperatureC: lim.mantlePotentialTemperatureC,
    adiabatAboveDrySolidusToKm: num(lim.adiabatAboveDrySolidusToKm),
    decompressionMelting: lim.lithosphereBaseKm < lim.adiabatAboveDrySolidusToKm,
    validToKm: num(lim.validToKm),
    invalidBelow: lim.endReason,
  };
}

/** Why a sample at depth z (km) has no temperature: the limit's reason below validToKm, else null. */
export function sampleFlag(lim: ColumnLimits, z: number): ColumnLimits['endReason'] {
  return z > lim.validToKm ? lim.endReason : null;
}

/** How the pore pressure is set: hydrostatic from the surface, or a fixed fraction λ of the lithostatic pressure. */
export type PorePressureMode = { kind: 'hydrostatic'; fluidDensityKgM3: number } | { kind: 'lambda'; lambda: number };

/**
 * Parses `hydrostatic` or `lambda:0.7` (λ ≥ 0); fluid density in kg/m³ (default 1000, fresh water). Throws
 * RangeError with what was expected.
 */
export function parsePorePressureMode(text: string | undefined, fluidDensityKgM3 = FRESH_WATER_DENSITY_KG_M3): PorePressureMode {
  if (!(fluidDensityKgM3 > 0)) throw new RangeError(`fluid density must be > 0 kg/m³, got ${fluidDensityKgM3}`);
  if (text === undefined || text === 'hydrostatic') return { kind: 'hydrostatic', fluidDensityKgM3 };
  const m = /^lambda:(.+)$/.exec(text);
  const v = m ? Number(m[1]) : NaN;
  if (!(v >= 0) || !Number.isFinite(v)) throw new RangeError(`expected hydrostatic or lambda:λ with λ ≥ 0 (e.g. lambda:0.7), got ${text}`);
  return { kind: 'lambda', lambda: v };
}

/** Pore pressure, λ and effective pressure (MPa) at depthKm for lithostatic pressure pLithMPa. */
export function porePressureAt(
  mode: PorePressureMode,
  depthKm: number,
  pLithMPa: number,
  gravityMS2: number,
): { porePressureMPa: number; poreFluidFactor: number; effectivePressureMPa: number } {
  const pf = mode.kind === 'hydrostatic' ? hydrostaticPressureMPa(depthKm, { fluidDensityKgM3: mode.fluidDensityKgM3, gravityMS2 }) : mode.lambda * pLithMPa;
  return {
    porePressureMPa: pf,
    poreFluidFactor: depthKm > 0 ? poreFluidFactor(pf, pLithMPa) : mode.kind === 'lambda' ? mode.lambda : NaN,
    effectivePressureMPa: effectivePressureMPa(pLithMPa, pf),
  };
}

/** Description of the pore-pressure mode, and the hazard warning for a fixed λ (null when none). */
export function describePorePressure(mode: PorePressureMode): { method: string; warning: string | null } {
  if (mode.kind === 'hydrostatic')
    return {
      method: `hydrostatic: Pf = ρf·g·z, ρf = ${mode.fluidDensityKgM3} kg/m³, water table at the surface; λ = Pf/Plith, effective pressure Plith − Pf (Hubbert & Rubey 1959)`,
      warning: null,
    };
  return {
    method: `fixed pore-fluid factor: Pf = λ·Plith, λ = ${mode.lambda}; effective pressure Plith − Pf (Hubbert & Rubey 1959)`,
    warning: assessPoreFluidFactor(mode.lambda).warning,
  };
}
