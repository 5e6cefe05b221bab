/**
 * Point queries on one column of a compiled model: temperature and heat flow at depth, isotherm depth, reduced
 * and basal heat flow. Closed-form Kirchhoff solution (see column.ts); Turcotte & Schubert (2002) §4-6, §4-8 for
 * the constant and exponential heat-production geotherms, Chapman (1986) for k(T) = k0/(1 + bT).
 */
import type { CompiledModel } from './compile.ts';
import {
  COLUMN_BAD_INPUT,
  COLUMN_CONDUCTIVITY_UNDEFINED,
  COLUMN_FLOW_EXHAUSTED,
  ColumnState,
  columnHeatFlow,
  columnIsothermDepth,
  columnTemperature,
  solveColumn,
} from './column.ts';

export interface ColumnOptions {
  /** Surface heat flow q0, mW/m² (default: the model's surfaceHeatFlowMWm2). */
  heatFlowMWm2?: number;
  /** Surface temperature T0, °C (default: the model's surfaceTemperatureC). */
  surfaceTemperatureC?: number;
}

function q0Of(cm: CompiledModel, o: ColumnOptions): number {
  const q = o.heatFlowMWm2 ?? cm.surfaceHeatFlowMWm2;
  if (!Number.isFinite(q)) throw new RangeError('no surface heat flow: give heatFlowMWm2 or put surfaceHeatFlowMWm2 in the model');
  return q;
}

/** Solves a column for q0 and T0 (allocates one ColumnState; reuse `solveColumn` in loops). */
export function solveModelColumn(cm: CompiledModel, o: ColumnOptions = {}): ColumnState {
  const st = new ColumnState(cm.nLayers);
  solveColumn(cm, q0Of(cm, o), o.surfaceTemperatureC ?? cm.surfaceTemperatureC, st);
  return st;
}

/**
 * Temperature (°C) at depthKm (km below the surface). NaN where the column is not valid: below the depth where
 * the heat flow reaches 0 (surface heat flow too low for the heat production), or where 1 + bT ≤ 0.
 */
export function temperatureAtDepth(cm: CompiledModel, depthKm: number, o: ColumnOptions = {}): number {
  return columnTemperature(cm, solveModelColumn(cm, o), depthKm);
}

/** Heat flow (mW/m²) at depthKm: q(z) = q0 − ∫₀ᶻ A dz (may be ≤ 0: then the column is flagged). */
export function heatFlowAtDepth(cm: CompiledModel, depthKm: number, o: ColumnOptions = {}): number {
  return columnHeatFlow(cm, q0Of(cm, o), depthKm);
}

/**
 * Depth (km) of the isotherm temperatureC, to 1e-6 km: the shallowest depth where T ≥ temperatureC (0 when the
 * surface is already that hot); null when it is not reached above maxDepthKm (default the compiled maxDepthKm) or
 * above the depth where the heat flow runs out.
 */
export function isothermDepth(cm: CompiledModel, temperatureC: number, o: ColumnOptions & { maxDepthKm?: number } = {}): number | null {
  const z = columnIsothermDepth(cm, solveModelColumn(cm, o), temperatureC, o.maxDepthKm ?? cm.maxDepthKm);
  return Number.isFinite(z) ? z : null;
}

/**
 * Reduced heat flow qr (mW/m²): q0 − A0·D for an exponential top layer (the Birch/Lachenbruch intercept of
 * q0 = qr + D·A0; Turcotte & Schubert 2002 §4-8), or q0 − A0·H (the flow below a constant top layer of thickness H).
 */
export function reducedHeatFlow(cm: CompiledModel, heatFlowMWm2: number): number {
  return heatFlowMWm2 - cm.reducedHeatFlowOffsetMWm2;
}

/** Basal heat flow (mW/m²) at the bottom of the stack: q0 − ∫A dz over the stack. */
export function basalHeatFlow(cm: CompiledModel, heatFlowMWm2: number): number {
  return heatFlowMWm2 - cm.totalHeatProductionMWm2;
}

/** Plain-language warnings for a solved column (empty when it is valid to the stack bottom). */
export function columnWarnings(cm: CompiledModel, st: ColumnState): string[] {
  const w: string[] = [];
  if (st.status & COLUMN_BAD_INPUT)
    w.push(`surface heat flow ${st.surfaceHeatFlowMWm2} mW/m² / temperature ${st.surfaceTemperatureC} °C are not usable (q0 must be > 0 and both finite)`);
  if (st.status & COLUMN_FLOW_EXHAUSTED) {
    w.push(
      `surface heat flow ${st.surfaceHeatFlowMWm2} mW/m² is too low for the model's heat production ` +
        `(${cm.totalHeatProductionMWm2.toFixed(2)} mW/m² over the stack): the heat flow reaches 0 at ${st.validToKm.toFixed(3)} km ` +
        `in ${cm.names[st.exhaustedLayer]}; this steady-state model is inconsistent there and no temperature is given below`,
    );
  }
  if (st.status & COLUMN_CONDUCTIVITY_UNDEFINED)
    w.push(`1 + b·T ≤ 0 at ${st.validToKm} km: k(T) = k0/(1 + bT) is undefined there; no temperature is given below`);
  return w;
}
