/**
 * The inputs and the prepared state of a heat-in-place run over a grid (monte-carlo.ts): the resource parameters and
 * their defaults, the grid spec, each realization's drawn parameters and the prepared models and heat-flow tables
 * (prepare.ts), and the summation constants every chunk agrees on.
 */
import type { ThermalModelInput, UncertainNumber } from '../schema/model.ts';
import type { CompiledModel } from '../thermal/compile.ts';
import type { HeatWindow } from './column-heat.ts';
import type { HeatTable } from './heat-table.ts';

export type Floats = Float32Array | Float64Array;

/** Cells per summation block (chunk boundaries must be multiples of it). */
export const SUM_BLOCK = 512;
/** Quantities summed per (block, area set, realization): G·A (K·m³), X·A (K·m³), hot volume h·A (m³), hot area (m²). */
export const SUM_QUANTITIES = 4;
/** Heat-flow errors are drawn within ±this many standard deviations of the keyed normals (their largest |z| is 8.66). */
export const TABLE_SD_SPAN = 8.7;

export interface ResourceParameters {
  /** Volumetric heat capacity of the rock, MJ/m³/K (default 2.7). */
  rhoCMJm3K: UncertainNumber;
  /** Recovery factor Rg, (0, 1] (default 0.1). */
  recoveryFactor: UncertainNumber;
  /** Utilization efficiency ηu of the available work, (0, 1] (default 0.4). */
  utilizationEfficiency: UncertainNumber;
  /** Overall conversion efficiency ηc of the thermal × conversion route, (0, 1]; absent = that route not computed. */
  conversionEfficiency?: UncertainNumber;
  /** Plant life, Julian years (default 30). */
  lifeYears: number;
}

export const DEFAULT_PARAMETERS: Readonly<ResourceParameters> = Object.freeze({
  rhoCMJm3K: 2.7,
  recoveryFactor: 0.1,
  utilizationEfficiency: 0.4,
  lifeYears: 30,
});

export interface ResourceSpec {
  /** One thermal model, or one per model zone (distributions allowed); surfaceHeatFlowMWm2 is ignored. */
  models: ThermalModelInput[];
  /** Per-cell index into models (default all 0). */
  modelZones?: Uint8Array | Uint16Array | Uint32Array;
  /** Surface heat flow per cell, mW/m² (NaN = no data: the cell is left out of everything). */
  heatFlowMWm2: Floats;
  /** Its standard deviation (e.g. the kriging sd), mW/m²; NaN or absent = 0. */
  heatFlowSdMWm2?: Floats;
  /** 'full' (default): one standard normal per realization for all cells; 'independent': one per cell. */
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /**
   * Heat-flow realizations, realization-major (realization r, cell c at r·cells + c), mW/m², e.g. conditional
   * simulations: when given they replace q + sd·z in realization r (sd and the correlation are then unused); a
   * cell whose heatFlowMWm2 is NaN stays no data. Totals are then sums over each simulated field.
   */
  heatFlowRealizationsMWm2?: Float32Array;
  /** Grid width (cells per row), to find a cell's row. */
  width: number;
  /** Area of one cell of each row, m² (length = grid height). */
  rowAreaM2: Float64Array;
  /** Per-cell ground areas, m² (projected grids, where areas vary along a row too); overrides rowAreaM2. */
  cellAreaM2?: Float64Array;
  /** Cells (1) inside the assessed polygon; its totals are area set 1. */
  polygonMask?: Uint8Array;
  /** Per-cell zone label 0 … zoneCount − 1 (−1 = none) of a class layer; its totals follow the polygon's. */
  zoneLabels?: Int32Array;
  zoneCount?: number;
  window: HeatWindow;
  parameters: ResourceParameters;
  /** Monte Carlo realizations (0 = the deterministic run only). */
  realizations: number;
  seed: number;
  /** Table nodes per realization and model zone (default 256). */
  tableNodes?: number;
}

export interface RealizationParameters {
  rhoCMJm3K: Float64Array;
  recoveryFactor: Float64Array;
  utilizationEfficiency: Float64Array;
  conversionEfficiency: Float64Array;
  heatFlowNormal: Float64Array;
  /** 1 = usable, 0 = rejected (a physically impossible draw). */
  accepted: Uint8Array;
}

export interface PreparedResource {
  spec: ResourceSpec;
  cells: number;
  /** Area sets: 0 the grid, then the polygon (when given), then one per zone. */
  sets: number;
  polygonSet: number;
  zoneSet0: number;
  blocks: number;
  /** Nominal models (compiled) and parameters. */
  nominal: { models: CompiledModel[]; rhoCMJm3K: number; recoveryFactor: number; utilizationEfficiency: number; conversionEfficiency: number };
  compiled: (CompiledModel | null)[][];
  tables: (HeatTable | null)[][];
  params: RealizationParameters;
  rejected: number;
  firstRejection: string | null;
  qLo: number;
  qHi: number;
  lifeS: number;
}

/** Why a set of resource parameters is impossible, or null. */
export function parameterProblem(rhoC: number, rg: number, eta: number, etaC: number, hasConversion: boolean): string | null {
  if (!(rhoC > 0)) return `rhoCMJm3K ${rhoC} ≤ 0`;
  if (!(rg > 0 && rg <= 1)) return `recoveryFactor ${rg} outside (0, 1]`;
  if (!(eta > 0 && eta <= 1)) return `utilizationEfficiency ${eta} outside (0, 1]`;
  if (hasConversion && !(etaC > 0 && etaC <= 1)) return `conversionEfficiency ${etaC} outside (0, 1]`;
  return null;
}
