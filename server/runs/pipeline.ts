/**
 * The analysis run: validate the request and its data sets, interpolate heat flow (IDW or ordinary kriging with its
 * standard deviation and leave-one-out cross-validation, faults as barriers), compute the thermal grids per tile
 * (with regional model overrides), the Monte Carlo percentile grids per tile, contours, and encode every layer
 * (GeoTIFF, PNG, GeoJSON) with the caution and provenance. `runPipeline` is what the run worker
 * (server/workers/run-worker.ts) calls; `computeThermalProducts` is the part shared with the `isotherms` verb.
 *
 * Progress: real fractions from the stages (each stage has a weight; tiles report within their stage), never
 * decreasing. Between tiles the pipeline yields to the event loop, so a worker sees a cancel message, and checks
 * `signal`.
 */
import { InputError, type InputProblem } from '../../shared/errors.ts';
import type { Grid, GridSpec } from '../../shared/grid/grid.ts';
import { contourGrid, niceContourInterval, type ContourCollection } from '../../shared/grid/contours.ts';
import { rampLegend } from '../../shared/grid/colorize.ts';
import { DEPTH, EMBER, HAZE, type Ramp } from '../../shared/grid/ramps.ts';
import { rasterizeZones, type Rings } from '../../shared/grid/polygon-cells.ts';
import { runRequestSchema, runSummarySchema, type Legend, type RunLayerInfo, type RunRequest, type RunSummary, type StructureSummary } from '../../shared/schema/run.ts';
import { interpolationOptionsSchema, pointsFromGeoJson } from '../../shared/schema/interp.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { prepareInterpolation, finishGrid, type InterpolationOptions, type InterpolationResult } from '../../shared/interp/interpolate.ts';
import { createGridRuntime, computeRows, addStats, type RowStats } from '../../shared/interp/gridKernel.ts';
import { converter, loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { compileModel, isUncertainModel, nominalModel, type CompiledModel } from '../../shared/thermal/index.ts';
import { parseModelDocument, parseModelText, type ModelDocument } from '../../shared/products/model-input.ts';
import { applyLayerOverride, overrideRegions, type OverrideRegion } from '../../shared/products/overrides.ts';
import { allocateThermalGridBuffers, computeThermalGridRows, inconsistencyCounts, planThermalGrids, productGrid } from '../../shared/products/thermal-grids.ts';
import { allocateUncertaintyOutput, computeUncertaintyRows, prepareUncertainty, uncertaintyResult } from '../../shared/products/uncertainty.ts';
import { faciesLegend } from '../../shared/products/facies-grid.ts';
import { layerStats, type LayerStats } from '../../shared/products/stats.ts';
import { buildProvenance, withMethod, type Provenance } from '../../shared/products/provenance.ts';
import { BASE_HEAT_FLOW, INCONSISTENT, MELT_ONSET, SOLIDUS_DEPTH, depthProductName, faciesProductName, percentileProductName, temperatureProductName } from '../../shared/products/names.ts';
import { geojsonText, geotiffBytes, pngBytes, sha256Hex, sha256Json } from '../io/export.ts';

// ---------------------------------------------------------------------------------------------------------------
// Contract with the job queue (kept exactly).

/** A grid as it crosses the thread boundary: the project's Grid with Float32 values (structured-cloneable). */
export type SerializedGrid = Grid<Float32Array>;

export interface RunFile {
  ext: 'tif' | 'png' | 'geojson' | 'csv';
  bytes: Uint8Array;
}

export interface RunLayer {
  info: RunLayerInfo;
  files: RunFile[];
}

export interface RunResult {
  layers: RunLayer[];
  summary: RunSummary;
  grids: { heatFlow: SerializedGrid; heatFlowSd?: SerializedGrid };
  /** The validated thermal model JSON (top-level descriptive members set aside). */
  model: unknown;
  warnings: string[];
}

export interface StoredDataset {
  kind: string;
  body: string;
}

export interface Progress {
  fraction: number;
  message: string;
}

/**
 * A later stage adding layers (e.g. isograds from samples): it gets the run's context after the thermal layers
 * and returns finished layers (files encoded, caution and provenance included). `weight` is its share of progress.
 */
export interface ExtraLayerStage {
  name: string;
  weight?: number;
  run(ctx: PipelineContext, progress: (fractionOfStage: number, message: string) => void): Promise<RunLayer[]> | RunLayer[];
}

export interface PipelineContext {
  request: RunRequest;
  datasets: Record<string, StoredDataset>;
  heatFlow: Grid<Float32Array>;
  heatFlowSd: Grid<Float32Array> | null;
  model: ThermalModelInput;
  provenance: Provenance;
  /** Grid CRS → lon/lat. */
  toLonLat: (x: number, y: number) => [number, number];
  warnings: string[];
  /** A stage's report for the run summary (the isograd stage's structural report). */
  summary: StageSummaries;
  signal?: AbortSignal;
}

/** The members of the run summary that later stages write. */
export type StageSummaries = { structure?: StructureSummary };

export interface PipelineOptions {
  progress?: (p: Progress) => void;
  signal?: AbortSignal;
  /** Stages run after the thermal layers (the hook for layers built by other engines). */
  extraLayers?: ExtraLayerStage[];
  /** Rows per tile of the thermal and Monte Carlo passes (default: about 65,536 cells a tile). */
  tileRows?: number;
}

// ---------------------------------------------------------------------------------------------------------------
// Progress and cancellation.

/** Stage weights → a monotone progress reporter. */
class ProgressTracker {
  private done = 0;
  private last = 0;
  private current = 0;
  private readonly total: number;
  constructor(private readonly weights: Record<string, number>, private readonly sink?: (p: Progress) => void) {
    this.total = Object.values(weights).reduce((s, w) => s + w, 0);
  }
  /** Reports `within` ∈ [0, 1] of stage `stage`. */
  report(stage: string, within: number, message: string): void {
    const w = this.weights[stage] ?? 0;
    const f = Math.min(1, (this.done + w * Math.max(0, Math.min(1, within))) / this.total);
    this.current = w;
    if (f < this.last) return;
    this.last = f;
    this.sink?.({ fraction: f, message });
  }
  /** Closes stage `stage`. */
  finish(stage: string, message: string): void {
    this.report(stage, 1, message);
    this.done += this.weights[stage] ?? this.current;
  }
}

function checkAbort(signal?: AbortSignal): void {
  if (signal?.aborted) {
    const r: unknown = signal.reason;
    throw r instanceof Error ? r : Object.assign(new Error('the run was cancelled'), { name: 'AbortError' });
  }
}

/** Lets queued messages (cancel, progress delivery) through between tiles. */
const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

// ---------------------------------------------------------------------------------------------------------------
// Thermal products (shared with the isotherms verb).

export interface ProductLayer {
  name: string;
  title: string;
  units: string;
  grid: Grid<Float32Array>;
  legend: Legend;
  ramp: Ramp | null;
  /** Method text for the provenance of this layer. */
  method: string;
  contours?: ContourCollection;
  stats: LayerStats;
}

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
  tileRows?: number;
}

