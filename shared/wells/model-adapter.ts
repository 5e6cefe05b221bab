import { ColumnState, columnHeatFlow, columnTemperature, solveColumn, type CompiledModel } from '../thermal/index.ts';
import type { WellModel } from './analyze.ts';
import type { ConductivityInterval } from './types.ts';

/**
 * The compiled thermal model as the wells path uses it: its geotherm at any surface heat flow (the closed-form
 * layered solution with k(T) = k0/(1 + bT) of shared/thermal), and its layers as a conductivity column in metres
 * with each layer's k0 and b. `surfaceTemperatureC` overrides the model's own (a CLI --surface-temp-c).
 * Depths below the column's valid range give NaN temperatures (the model check skips them).
 */
export function wellModelFromCompiled(cm: CompiledModel, surfaceTemperatureC?: number): WellModel {
  const t0 = surfaceTemperatureC ?? cm.surfaceTemperatureC;
  const st = new ColumnState(cm.nLayers);
  const column: ConductivityInterval[] = [];
  for (let i = 0; i < cm.nLayers; i++) {
    column.push({ topM: cm.topKm[i] * 1000, bottomM: cm.bottomKm[i] * 1000, conductivityWmK: cm.k0[i], tempCoeffPerK: cm.b[i] });
  }
  return {
    temperature: (depthsKm, q, out) => {
      solveColumn(cm, q, t0, st);
      for (let i = 0; i < depthsKm.length; i++) out[i] = columnTemperature(cm, st, depthsKm[i]);
      return out;
    },
    column,
    surfaceHeatFlowMWm2: cm.surfaceHeatFlowMWm2,
    surfaceTemperatureC: t0,
    geotherm: (depthsKm, q, t, out) => {
      solveColumn(cm, q, t, st);
      for (let i = 0; i < depthsKm.length; i++) out[i] = columnTemperature(cm, st, depthsKm[i]);
      return out;
    },
    // ∫₀^z A dz = q0 − q(z), independent of q0.
    heatAboveMWm2: (zKm) => -columnHeatFlow(cm, 0, zKm),
  };
}
