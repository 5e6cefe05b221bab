/**
 * The thermal products of a heat-flow grid: temperature at depth, depth to isotherms (with Monte Carlo P10/P50/P90
 * when realizations are asked for), metamorphic facies at a depth, heat flow at the base of the model, solidus and
 * melt-onset depths, the inconsistency flags, with legends, method texts (steady 1-D conduction, Turcotte &
 * Schubert 2002 §4-6, §4-8; Chapman 1986) and contours of the continuous grids. Used by runs
 * (server/runs/pipeline.ts) and the `isotherms` verb; the layers themselves are assembled in thermal-layers.ts.
 *
 * The work goes in tiles of rows; after each tile `tick(stage, fraction, message)` is called and awaited: the caller
 * reports progress there, yields to its event loop, or throws to stop the work.
 */
import type { Grid } from '../grid/grid.ts';
import type { ThermalModelInput } from '../schema/model.ts';
import { converter, WGS84_DEF } from '../interp/projection.ts';
import { compileModel, isUncertainModel, nominalModel, type CompiledModel } from '../thermal/index.ts';
import { applyLayerOverride, regionZones, type OverrideRegion } from './overrides.ts';
import { allocateThermalGridBuffers, computeThermalGridRows, inconsistencyCounts, planThermalGrids } from './thermal-grids.ts';
import { allocateUncertaintyOutput, computeUncertaintyRows, prepareUncertainty, uncertaintyResult } from './uncertainty.ts';
import { layerStats } from './stats.ts';
import { INCONSISTENT, MELT_ONSET } from './names.ts';
import { isothermLayers, limitLayers, temperatureLayers, type LayerContext, type MonteCarloGrids, type ProductLayer } from './thermal-layers.ts';
import { productCentralValue, type ProductCentralValue } from './central-values.ts';
import { depthProductName, temperatureProductName } from './names.ts';

export type { OverrideRegion } from './overrides.ts';
export { sharedRampLegend, type ProductLayer } from './thermal-layers.ts';

export interface ProductOptions {
  isothermsC: number[];
  depthsKm: number[];
  /** Facies depth, km (null = no facies grid). */
  faciesDepthKm: number | null;
  /** Isotherm and solidus searches stop here (km; default: the deepest model bottom or depth asked for). */
  maxDepthKm?: number;
  /** Depth-contour interval, km (default 1); null = no contours. */
  contourIntervalKm?: number | null;
  /** Temperature-contour interval, °C (default: a nice interval for about 12 levels). */
  contourIntervalC?: number | null;
  realizations?: number;
  seed?: number;
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /**
   * Heat-flow realizations (realization-major, realizations × cells, mW/m²), e.g. conditional simulations: the
   * Monte Carlo reads heat flow from them instead of q + sd·z; `heatFlowSource` says where they come from.
   */
  heatFlowRealizations?: Float32Array;
  heatFlowSource?: string;
  tileRows?: number;
}

export type ProductStage = 'thermal' | 'montecarlo' | 'contours';
/** Called after each tile with the stage, the fraction of the stage done (0..1) and a message; awaited. */
export type ProductTick = (stage: ProductStage, fraction: number, message: string) => void | Promise<void>;

export interface MonteCarloReport {
  realizations: number;
  seed: number;
  /** The old per-cell error model; null when the heat-flow realizations are given (simulated). */
  heatFlowErrorCorrelation: 'full' | 'independent' | null;
  /** Where each realization's heat flow comes from, in words. */
  heatFlow: string;
  rejectedDraws: number;
  withHeatFlowSd: boolean;
  /** Cell-realizations whose heat flow runs out above the maximum depth (isotherms above their peak: not reached), and their cells. */
  heatFlowExhausted: { cellRealizations: number; cells: number };
  /**
   * Per isotherm, then per depth: the realizations' mean (the central value) and P50 averaged over the grid, beside
   * the deterministic map's average over the same cells and the difference (central-values.ts).
   */
  centralValues: ProductCentralValue[];
}