export type { OverrideRegion } from '../../shared/products/overrides.ts';

export interface ThermalProductsResult {
  layers: ProductLayer[];
  counts: ReturnType<typeof inconsistencyCounts>;
  zoneModels: ThermalModelInput[];
  maxDepthKm: number;
  warnings: string[];
  timingsMs: Record<string, number>;
  monteCarlo: { realizations: number; seed: number; heatFlowErrorCorrelation: 'full' | 'independent'; rejectedDraws: number; withHeatFlowSd: boolean } | null;
}

const now = () => performance.now();

function gridToLonLat(crsDef: string): (x: number, y: number) => [number, number] {
  if (crsDef === WGS84_DEF) return (x, y) => [x, y];
  const c = converter(crsDef, WGS84_DEF);
  return (x, y) => c.forward([x, y]);
}

/** Cells of each tile so a tile holds about `cells` cells. */
function tileRowsFor(width: number, tileRows?: number, cells = 65536): number {
  if (tileRows !== undefined) {
    if (!(Number.isInteger(tileRows) && tileRows >= 1)) throw new RangeError(`tileRows must be a positive integer, got ${tileRows}`);
    return tileRows;
  }
  return Math.max(1, Math.floor(cells / Math.max(1, width)));
}

/** Ramp legend over the finite range of one or more grids (a flat or empty range gets a nominal span). */
function sharedRampLegend(ramp: Ramp, units: string, grids: Float32Array[]): Legend {
  let min = Infinity, max = -Infinity;
  for (const g of grids) for (let i = 0; i < g.length; i++) { const v = g[i]; if (v === v && v !== Infinity && v !== -Infinity) { if (v < min) min = v; if (v > max) max = v; } }
  if (!(max >= min)) { min = 0; max = 1; }
  if (max === min) max = min + 1;
  return rampLegend(ramp, units, min, max);
}

const INCONSISTENT_LEGEND: Legend = {
  type: 'classes',
  units: 'flag',
  classes: [
    { value: 0, label: 'consistent', color: '#e6e9e4' },
    { value: 1, label: 'heat flow reaches 0 in the model (surface heat flow too low for its heat production)', color: '#b3342b' },
    { value: 2, label: 'conductivity k(T) undefined (1 + bT ≤ 0)', color: '#6b3fa0' },
    { value: 4, label: 'surface heat flow ≤ 0', color: '#222222' },
    { value: 8, label: 'melt onset above the maximum depth (no temperatures below it)', color: '#d9822b' },
  ],
};

const fmt = (v: number) => String(+v.toPrecision(12));

/**
 * Thermal, facies, solidus, flag and percentile grids (with contours of the continuous ones) from a heat-flow grid,
 * a base model and optional override regions. Tiles of rows; `progress(within, message)` reports 0..1 of the work.
 */
