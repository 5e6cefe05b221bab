/**
 * A sampled geotherm: temperature, heat flow and lithostatic pressure every stepKm from the surface down to
 * maxDepthKm (closed form at each sample; see column.ts), under the melt and mantle limits of limits.ts (the adiabat
 * below the lithosphere base in mantle layers). Temperatures below the depth where the column stops being valid
 * (melt onset, heat flow exhausted, or 1 + bT ≤ 0) are NaN; `limits.endReason` and the warnings say why.
 */
import type { CompiledModel } from './compile.ts';
import { ColumnState, columnHeatFlow, solveColumn } from './column.ts';
import { basalHeatFlow, columnWarnings, reducedHeatFlow, type ColumnOptions } from './geotherm.ts';
import { columnLimits, isAdiabatic, layerRock, layerSolidus, limitedTemperature, type ColumnLimits } from './limits.ts';
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
  /** Melt onset, wet-solidus crossing, lithosphere base, and why the column ends (limits.ts). */
  limits: ColumnLimits;
  /** 1 where the sample's temperature is the mantle adiabat, 0 where it is conductive. */
  adiabatic: Uint8Array;
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
  const depthKm = new Float64Array(n),
    temperatureC = new Float64Array(n),
    heatFlowMWm2 = new Float64Array(n),
    pressureMPa = new Float64Array(n);
  const adiabatic = new Uint8Array(n);
  const limits = columnLimits(cm, st, zMax, Math.min(step, 0.1));
  for (let j = 0; j < n; j++) {
    const z = j <= nSteps ? Math.round(j * step * 1e9) / 1e9 : zMax;
    depthKm[j] = z;
    temperatureC[j] = limitedTemperature(cm, st, limits, z);
    adiabatic[j] = isAdiabatic(cm, limits, z) ? 1 : 0;
    heatFlowMWm2[j] = columnHeatFlow(cm, q0, z);
    pressureMPa[j] = lithostaticPressureMPa(cm, z);
  }
  const warnings = [...cm.warnings, ...columnWarnings(cm, st), ...limitWarnings(cm, limits)];
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
    limits,
    adiabatic,
    warnings,
  };
}

const km = (v: number) => `${v.toFixed(2)} km`;

/** Sentences for the melt and mantle limits of a column (empty when none is reached). */
export function limitWarnings(cm: CompiledModel, lim: ColumnLimits): string[] {
  const w: string[] = [];
  const name = (i: number) => `${cm.names[i]} (${layerRock(cm, i)})`;
  if (lim.wetSolidusKm === lim.wetSolidusKm) {
    const c = layerSolidus(cm, lim.wetSolidusLayer).wet;
    w.push(
      `the geotherm reaches the ${c.label} solidus at ${km(lim.wetSolidusKm)} in ${name(lim.wetSolidusLayer)}: melting there if free water is present (${c.source})`,
    );
  }
  if (lim.meltOnsetKm === lim.meltOnsetKm) {
    const c = layerSolidus(cm, lim.meltOnsetLayer).dry;
    w.push(
      `melt onset at ${km(lim.meltOnsetKm)} in ${name(lim.meltOnsetLayer)}: the geotherm reaches the ${c.label} solidus (${c.source}); a conductive geotherm is not valid below, and no temperature is given there`,
    );
  }
  if (lim.lithosphereBaseKm === lim.lithosphereBaseKm) {
    w.push(
      `the conductive geotherm meets the mantle adiabat (potential temperature ${lim.mantlePotentialTemperatureC} °C) at ${km(lim.lithosphereBaseKm)}, the base of the thermal lithosphere; the adiabat is used below`,
    );
  }
  if (lim.adiabatAboveDrySolidusToKm === lim.adiabatAboveDrySolidusToKm) {
    const thin = lim.lithosphereBaseKm === lim.lithosphereBaseKm && lim.lithosphereBaseKm < lim.adiabatAboveDrySolidusToKm;
    w.push(
      `the mantle adiabat (potential temperature ${lim.mantlePotentialTemperatureC} °C) is above the dry peridotite solidus (Hirschmann 2000) down to ${km(lim.adiabatAboveDrySolidusToKm)}: ` +
        (thin
          ? `the lithosphere base at ${km(lim.lithosphereBaseKm)} is shallower, so the mantle melts by decompression below it`
          : 'decompression melting wherever the lithosphere is thinner than that'),
    );
  }
  return w;
}