export interface ThermalProductsResult {
  layers: ProductLayer[];
  counts: ReturnType<typeof inconsistencyCounts>;
  zoneModels: ThermalModelInput[];
  maxDepthKm: number;
  warnings: string[];
  timingsMs: Record<string, number>;
  monteCarlo: MonteCarloReport | null;
}

const now = () => performance.now();

/** Grid CRS (a proj4 definition) → lon/lat. */
export function gridToLonLat(crsDef: string): (x: number, y: number) => [number, number] {
  if (crsDef === WGS84_DEF) return (x, y) => [x, y];
  const c = converter(crsDef, WGS84_DEF);
  return (x, y) => c.forward([x, y]);
}

/** Rows of each tile so a tile holds about `cells` cells (or `tileRows` when given: a positive integer). */
export function tileRowsFor(width: number, tileRows?: number, cells = 65536): number {
  if (tileRows !== undefined) {
    if (!(Number.isInteger(tileRows) && tileRows >= 1)) throw new RangeError(`tileRows must be a positive integer, got ${tileRows}`);
    return tileRows;
  }
  return Math.max(1, Math.floor(cells / Math.max(1, width)));
}

interface Zoning {
  zoneModels: ThermalModelInput[];
  compiled: CompiledModel[];
  zones: Uint16Array | undefined;
  maxDepthKm: number;
}

/** The zone models (0 = base, k = base with region k's override), compiled to the search depth, and each cell's zone. */
function zoneModelsOf(
  heatFlow: Grid<Float32Array>,
  baseModel: ThermalModelInput,
  regions: OverrideRegion[],
  crsDef: string,
  o: ProductOptions,
  warnings: string[],
): Zoning {
  const zoneModels: ThermalModelInput[] = [baseModel, ...regions.map((r) => applyLayerOverride(baseModel, r.override))];
  const deepest = Math.max(...zoneModels.map((m) => m.layers[m.layers.length - 1].bottomKm));
  const maxDepthKm = Math.max(o.maxDepthKm ?? deepest, ...o.depthsKm, o.faciesDepthKm ?? 0);
  if (o.maxDepthKm !== undefined && maxDepthKm > o.maxDepthKm)
    warnings.push(`the search depth was raised from ${o.maxDepthKm} km to ${maxDepthKm} km to reach the depths asked for`);
  const compiled: CompiledModel[] = zoneModels.map((m, k) => {
    const cm = compileModel(nominalModel(m), { maxDepthKm });
    const label = k === 0 ? 'model' : regions[k - 1].label;
    for (const w of cm.warnings) warnings.push(`${label}: ${w}`);
    return cm;
  });
  if (zoneModels.some(isUncertainModel))
    warnings.push(
      "the model has parameter distributions: the deterministic grids use each distribution's central value (mean, clamped mean, midpoint or mode)",
    );
  let zones: Uint16Array | undefined;
  if (regions.length > 0) {
    zones = regionZones(heatFlow, regions, crsDef);
    const counts = new Uint32Array(regions.length + 1);
    for (let i = 0; i < zones.length; i++) counts[zones[i]]++;
    regions.forEach((r, k) => {
      if (counts[k + 1] === 0) warnings.push(`${r.label}: the override polygon covers no cell centre of the grid`);
    });
  }
  return { zoneModels, compiled, zones, maxDepthKm };
}

