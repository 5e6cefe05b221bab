import type { RockKind } from '../schema/model.ts';

/**
 * The deterministic thermal model the kernels work on: every parameter a number (a Monte Carlo realization of the
 * JSON model, or the JSON model itself when nothing is uncertain). Units in the names.
 */
export interface ThermalLayer {
  name?: string;
  bottomKm: number;
  conductivityWmK: number;
  /** b in k(T) = k0/(1 + bT), 1/K; 0 = constant conductivity. */
  conductivityTempCoeffPerK?: number;
  /** Heat production at the layer top, µW/m³ (or the radioelement contents below). */
  heatProductionUWm3?: number;
  uraniumPpm?: number;
  thoriumPpm?: number;
  potassiumPct?: number;
  /** e-folding depth D of the heat production, km; absent = constant heat production in the layer. */
  heatProductionDecayKm?: number;
  /** Density, kg/m³ (absent = 2700 with a warning). */
  densityKgM3?: number;
  /** Rock kind (chooses the solidus curves; `mantle` also the adiabat); absent = felsic-crust. */
  rock?: RockKind;
  /** The layer whose heat production defines the reduced heat flow. */
  heatProducingUpperCrust?: boolean;
  /** Temperature at which conductivityWmK applies, °C (absent = 0 °C). */
  conductivityReferenceTempC?: number;
}

export interface ThermalModel {
  surfaceTemperatureC: number;
  /** Used where no heat-flow grid or explicit value is given. */
  surfaceHeatFlowMWm2?: number;
  /** Mantle potential temperature, °C (absent = DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C). */
  mantlePotentialTemperatureC?: number;
  layers: ThermalLayer[];
}

/** Density assumed for a layer that gives none, kg/m³ (a common continental-crust figure). */
export const DEFAULT_DENSITY_KG_M3 = 2700;
/** Standard gravity for lithostatic pressure, m/s² (the project's default; configurable). */
export const DEFAULT_GRAVITY_MS2 = 9.81;
/**
 * Default mantle potential temperature, °C: 1330 °C, close to the 1333 °C basal temperature of the plate model of
 * Parsons & Sclater (1977) and inside the 1280–1350 °C range of ambient-mantle estimates (McKenzie & Bickle 1988;
 * from memory, not checked against the texts).
 */
export const DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C = 1330;
/** Default rock kind of a layer that names none. */
export const DEFAULT_ROCK: RockKind = 'felsic-crust';