export async function computeThermalProducts(
  heatFlow: Grid<Float32Array>,
  heatFlowSd: Grid<Float32Array> | null,
  baseModel: ThermalModelInput,
  regions: OverrideRegion[],
  crsDef: string,
  o: ProductOptions,
  progress: (stage: 'thermal' | 'montecarlo' | 'contours', within: number, message: string) => void = () => {},
  signal?: AbortSignal,
): Promise<ThermalProductsResult> {
  const warnings: string[] = [];
  const timingsMs: Record<string, number> = {};
  const W = heatFlow.width, H = heatFlow.height;
  const t0 = now();
  // Zone models: 0 = base, k = base with region k's override.
  const zoneModels: ThermalModelInput[] = [baseModel, ...regions.map((r) => applyLayerOverride(baseModel, r.override))];
  const deepest = Math.max(...zoneModels.map((m) => m.layers[m.layers.length - 1].bottomKm));
  const maxDepthKm = Math.max(o.maxDepthKm ?? deepest, ...o.depthsKm, o.faciesDepthKm ?? 0);
  if (o.maxDepthKm !== undefined && maxDepthKm > o.maxDepthKm) warnings.push(`the search depth was raised from ${o.maxDepthKm} km to ${maxDepthKm} km to reach the depths asked for`);
  const compiled: CompiledModel[] = zoneModels.map((m, k) => {
    const cm = compileModel(nominalModel(m), { maxDepthKm });
    const label = k === 0 ? 'model' : regions[k - 1].label;
    for (const w of cm.warnings) warnings.push(`${label}: ${w}`);
    return cm;
  });
  if (zoneModels.some(isUncertainModel)) warnings.push('the model has parameter distributions: the deterministic grids use each distribution\'s central value (mean, clamped mean, midpoint or mode)');
  let zones: Uint16Array | undefined;
  if (regions.length > 0) {
    const fromLonLat = crsDef === WGS84_DEF ? undefined : ((c) => (x: number, y: number) => c.forward([x, y]))(converter(WGS84_DEF, crsDef));
    zones = rasterizeZones(heatFlow, regions.map((r) => (fromLonLat === undefined ? r.ringsLonLat : r.ringsLonLat.map((ring) => ring.map((p) => fromLonLat(p[0], p[1]))))));
    const counts = new Uint32Array(regions.length + 1);
    for (let i = 0; i < zones.length; i++) counts[zones[i]]++;
    regions.forEach((r, k) => { if (counts[k + 1] === 0) warnings.push(`${r.label}: the override polygon covers no cell centre of the grid`); });
  }
  const spec = { heatFlow, models: compiled, zones, isothermsC: o.isothermsC, depthsKm: o.depthsKm, faciesDepthKm: o.faciesDepthKm, maxDepthKm };
  const plan = planThermalGrids(spec);
  const out = allocateThermalGridBuffers(spec);
  const tr = tileRowsFor(W, o.tileRows);
  timingsMs.prepare = now() - t0;
  const t1 = now();
  for (let r = 0; r < H; r += tr) {
    checkAbort(signal);
    const r1 = Math.min(H, r + tr);
    computeThermalGridRows(plan, r, r1, out);
    progress('thermal', r1 / H, `thermal grids: rows ${r1} of ${H}`);
    if (r1 < H) await yieldToLoop();
  }
  timingsMs.thermal = now() - t1;
  const counts = inconsistencyCounts(out.inconsistent);
  // Melt onset is a physical limit of the conductive column, not a contradiction between model and heat flow:
  // it is reported on its own, and the inconsistency warning counts only the true contradictions.
  const contradictions = counts.heatFlowExhausted + counts.conductivityUndefined + counts.nonPositiveHeatFlow;
  if (contradictions > 0) {
    warnings.push(
      `the model is inconsistent with the heat flow in ${contradictions} of ${W * H} cells (${counts.heatFlowExhausted} where the heat flow reaches 0 inside the model, ` +
        `${counts.conductivityUndefined} with k(T) undefined, ${counts.nonPositiveHeatFlow} with heat flow ≤ 0): see the "${INCONSISTENT}" grid; below the failing depth those cells have no data`,
    );
  }
  if (counts.meltOnset > 0) {
    warnings.push(
      `in ${counts.meltOnset} of ${W * H} cells the conductive geotherm reaches the fluid-absent solidus of its rock (melt onset): see the "${MELT_ONSET}" grid; ` +
        'below that depth a conductive temperature is not valid and those cells have no data',
    );
  }

  const layers: ProductLayer[] = [];
  const add = (l: Omit<ProductLayer, 'stats'>) => layers.push({ ...l, stats: layerStats(l.grid.values) });
  const sd = (p: GridSpec, v: Float32Array, u: string) => productGrid(p, v, u);
  const method = `steady 1-D conduction, layered, k(T) = k0/(1 + bT) by the Kirchhoff transform, constant or exponential heat production (Turcotte & Schubert 2002 §4-6, §4-8; Chapman 1986)${regions.length > 0 ? `; ${regions.length} regional model override(s)` : ''}`;

  // Monte Carlo percentiles (needed for the shared depth legends, so before the depth layers are assembled).
  const N = o.realizations ?? 0;
  let mc: ThermalProductsResult['monteCarlo'] = null;
  let pct: ReturnType<typeof uncertaintyResult> | null = null;
  if (N > 0) {
    const t2 = now();
    const seed = o.seed ?? 0;
    const corr = o.heatFlowErrorCorrelation ?? 'full';
    if (heatFlowSd === null && !zoneModels.some(isUncertainModel)) warnings.push('Monte Carlo with neither a heat-flow standard deviation nor model distributions: P10 = P50 = P90');
    else if (heatFlowSd === null) warnings.push('no heat-flow standard deviation grid: the percentiles reflect the model parameters only');
    const prep = prepareUncertainty({ heatFlow, heatFlowSd, models: zoneModels, zones, isothermsC: o.isothermsC, maxDepthKm, realizations: N, seed, heatFlowErrorCorrelation: corr });
    const mout = allocateUncertaintyOutput(W * H, o.isothermsC.length);
    // Tiles sized so one tile's Monte Carlo is about as long as a thermal tile × 50.
    const mtr = Math.max(1, Math.floor(tileRowsFor(W, o.tileRows) / Math.max(1, Math.ceil(N / 50))));
    for (let r = 0; r < H; r += mtr) {
      checkAbort(signal);
      const r1 = Math.min(H, r + mtr);
      computeUncertaintyRows(prep, W, r, r1, mout);
      progress('montecarlo', r1 / H, `Monte Carlo (${N} realizations): rows ${r1} of ${H}`);
      if (r1 < H) await yieldToLoop();
    }
    pct = uncertaintyResult(prep, mout);
    if (pct.rejectedDraws > 0) warnings.push(`${pct.rejectedDraws} model draw(s) were physically impossible (e.g. a conductivity ≤ 0) and left out of the percentiles`);
    mc = { realizations: N, seed, heatFlowErrorCorrelation: corr, rejectedDraws: pct.rejectedDraws, withHeatFlowSd: heatFlowSd !== null };
    timingsMs.monteCarlo = now() - t2;
  }

  const t3 = now();
  const toLonLat = gridToLonLat(crsDef);
  const contourJobs = o.isothermsC.length + o.depthsKm.length;
  let contoursDone = 0;
  const contourStep = async (message: string) => {
    contoursDone++;
    progress('contours', contoursDone / Math.max(1, contourJobs), message);
    checkAbort(signal);
    await yieldToLoop();
  };
  for (let k = 0; k < o.isothermsC.length; k++) {
    const T = o.isothermsC[k];
    const g = sd(heatFlow, out.isothermDepthKm[k], 'km');
    const pk = pct?.isotherms[k];
    const legend = sharedRampLegend(DEPTH, 'km', pk ? [g.values, pk.p10, pk.p50, pk.p90] : [g.values]);
    const interval = o.contourIntervalKm === undefined ? 1 : o.contourIntervalKm;
    const contours = interval === null ? undefined : contourGrid(g, { interval, units: 'km', toLonLat });
    add({ name: depthProductName(T), title: `Depth to the ${fmt(T)} °C isotherm`, units: 'km', grid: g, legend, ramp: DEPTH, method: `depth to the ${fmt(T)} °C isotherm (km below the surface; NoData where not reached above ${maxDepthKm} km), ${method}`, contours });
    if (pk) {
      for (const p of ['p10', 'p50', 'p90'] as const) {
        add({
          name: percentileProductName(T, p), title: `Depth to the ${fmt(T)} °C isotherm, ${p.toUpperCase()}`, units: 'km', grid: sd(heatFlow, pk[p], 'km'), legend, ramp: DEPTH,
          method: `${p.toUpperCase()} (Hyndman & Fan type 7) of the depth to the ${fmt(T)} °C isotherm over ${N} Monte Carlo realizations (seed ${mc!.seed}, heat-flow error correlation "${mc!.heatFlowErrorCorrelation}"); not reached counts as deeper than any depth, NoData where the percentile falls there; ${method}`,
        });
      }
    }
    await contourStep(`contours of ${depthProductName(T)}`);
  }
  for (let k = 0; k < o.depthsKm.length; k++) {
    const d = o.depthsKm[k];
    const g = sd(heatFlow, out.temperatureC[k], '°C');
    const legend = sharedRampLegend(EMBER, '°C', [g.values]);
    const st = layerStats(g.values);
    const interval = o.contourIntervalC === null ? null : o.contourIntervalC ?? (st.min !== null && st.max !== null ? niceContourInterval(st.min, st.max) : null);
    const contours = interval === null ? undefined : contourGrid(g, { interval, units: '°C', toLonLat });
    add({ name: temperatureProductName(d), title: `Temperature at ${fmt(d)} km`, units: '°C', grid: g, legend, ramp: EMBER, method: `temperature at ${fmt(d)} km below the surface, ${method}`, contours });
    await contourStep(`contours of ${temperatureProductName(d)}`);
  }
  timingsMs.contours = now() - t3;
  if (o.faciesDepthKm !== null && out.facies !== null) {
    let approx = 0;
    for (let i = 0; i < out.faciesApproximate!.length; i++) approx += out.faciesApproximate![i];
    if (approx > 0) warnings.push(`${approx} cell(s) of the facies grid lie within one boundary width (about ±50 °C, ±1.5 kbar) of another facies: facies boundaries are gradational`);
    add({ name: faciesProductName(o.faciesDepthKm), title: `Metamorphic facies at ${fmt(o.faciesDepthKm)} km (approximate fields)`, units: 'class', grid: sd(heatFlow, out.facies, 'class'), legend: faciesLegend(), ramp: null, method: `facies field (the project's simplified P–T diagram, gradational boundaries) of the temperature at ${fmt(o.faciesDepthKm)} km and the lithostatic pressure there, ${method}` });
  }
  add({ name: BASE_HEAT_FLOW, title: 'Heat flow at the base of the model', units: 'mW/m²', grid: sd(heatFlow, out.baseHeatFlowMWm2, 'mW/m²'), legend: sharedRampLegend(EMBER, 'mW/m²', [out.baseHeatFlowMWm2]), ramp: EMBER, method: `heat flow at ${maxDepthKm} km: surface heat flow − ∫A dz over the model (negative where the model is inconsistent), ${method}` });
  if (out.solidusDepthKm !== null) {
    add({ name: SOLIDUS_DEPTH, title: 'Depth where the water-saturated solidus is reached', units: 'km', grid: sd(heatFlow, out.solidusDepthKm, 'km'), legend: sharedRampLegend(DEPTH, 'km', [out.solidusDepthKm]), ramp: DEPTH, method: `shallowest depth where the geotherm reaches the water-saturated solidus of the layer's rock (granite, Huang & Wyllie 1973, in sediment and felsic crust; basalt in mafic crust; peridotite in mantle) at lithostatic pressure: melting there if free water is present; NoData where not reached above ${maxDepthKm} km; ${method}` });
  }
  if (out.meltOnsetKm !== null) {
    add({ name: MELT_ONSET, title: 'Melt onset (no temperatures below)', units: 'km', grid: sd(heatFlow, out.meltOnsetKm, 'km'), legend: sharedRampLegend(DEPTH, 'km', [out.meltOnsetKm]), ramp: DEPTH, method: `shallowest depth where the geotherm (the mantle adiabat below the lithosphere base) reaches the fluid-absent or dry solidus of the layer's rock (biotite dehydration melting, Le Breton & Thompson 1988, in sediment and felsic crust; dry basalt in mafic crust; dry peridotite, Hirschmann 2000, in mantle); the conductive column is not valid below it and the deeper grids have NoData there; NoData where not reached above ${maxDepthKm} km; ${method}` });
  }
  add({ name: INCONSISTENT, title: 'Cells where the model is inconsistent with the heat flow or melts', units: 'flag', grid: sd(heatFlow, out.inconsistent, 'flag'), legend: INCONSISTENT_LEGEND, ramp: null, method: `flag: 0 consistent, 1 heat flow reaches 0 inside the model, 2 k(T) undefined, 4 heat flow ≤ 0, 8 melt onset above ${maxDepthKm} km; ${method}` });
  return { layers, counts, zoneModels, maxDepthKm, warnings, timingsMs, monteCarlo: mc };
}

