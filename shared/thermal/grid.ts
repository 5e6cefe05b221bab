/**
 * The grid form of the geotherm: for every cell's surface heat flow (and optionally its own compiled model and
 * surface temperature), writes depth-to-isotherm and temperature-at-depth into caller-given buffers. One ColumnState
 * per compiled model is allocated per call; nothing per cell. Same closed form as the single column (column.ts).
 */
import type { CompiledModel } from './compile.ts';
import { COLUMN_BAD_INPUT, ColumnState, columnHeatFlow, columnIsothermDepth, columnTemperature, solveColumn } from './column.ts';
import { dryAtTops, emptyColumnLimits, limitedIsothermDepth, limitedTemperature, limitsWhereReached } from './limits.ts';

/** Status bit of a grid cell whose column reaches the melt onset (limits.ts) above the maximum depth. */
export const COLUMN_MELT_ONSET = 8;

type Floats = Float32Array | Float64Array;

export interface GeothermGridQuery {
  /** Isotherm temperatures, °C. */
  isothermsC: ArrayLike<number>;
  /** Depths for temperature, km. */
  depthsKm: ArrayLike<number>;
  /** Isotherm searches stop here (km; default each model's maxDepthKm). */
  maxDepthKm?: number;
}

export interface GeothermGridOutput {
  /** One buffer per isotherm (length ≥ cells): depth in km, NaN when not reached or the cell is invalid. */
  isothermDepthKm: Floats[];
  /** One buffer per depth: temperature in °C, NaN where the column is invalid. */
  temperatureC: Floats[];
  /** Optional per-cell status bits (COLUMN_* in column.ts): 1 heat flow exhausted, 2 k(T) undefined, 4 bad input. */
  status?: Uint8Array;
  /** Optional basal heat flow, mW/m². */
  basalHeatFlowMWm2?: Floats;
  /** Optional melt-onset depth (km; NaN where not reached above the maximum depth); asks for full solves. */
  meltOnsetKm?: Floats;
  /** Optional depth where the water-saturated solidus of the rock there is reached (km; NaN: not above the maximum depth). */
  wetSolidusKm?: Floats;
}

export interface GeothermGridOptions {
  /** Per-cell index into the `models` array (default: every cell uses models[0]). */
  zones?: Uint8Array | Uint16Array | Uint32Array;
  /** Per-cell surface temperature, °C (default each model's). */
  surfaceTemperatureC?: Floats;
  /** Cell range [start, end) to process (default the whole array). Buffers are indexed by absolute cell index. */
  start?: number;
  end?: number;
}

/**
 * Depth to isotherms and temperature at depths for every cell of a heat-flow grid.
 * @param models one compiled model, or an array indexed by `options.zones`
 * @param heatFlowMWm2 surface heat flow per cell, mW/m² (NaN = no data → NaN out, status 4)
 */
export function geothermGrid(
  models: CompiledModel | CompiledModel[],
  heatFlowMWm2: Floats,
  query: GeothermGridQuery,
  out: GeothermGridOutput,
  options: GeothermGridOptions = {},
): void {
  const list = Array.isArray(models) ? models : [models];
  if (list.length === 0) throw new RangeError('geothermGrid needs at least one compiled model');
  const start = options.start ?? 0;
  const end = options.end ?? heatFlowMWm2.length;
  if (!(start >= 0 && end <= heatFlowMWm2.length && start <= end)) throw new RangeError(`bad cell range [${start}, ${end}) for ${heatFlowMWm2.length} cells`);
  const nIso = query.isothermsC.length,
    nDep = query.depthsKm.length;
  if (out.isothermDepthKm.length !== nIso || out.temperatureC.length !== nDep) throw new RangeError('one output buffer per isotherm and per depth is needed');
  for (const b of [...out.isothermDepthKm, ...out.temperatureC])
    if (b.length < end) throw new RangeError(`output buffer of length ${b.length} is shorter than the cell range end ${end}`);
  const zones = options.zones;
  if (zones === undefined && list.length > 1) throw new RangeError('several models need a zones array');
  const states = list.map((m) => new ColumnState(m.nLayers));
  const t0s = options.surfaceTemperatureC;
  const isos = Float64Array.from(query.isothermsC);
  const deps = Float64Array.from(query.depthsKm);
  const status = out.status,
    basal = out.basalHeatFlowMWm2,
    melt = out.meltOnsetKm,
    wet = out.wetSolidusKm;
  // Layer temperatures are needed only down to the hottest isotherm and the deepest depth asked for (all of them
  // when the melt-onset depth is asked for).
  let needT = -Infinity,
    needZ = 0;
  for (let k = 0; k < nIso; k++) needT = Math.max(needT, isos[k]);
  for (let k = 0; k < nDep; k++) needZ = Math.max(needZ, deps[k]);
  const full = melt !== undefined || wet !== undefined;
  if (full) needT = Infinity;
  const dryTop = list.map(dryAtTops);
  const limits = emptyColumnLimits(); // reused by every cell: read before the next cell's search
  for (let c = start; c < end; c++) {
    const zi = zones === undefined ? 0 : zones[c];
    const cm = list[zi];
    if (cm === undefined) throw new RangeError(`cell ${c}: zone ${zi} has no model (${list.length} given)`);
    const st = states[zi];
    const q0 = heatFlowMWm2[c];
    solveColumn(cm, q0, t0s === undefined ? cm.surfaceTemperatureC : t0s[c], st, needT, needZ);
    if (basal !== undefined) basal[c] = st.status & COLUMN_BAD_INPUT ? NaN : q0 - cm.totalHeatProductionMWm2;
    const zMax = query.maxDepthKm ?? cm.maxDepthKm;
    // The melt and mantle limits of limits.ts, skipped where they cannot act (limitsWhereReached's fast path).
    const lim = limitsWhereReached(cm, st, zMax, dryTop[zi], full && !(st.status & COLUMN_BAD_INPUT), limits);
    if (lim === null) {
      if (status !== undefined) status[c] = st.status;
      if (melt !== undefined) melt[c] = NaN;
      if (wet !== undefined) wet[c] = NaN;
      for (let k = 0; k < nIso; k++) out.isothermDepthKm[k][c] = columnIsothermDepth(cm, st, isos[k], zMax);
      for (let k = 0; k < nDep; k++) out.temperatureC[k][c] = columnTemperature(cm, st, deps[k]);
      continue;
    }
    if (status !== undefined) status[c] = st.status | (lim.endReason === 'melt-onset' ? COLUMN_MELT_ONSET : 0);
    if (melt !== undefined) melt[c] = lim.meltOnsetKm;
    if (wet !== undefined) wet[c] = lim.wetSolidusKm;
    for (let k = 0; k < nIso; k++) out.isothermDepthKm[k][c] = limitedIsothermDepth(cm, st, lim, isos[k], zMax);
    for (let k = 0; k < nDep; k++) out.temperatureC[k][c] = limitedTemperature(cm, st, lim, deps[k]);
  }
}

export { columnHeatFlow };
