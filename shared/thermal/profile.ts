/**
 * A sampled geotherm: temperature, heat flow and lithostatic pressure every stepKm from the surface down to
 * maxDepthKm (closed form at each sample; see column.ts). Temperatures below the depth where the column stops being
 * valid (heat flow exhausted, or 1 + bT ≤ 0) are NaN and the column's warnings say why.
 */
import type { CompiledModel } from './compile.ts';
import { ColumnState, columnHeatFlow, columnTemperature, solveColumn } from './column.ts';
import { basalHeatFlow, columnWarnings, reducedHeatFlow, type ColumnOptions } from './geotherm.ts';
import { lithostaticPressureMPa } from './pressure.ts';

export interface ColumnProfile {
  depthKm: Float64Array;
  temperatureC: Float64Array;
  heatFlowMWm2: Float64Array;
  pressureMPa: Float64Array;
  surfaceHeatFlowMWm2: number;
  surfaceTemperatureC: number;
  basalHeatFlowMWm2: number;
  reducedHeatFlowMWm2: number;
  /** Column status bits (COLUMN_* in column.ts); 0 = valid throughout. */
  status: number;
  /** Depth to which temperatures are valid, km. */
  validToKm: number;
  state: ColumnState;
  warnings: string[];
}

export interface ProfileOptions extends ColumnOptions {
  /** Sample spacing, km (default 0.1). */
  stepKm?: number;
  /** Deepest sample, km (default the compiled maxDepthKm); always included as the last sample. */
  maxDepthKm?: number;
}

/** Samples a column every stepKm (km) to maxDepthKm; see ColumnProfile. */
export function columnProfile(cm: CompiledModel, o: ProfileOptions = {}): ColumnProfile {
  const step = o.stepKm ?? 0.1;
  const zMax = o.maxDepthKm ?? cm.maxDepthKm;
  if (!(step > 0)) throw new RangeError(`stepKm must be > 0, got ${step}`);
  if (!(zMax > 0)) throw new RangeError(`maxDepthKm must be > 0, got ${zMax}`);
  const q0 = o.heatFlowMWm2 ?? cm.surfaceHeatFlowMWm2;
  if (!Number.isFinite(q0)) throw new RangeError('no surface heat flow: give heatFlowMWm2 or put surfaceHeatFlowMWm2 in the model');
  const t0 = o.surfaceTemperatureC ?? cm.surfaceTemperatureC;
  const st = new ColumnState(cm.nLayers);
  solveColumn(cm, q0, t0, st);
  // Samples at k·step (rounded to 1e-9 km so 0.1-km steps print cleanly), plus zMax itself.
  const nSteps = Math.floor(zMax / step + 1e-9);
  const n = nSteps + 1 + (Math.abs(nSteps * step - zMax) > 1e-9 ? 1 : 0);
  const depthKm = new Float64Array(n), temperatureC = new Float64Array(n), heatFlowMWm2 = new Float64Array(n), pressureMPa = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    const z = j <= nSteps ? Math.round(j * step * 1e9) / 1e9 : zMax;
    depthKm[j] = z;
    temperatureC[j] = columnTemperature(cm, st, z);
    heatFlowMWm2[j] = columnHeatFlow(cm, q0, z);
    pressureMPa[j] = lithostaticPressureMPa(cm, z);
  }
  const warnings = [...cm.warnings, ...columnWarnings(cm, st)];
  if (zMax > cm.stackBottomKm) warnings.push(`profile extends below the stack bottom (${cm.stackBottomKm} km): the last layer is extrapolated`);
  return {
    depthKm,
    temperatureC,
    heatFlowMWm2,
    pressureMPa,
    surfaceHeatFlowMWm2: q0,
    surfaceTemperatureC: t0,
    basalHeatFlowMWm2: basalHeatFlow(cm, q0),
    reducedHeatFlowMWm2: reducedHeatFlow(cm, q0),
    status: st.status,
    validToKm: st.validToKm,
    state: st,
    warnings,
  };
}