// ---------------------------------------------------------------------------------------------------------------
// The run.

function dataset(datasets: Record<string, StoredDataset>, id: string, field: string): StoredDataset {
  const d = datasets[id];
  if (d === undefined) throw new InputError(`data set "${id}" (${field}) was not found`, [{ field, problem: `no data set with id "${id}"` }], 'unknown_dataset');
  return d;
}

function parseJsonBody(d: StoredDataset, id: string, field: string): unknown {
  try {
    return JSON.parse(d.body);
  } catch (e) {
    throw new InputError(`data set "${id}" (${field}) is not valid JSON`, [{ field, problem: e instanceof Error ? e.message : String(e) }], 'bad_dataset');
  }
}

/** JSON carries a non-finite number as null: the summary says so itself. */
const finiteOrNull = (v: number | null) => (v !== null && Number.isFinite(v) ? v : null);

function serialize(g: Grid<Float32Array>): SerializedGrid {
  return { width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs: g.crs, units: g.units, values: g.values };
}

function layerInfo(l: ProductLayer): RunLayerInfo {
  return { name: l.name, kind: 'raster', units: l.units, title: l.title, legend: l.legend, formats: l.contours ? ['tif', 'png', 'geojson'] : ['tif', 'png'], stats: l.stats };
}

/** Encodes a product layer (GeoTIFF, PNG, contours) with its provenance. */
export function encodeProductLayer(l: ProductLayer, provenance: Provenance): RunLayer {
  const p = withMethod(provenance, l.method);
  const files: RunFile[] = [
    { ext: 'tif', bytes: geotiffBytes(l.grid, `${l.title} (${l.units})`, p, { classes: l.legend.type === 'classes' }) },
    { ext: 'png', bytes: pngBytes(l.grid, l.legend, l.ramp, p, l.title) },
  ];
  if (l.contours) files.push({ ext: 'geojson', bytes: new TextEncoder().encode(geojsonText(l.contours, withMethod(p, `contours of: ${l.method}`))) });
  return { info: layerInfo(l), files };
}