/** The warnings of the inconsistency counts: true contradictions apart from melt onset. */
function inconsistencyWarnings(counts: ReturnType<typeof inconsistencyCounts>, cells: number): string[] {
  const warnings: string[] = [];
  // Melt onset is a physical limit of the conductive column, not a contradiction between model and heat flow:
  // it is reported on its own, and the inconsistency warning counts only the true contradictions.
  const contradictions = counts.heatFlowExhausted + counts.conductivityUndefined + counts.nonPositiveHeatFlow;
  if (contradictions > 0) {
    warnings.push(
      `the model is inconsistent with the heat flow in ${contradictions} of ${cells} cells (${counts.heatFlowExhausted} where the heat flow reaches 0 inside the model, ` +
        `${counts.conductivityUndefined} with k(T) undefined, ${counts.nonPositiveHeatFlow} with heat flow ≤ 0): see the "${INCONSISTENT}" grid; below the failing depth those cells have no data`,
    );
  }
  if (counts.meltOnset > 0) {
    warnings.push(
      `in ${counts.meltOnset} of ${cells} cells the conductive geotherm reaches the fluid-absent solidus of its rock (melt onset): see the "${MELT_ONSET}" grid; ` +
        'below that depth a conductive temperature is not valid and those cells have no data',
    );
  }
  return warnings;
}

/** The Monte Carlo percentiles of the isotherm depths in tiles of rows (null without realizations). */
async function monteCarloPass(
  heatFlow: Grid<Float32Array>,
  heatFlowSd: Grid<Float32Array> | null,
  z: Zoning,
  o: ProductOptions,
  tick: ProductTick,
  warnings: string[],
): Promise<(Omit<MonteCarloGrids, 'report'> & { report: Omit<MonteCarloReport, 'centralValues'> }) | null> {
  const N = o.realizations ?? 0;
  if (N <= 0) return null;
  const W = heatFlow.width,
    H = heatFlow.height;
  const seed = o.seed ?? 0;
  const corr = o.heatFlowErrorCorrelation ?? 'full';
  const sims = o.heatFlowRealizations;
  if (sims === undefined && heatFlowSd === null && !z.zoneModels.some(isUncertainModel))
    warnings.push('Monte Carlo with neither a heat-flow standard deviation nor model distributions: P10 = P50 = P90');
  else if (sims === undefined && heatFlowSd === null) warnings.push('no heat-flow standard deviation grid: the percentiles reflect the model parameters only');
  const prep = prepareUncertainty({
    heatFlow,
    heatFlowSd,
    heatFlowRealizations: sims,
    models: z.zoneModels,
    zones: z.zones,
    isothermsC: o.isothermsC,
    depthsKm: o.depthsKm,
    maxDepthKm: z.maxDepthKm,
    realizations: N,
    seed,
    heatFlowErrorCorrelation: corr,
  });
  const mout = allocateUncertaintyOutput(W * H, o.isothermsC.length, o.depthsKm.length);
  // Tiles sized so one tile's Monte Carlo is about as long as a thermal tile × 50.
  const mtr = Math.max(1, Math.floor(tileRowsFor(W, o.tileRows) / Math.max(1, Math.ceil(N / 50))));
  for (let r = 0; r < H; r += mtr) {
    const r1 = Math.min(H, r + mtr);
    computeUncertaintyRows(prep, W, r, r1, mout);
    await tick('montecarlo', r1 / H, `Monte Carlo (${N} realizations): rows ${r1} of ${H}`);
  }
  const pct = uncertaintyResult(prep, mout);
  if (pct.rejectedDraws > 0)
    warnings.push(`${pct.rejectedDraws} model draw(s) were physically impossible (e.g. a conductivity ≤ 0) and left out of the percentiles`);
  const heatFlowText =
    sims !== undefined
      ? (o.heatFlowSource ?? 'heat-flow realizations given')
      : heatFlowSd !== null
        ? `kriged value + kriging sd × a standard normal (${corr === 'full' ? 'one per realization for all cells' : 'one per cell'})`
        : 'the interpolated heat flow (no spread)';
  return {
    pct,
    report: {
      realizations: N,
      seed,
      heatFlowErrorCorrelation: sims === undefined ? corr : null,
      heatFlow: heatFlowText,
      rejectedDraws: pct.rejectedDraws,
      withHeatFlowSd: heatFlowSd !== null,
      heatFlowExhausted: pct.heatFlowExhausted,
    },
  };
}

