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
}

export interface ThermalModel {
  surfaceTemperatureC: number;
  /** Used where no heat-flow grid or explicit value is given. */
  surfaceHeatFlowMWm2?: number;
  layers: ThermalLayer[];
}

/** Density assumed for a layer that gives none, kg/m³ (a common continental-crust figure). */
export const DEFAULT_DENSITY_KG_M3 = 2700;
/** Standard gravity for lithostatic pressure, m/s² (the project's default; configurable). */
export const DEFAULT_GRAVITY_MS2 = 9.81;