/**
 * Runs a whole analysis in this thread. Throws InputError for bad requests or data sets (the caller renders it as
 * a 4xx), an AbortError when `signal` fires.
 */
export async function runPipeline(request: unknown, datasets: Record<string, StoredDataset>, options: PipelineOptions = {}): Promise<RunResult> {
  const signal = options.signal;
  const extra = options.extraLayers ?? [];
  const tStart = now();
  const timingsMs: Record<string, number> = {};
  const weights: Record<string, number> = { validate: 2, prepare: 6, interpolate: 30, thermal: 15, montecarlo: 0, contours: 8, encode: 20 };
  const raw = (request ?? {}) as Record<string, unknown>;
  const parsed = runRequestSchema.safeParse(request);
  if (!parsed.success) {
    const details: InputProblem[] = parsed.error.issues.map((i) => ({ field: i.path.map(String).join('.') || '(request)', problem: i.message }));
    throw new InputError(`invalid run request: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_request');
  }
  const req = parsed.data;
  const N = req.realizations ?? 0;
  if (N > 0) weights.montecarlo = 30;
  for (const s of extra) weights[`extra:${s.name}`] = s.weight ?? 5;
  const tracker = new ProgressTracker(weights, options.progress);
  tracker.report('validate', 0, 'validating the request and data sets');
  const warnings: string[] = [];

  // Heat-flow error correlation: not (yet) a field of the request contract; read from the raw request if given.
  const corrRaw = raw.heatFlowErrorCorrelation;
  if (corrRaw !== undefined && corrRaw !== 'full' && corrRaw !== 'independent') {
    throw new InputError('heatFlowErrorCorrelation must be "full" or "independent"', [{ field: 'heatFlowErrorCorrelation', problem: `got ${JSON.stringify(corrRaw)}` }], 'invalid_request');
  }
  const correlation: 'full' | 'independent' = (corrRaw) ?? 'full';

  // Sites and interpolation options.
  const ip = interpolationOptionsSchema.safeParse(req.interpolation);
  if (!ip.success) {
    const details = ip.error.issues.map((i) => ({ field: `interpolation.${i.path.map(String).join('.')}`, problem: i.message }));
    throw new InputError(`invalid interpolation options: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_request');
  }
  const iopt = ip.data;
  if (iopt.field !== 'heatFlowMWm2') throw new InputError(`a run grids heat flow: interpolation.field must be "heatFlowMWm2", got "${iopt.field}"`, [{ field: 'interpolation.field', problem: 'expected heatFlowMWm2' }], 'invalid_request');
  const sitesDs = dataset(datasets, req.sites, 'sites');
  const { points, warnings: pw } = pointsFromGeoJson(parseJsonBody(sitesDs, req.sites, 'sites'), 'heatFlowMWm2', { source: `data set ${req.sites}` });
  warnings.push(...pw);
  const hashes: Record<string, string> = { sites: sha256Hex(sitesDs.body) };

  // Model.
  let doc: ModelDocument;
  if (typeof req.model === 'string') {
    const md = dataset(datasets, req.model, 'model');
    if (md.kind !== 'model') throw new InputError(`data set "${req.model}" is a ${md.kind} data set, not a model`, [{ field: 'model', problem: 'expected a data set of kind "model"' }], 'invalid_request');
    doc = parseModelText(md.body, `model ${req.model}`);
    hashes.model = sha256Hex(md.body);
  } else {
    doc = parseModelDocument(req.model, 'model');
    hashes.model = sha256Json(req.model);
  }

  // Faults (barriers) and regions (overrides, mask).
  let faults: number[][][] | null = null;
  if (req.faults !== undefined) {
    const fd = dataset(datasets, req.faults, 'faults');
    const ds = parseFeatureCollection('faults', parseJsonBody(fd, req.faults, 'faults'));
    warnings.push(...ds.warnings);
    faults = [];
    for (const f of ds.collection.features) {
      const g = f.geometry;
      if (g.type === 'LineString') faults.push(g.coordinates as number[][]);
      else faults.push(...(g.coordinates as number[][][]));
    }
    hashes.faults = sha256Hex(fd.body);
  }
  const regions: OverrideRegion[] = [];
  let mask: Rings | null = null;
  if (req.regions !== undefined) {
    const rd = dataset(datasets, req.regions, 'regions');
    const ds = parseFeatureCollection('regions', parseJsonBody(rd, req.regions, 'regions'));
    warnings.push(...ds.warnings);
    const found = overrideRegions(ds.collection.features);
    regions.push(...found.regions);
    if (req.maskToRegion && found.plain.length > 0) mask = found.plain[0];
    if (req.maskToRegion && mask === null) throw new InputError('maskToRegion is set but the regions data set has no feature without "layers" to serve as the mask', [{ field: 'maskToRegion', problem: 'add a polygon without layers, or unset maskToRegion' }], 'invalid_request');
    hashes.regions = sha256Hex(rd.body);
  } else if (req.maskToRegion) {
    throw new InputError('maskToRegion needs a regions data set', [{ field: 'regions', problem: 'missing' }], 'invalid_request');
  }

  // Output grid.
  const crs = req.grid.crs ?? iopt.crs ?? 'EPSG:4326';
  if (!/^EPSG:\d{4,6}$/i.test(crs)) throw new InputError(`grid.crs must be EPSG:nnnn (GeoTIFF exports carry an EPSG code), got "${crs}"`, [{ field: 'grid.crs', problem: 'expected EPSG:4326 or EPSG:nnnn' }], 'bad_crs');
  const crsDef = await loadCrsDefinition(crs);
  const isothermsC = req.isothermsC;
  const depthsKm = req.depthsKm;
  const faciesDepthKm = req.faciesDepthKm ?? (depthsKm.length > 0 ? Math.max(...depthsKm) : 10);
  const seed = req.seed ?? 0;
  hashes.request = sha256Json(request);
  const interpOptions: InterpolationOptions = {
    method: iopt.method, neighbors: iopt.neighbors, radiusKm: iopt.radiusKm, power: iopt.power, useQuality: iopt.useQuality, qualityWeights: iopt.qualityWeights,
    variogram: iopt.variogram, lagKm: iopt.lagKm, maxLagKm: iopt.maxLagKm, anisotropy: iopt.anisotropy ?? null, measurementError: iopt.measurementError,
    maxDistanceKm: iopt.maxDistanceKm ?? null, faults, region: mask, sd: iopt.sd, crossValidation: iopt.crossValidation ?? true, units: 'mW/m²',
    grid: { bbox: req.grid.bbox ?? iopt.bbox, cellKm: req.grid.cellKm ?? iopt.cellKm, size: req.grid.size ?? iopt.size, crs: crsDef === WGS84_DEF ? 'EPSG:4326' : crs, crsDef },
  };
  timingsMs.validate = now() - tStart;
  tracker.finish('validate', 'request and data sets valid');
  checkAbort(signal);

  // Interpolation: variogram fit and leave-one-out cross-validation, then the grid in row tiles.
  tracker.report('prepare', 0, `${iopt.method === 'kriging' ? 'fitting the semivariogram and ' : ''}cross-validating ${points.ids.length} sites`);
  await yieldToLoop();
  const t1 = now();
  const prep = prepareInterpolation(points, interpOptions);
  timingsMs.prepare = now() - t1;
  tracker.finish('prepare', prep.crossValidation ? `cross-validation RMSE ${prep.crossValidation.rmse.toFixed(2)} mW/m² over ${prep.crossValidation.n} sites` : 'interpolation prepared');
  checkAbort(signal);
  const t2 = now();
  const g = prep.plan.grid;
  const cells = g.width * g.height;
  const values = new Float32Array(cells);
  const sdv = prep.plan.withSd ? new Float32Array(cells) : null;
  const rt = createGridRuntime(prep.plan);
  let rs: RowStats = { cells: 0, masked: 0, empty: 0, fallbacks: 0, regularized: 0, factorizations: 0 };
  const itr = tileRowsFor(g.width, options.tileRows, 16384);
  for (let r = 0; r < g.height; r += itr) {
    checkAbort(signal);
    const r1 = Math.min(g.height, r + itr);
    rs = addStats(rs, computeRows(rt, r, r1, values, sdv));
    tracker.report('interpolate', r1 / g.height, `interpolating heat flow (${iopt.method}): rows ${r1} of ${g.height}`);
    if (r1 < g.height) await yieldToLoop();
  }
  const interp: InterpolationResult = finishGrid(prep, values, sdv, rs, now() - t2);
  timingsMs.interpolate = now() - t2;
  warnings.push(...interp.warnings);
  tracker.finish('interpolate', `heat flow interpolated on ${g.width} × ${g.height} cells`);
  const heatFlow = interp.grid;
  const heatFlowSd = interp.sd ?? null;

  const provenance = buildProvenance(
    {
      method: 'run',
      model: doc.model,
      modelName: doc.name,
      inputs: hashes,
      parameters: { isothermsC, depthsKm, faciesDepthKm, realizations: N, seed, heatFlowErrorCorrelation: correlation, grid: { width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs }, interpolation: iopt, variogram: interp.variogram ? { model: interp.variogram.model, nugget: interp.variogram.nugget, partialSill: interp.variogram.partialSill, rangeKm: interp.variogram.rangeKm } : null },
    },
    sha256Hex,
  );

  // Thermal products.
  const products = await computeThermalProducts(
    heatFlow, heatFlowSd, doc.model, regions, crsDef,
    { isothermsC, depthsKm, faciesDepthKm, maxDepthKm: req.maxDepthKm, contourIntervalKm: req.contourIntervalKm ?? 1, realizations: N, seed, heatFlowErrorCorrelation: correlation, tileRows: options.tileRows },
    (stage, within, message) => {
      if (stage === 'contours') {
        tracker.report('contours', within * 0.8, message);
        return;
      }
      if (stage === 'thermal' && within >= 1) tracker.finish('thermal', message);
      else if (stage === 'montecarlo' && within >= 1) tracker.finish('montecarlo', message);
      else tracker.report(stage, within, message);
    },
    signal,
  );
  Object.assign(timingsMs, Object.fromEntries(Object.entries(products.timingsMs).map(([k, v]) => [`products.${k}`, v])));
  warnings.push(...products.warnings);

  // Heat-flow layers.
  const toLonLat = gridToLonLat(crsDef);
  const hfStats = layerStats(heatFlow.values);
  const hfInterval = req.heatFlowContourIntervalMWm2 ?? (hfStats.min !== null && hfStats.max !== null ? niceContourInterval(hfStats.min, hfStats.max) : 5);
  const interpMethod = iopt.method === 'kriging'
    ? `ordinary kriging of surface heat flow (${interp.variogram?.model} semivariogram, nugget ${interp.variogram?.nugget.toFixed(3)}, partial sill ${interp.variogram?.partialSill.toFixed(3)}, range ${interp.variogram?.rangeKm.toFixed(2)} km, Cressie 1985 fit)${faults ? ', faults as barriers' : ''}`
    : `inverse-distance weighting of surface heat flow (Shepard 1968)${faults ? ', faults as barriers' : ''}`;
  const heatLayers: ProductLayer[] = [
    { name: 'heat-flow', title: 'Surface heat flow', units: 'mW/m²', grid: heatFlow, legend: sharedRampLegend(EMBER, 'mW/m²', [heatFlow.values]), ramp: EMBER, method: interpMethod, contours: contourGrid(heatFlow, { interval: hfInterval, units: 'mW/m²', toLonLat }), stats: hfStats },
  ];
  if (heatFlowSd !== null) heatLayers.push({ name: 'heat-flow-sd', title: 'Surface heat flow, kriging standard deviation', units: 'mW/m²', grid: heatFlowSd, legend: sharedRampLegend(HAZE, 'mW/m²', [heatFlowSd.values]), ramp: HAZE, method: `kriging standard deviation of ${interpMethod}`, stats: layerStats(heatFlowSd.values) });
  tracker.finish('contours', 'contours done');

  // Encode.
  const t3 = now();
  const all = [...heatLayers, ...products.layers];
  const layers: RunLayer[] = [];
  for (let i = 0; i < all.length; i++) {
    checkAbort(signal);
    layers.push(encodeProductLayer(all[i], provenance));
    tracker.report('encode', (i + 1) / (all.length + 1), `encoding ${all[i].name}`);
    await yieldToLoop();
  }
  if (prep.crossValidation !== null) {
    const idx = new Map(points.ids.map((id, i) => [id, i]));
    const features = prep.crossValidation.residuals.map((r) => {
      const i = idx.get(r.id.split('+')[0]) ?? -1;
      return {
        type: 'Feature' as const,
        geometry: { type: 'Point' as const, coordinates: [points.lon[i], points.lat[i]] },
        properties: { id: r.id, observedMWm2: r.observed, predictedMWm2: r.predicted, residualMWm2: r.residual, sdMWm2: r.sd },
      };
    }).filter((f) => Number.isFinite(f.geometry.coordinates[0]));
    const res = prep.crossValidation.residuals.map((r) => r.residual);
    const st = layerStats(res);
    const cvp = withMethod(provenance, `leave-one-out cross-validation residuals (observed − predicted) of ${interpMethod}`);
    layers.push({
      info: { name: 'cv-residuals', kind: 'vector', units: 'mW/m²', title: 'Cross-validation residuals (observed − predicted)', legend: null, formats: ['geojson'], stats: st },
      files: [{ ext: 'geojson', bytes: new TextEncoder().encode(geojsonText({ type: 'FeatureCollection', features }, cvp)) }],
    });
  }
  timingsMs.encode = now() - t3;
  tracker.finish('encode', `${layers.length} layers encoded`);

  // Later stages (hook).
  const stageSummaries: StageSummaries = {};
  for (const s of extra) {
    checkAbort(signal);
    const key = `extra:${s.name}`;
    const ctx: PipelineContext = { request: req, datasets, heatFlow, heatFlowSd, model: doc.model, provenance, toLonLat, warnings, summary: stageSummaries, signal };
    const more = await s.run(ctx, (f, m) => tracker.report(key, f, m));
    layers.push(...more);
    tracker.finish(key, `${s.name} done`);
  }

  const cv = prep.crossValidation;
  const summary: RunSummary = {
    grid: { width: g.width, height: g.height, cells, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs, cellKm: interp.cellKm },
    interpolation: { method: iopt.method, variogram: interp.variogram ? { model: interp.variogram.model, nugget: interp.variogram.nugget, partialSill: interp.variogram.partialSill, rangeKm: interp.variogram.rangeKm, source: interp.variogram.source, empirical: interp.variogram.empirical } : null },
    crossValidation: cv ? { n: cv.n, rmse: finiteOrNull(cv.rmse), meanError: finiteOrNull(cv.meanError), meanStandardizedError: finiteOrNull(cv.meanStandardizedError), meanSquaredDeviationRatio: finiteOrNull(cv.meanSquaredDeviationRatio) } : null,
    isothermsC, depthsKm, faciesDepthKm, maxDepthKm: products.maxDepthKm,
    overrides: regions.map((r) => r.label),
    inconsistent: products.counts,
    monteCarlo: products.monteCarlo,
    ...stageSummaries,
    layers: Object.fromEntries(layers.map((l) => [l.info.name, l.info.stats ?? null])),
    provenance: { tool: provenance.tool, version: provenance.version, contentHash: provenance.contentHash, inputs: provenance.inputs },
    timingsMs: { ...timingsMs, total: now() - tStart },
  };
  // The run contract (shared/schema/run.ts): a summary that does not match it is a fault of this code, not of the input.
  runSummarySchema.parse(summary);
  return { layers, summary, grids: heatFlowSd ? { heatFlow: serialize(heatFlow), heatFlowSd: serialize(heatFlowSd) } : { heatFlow: serialize(heatFlow) }, model: doc.model, warnings: [...new Set(warnings)] };
}