/**
 * Thermal, facies, solidus, flag and percentile grids (with contours of the continuous ones) from a heat-flow grid
 * (mW/m², in the CRS `crsDef`), its kriging standard deviation, a base model and optional override regions.
 */
export async function computeThermalProducts(
  heatFlow: Grid<Float32Array>,
  heatFlowSd: Grid<Float32Array> | null,
  baseModel: ThermalModelInput,
  regions: OverrideRegion[],
  crsDef: string,
  o: ProductOptions,
  tick: ProductTick = () => {},
): Promise<ThermalProductsResult> {
  const warnings: string[] = [];
  const timingsMs: Record<string, number> = {};
  const W = heatFlow.width,
    H = heatFlow.height;
  const t0 = now();
  const z = zoneModelsOf(heatFlow, baseModel, regions, crsDef, o, warnings);
  const spec = {
    heatFlow,
    models: z.compiled,
    zones: z.zones,
    isothermsC: o.isothermsC,
    depthsKm: o.depthsKm,
    faciesDepthKm: o.faciesDepthKm,
    maxDepthKm: z.maxDepthKm,
  };
  const plan = planThermalGrids(spec);
  const out = allocateThermalGridBuffers(spec);
  const tr = tileRowsFor(W, o.tileRows);
  timingsMs.prepare = now() - t0;
  const t1 = now();
  for (let r = 0; r < H; r += tr) {
    const r1 = Math.min(H, r + tr);
    computeThermalGridRows(plan, r, r1, out);
    await tick('thermal', r1 / H, `thermal grids: rows ${r1} of ${H}`);
  }
  timingsMs.thermal = now() - t1;
  const counts = inconsistencyCounts(out.inconsistent, out.meltOnsetKm);
  warnings.push(...inconsistencyWarnings(counts, W * H));

  // Monte Carlo percentiles (needed for the shared depth legends, so before the depth layers are assembled).
  const t2 = now();
  const pass = await monteCarloPass(heatFlow, heatFlowSd, z, o, tick, warnings);
  let mc: MonteCarloGrids | null = null;
  if (pass !== null) {
    timingsMs.monteCarlo = now() - t2;
    const centralValues = [
      ...o.isothermsC.map((T, k) => productCentralValue(depthProductName(T), 'km', pass.pct.isotherms[k], out.isothermDepthKm[k], heatFlow.values)),
      ...o.depthsKm.map((d, k) => productCentralValue(temperatureProductName(d), '°C', pass.pct.temperatures[k], out.temperatureC[k], heatFlow.values)),
    ];
    mc = { pct: pass.pct, report: { ...pass.report, centralValues } };
  }

  const t3 = now();
  const layers: ProductLayer[] = [];
  const method = `steady 1-D conduction, layered, k(T) = k0/(1 + bT) by the Kirchhoff transform, constant or exponential heat production (Turcotte & Schubert 2002 §4-6, §4-8; Chapman 1986)${regions.length > 0 ? `; ${regions.length} regional model override(s)` : ''}`;
  const c: LayerContext = {
    heatFlow,
    out,
    o,
    maxDepthKm: z.maxDepthKm,
    method,
    toLonLat: gridToLonLat(crsDef),
    add: (l) => layers.push({ ...l, stats: c.stats(l.grid.values) }),
    // A Float32 grid's median by radix selection: no grid-sized copy (stats.ts).
    stats: (v) => layerStats(v),
  };
  const contourJobs = Math.max(1, o.isothermsC.length + o.depthsKm.length);
  let contoursDone = 0;
  const step = (message: string) => Promise.resolve(tick('contours', ++contoursDone / contourJobs, message));
  await isothermLayers(c, mc, step);
  await temperatureLayers(c, mc, step);
  timingsMs.contours = now() - t3;
  limitLayers(c, warnings);
  return { layers, counts, zoneModels: z.zoneModels, maxDepthKm: z.maxDepthKm, warnings, timingsMs, monteCarlo: mc?.report ?? null };
}
