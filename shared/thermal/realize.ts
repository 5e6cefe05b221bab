/**
 * Turns a model with distributions into deterministic models: one realization per random stream (parameters drawn
 * once per realization, in a fixed order: surface heat flow, surface temperature, then per layer k0, b, A, U, Th,
 * K, D, ρ, then the mantle potential temperature; constants draw nothing), or the nominal model (each distribution's central value).
 */
import type { RandomStream } from '../random/prng.ts';
import { drawFrom, nominalValue } from '../random/distributions.ts';
import type { ThermalModelInput, UncertainNumber } from '../schema/model.ts';
import type { ThermalLayer, ThermalModel } from './model.ts';

function drawOpt(v: UncertainNumber | undefined, rng: RandomStream): number | undefined {
  return v === undefined ? undefined : typeof v === 'number' ? v : drawFrom(rng, v);
}

function nomOpt(v: UncertainNumber | undefined): number | undefined {
  return v === undefined ? undefined : typeof v === 'number' ? v : nominalValue(v);
}

function mapModel(m: ThermalModelInput, f: (v: UncertainNumber | undefined) => number | undefined): ThermalModel {
  const surfaceHeatFlowMWm2 = f(m.surfaceHeatFlowMWm2);
  const surfaceTemperatureC = f(m.surfaceTemperatureC) as number;
  const layers: ThermalLayer[] = m.layers.map((l) => {
    const out: ThermalLayer = { bottomKm: l.bottomKm, conductivityWmK: f(l.conductivityWmK) as number };
    if (l.name !== undefined) out.name = l.name;
    const b = f(l.conductivityTempCoeffPerK);
    if (b !== undefined) out.conductivityTempCoeffPerK = b;
    const a = f(l.heatProductionUWm3);
    if (a !== undefined) out.heatProductionUWm3 = a;
    const u = f(l.uraniumPpm),
      th = f(l.thoriumPpm),
      k = f(l.potassiumPct);
    if (u !== undefined) out.uraniumPpm = u;
    if (th !== undefined) out.thoriumPpm = th;
    if (k !== undefined) out.potassiumPct = k;
    const d = f(l.heatProductionDecayKm);
    if (d !== undefined) out.heatProductionDecayKm = d;
    const rho = f(l.densityKgM3);
    if (rho !== undefined) out.densityKgM3 = rho;
    if (l.rock !== undefined) out.rock = l.rock;
    if (l.heatProducingUpperCrust !== undefined) out.heatProducingUpperCrust = l.heatProducingUpperCrust;
    if (l.conductivityReferenceTempC !== undefined) out.conductivityReferenceTempC = l.conductivityReferenceTempC;
    return out;
  });
  // Drawn after every layer parameter, so models without it keep their random streams.
  const tp = f(m.mantlePotentialTemperatureC);
  const out: ThermalModel = { surfaceTemperatureC, layers };
  if (surfaceHeatFlowMWm2 !== undefined) out.surfaceHeatFlowMWm2 = surfaceHeatFlowMWm2;
  if (tp !== undefined) out.mantlePotentialTemperatureC = tp;
  return out;
}

/** One realization: every distribution drawn once from `rng`, in the fixed order above. */
export function realizeModel(m: ThermalModelInput, rng: RandomStream): ThermalModel {
  // Object-literal evaluation order in mapModel is the fixed draw order (q0, T0, then layer fields in order).
  return mapModel(m, (v) => drawOpt(v, rng));
}

/** The nominal model: normal → mean, truncnormal → mean clamped, uniform → midpoint, triangular → mode. */
export function nominalModel(m: ThermalModelInput): ThermalModel {
  return mapModel(m, nomOpt);
}

/** True when any parameter is a distribution. */
export function isUncertainModel(m: ThermalModelInput): boolean {
  const u = (v: UncertainNumber | undefined) => v !== undefined && typeof v !== 'number';
  return (
    u(m.surfaceHeatFlowMWm2) ||
    u(m.surfaceTemperatureC) ||
    u(m.mantlePotentialTemperatureC) ||
    m.layers.some((l) =>
      [
        l.conductivityWmK,
        l.conductivityTempCoeffPerK,
        l.heatProductionUWm3,
        l.uraniumPpm,
        l.thoriumPpm,
        l.potassiumPct,
        l.heatProductionDecayKm,
        l.densityKgM3,
      ].some(u),
    )
  );
}

/**
 * Why a realization is physically impossible (a drawn k0, D or ρ ≤ 0, a negative heat production or content),
 * or null when it is usable. Such realizations are rejected and counted, never silently clamped.
 */
export function realizationProblem(m: ThermalModel): string | null {
  for (let i = 0; i < m.layers.length; i++) {
    const l = m.layers[i];
    if (!(l.conductivityWmK > 0)) return `layers[${i}] conductivityWmK ${l.conductivityWmK} ≤ 0`;
    if (l.heatProductionDecayKm !== undefined && !(l.heatProductionDecayKm > 0)) return `layers[${i}] heatProductionDecayKm ≤ 0`;
    if (l.densityKgM3 !== undefined && !(l.densityKgM3 > 0)) return `layers[${i}] densityKgM3 ≤ 0`;
    for (const k of ['heatProductionUWm3', 'uraniumPpm', 'thoriumPpm', 'potassiumPct'] as const) {
      const v = l[k];
      if (v !== undefined && !(v >= 0)) return `layers[${i}] ${k} < 0`;
    }
  }
  if (m.surfaceHeatFlowMWm2 !== undefined && !(m.surfaceHeatFlowMWm2 > 0)) return `surfaceHeatFlowMWm2 ${m.surfaceHeatFlowMWm2} ≤ 0`;
  return null;
}
