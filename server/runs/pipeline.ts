/**
 * The analysis run: read the request and its data sets (server/runs/run-inputs.ts), interpolate heat flow (IDW or
 * ordinary kriging with its standard deviation and leave-one-out cross-validation, faults as barriers) in row tiles
 * (shared/products/heat-flow-surface.ts), compute the thermal products (shared/products/thermal-products.ts), encode
 * every layer with the caution and provenance (server/runs/run-layers.ts), run the later stages (isograds), and
 * return the summary of the run contract (shared/schema/run.ts). `runPipeline` is what the run worker
 * (server/workers/run-worker.ts) calls.
 *
 * Progress: real fractions from the stages (each stage has a weight; tiles report within their stage), never
 * decreasing. Between tiles the pipeline yields to the event loop, so a worker sees a cancel message, and checks
 * `signal`.
 */
import { gridSpecOf, type Grid } from '../../shared/grid/grid.ts';
import { runSummarySchema, type HeatFlowCentralValues, type RunRequest, type RunSummary, type StructureSummary } from '../../shared/schema/run.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { prepareInterpolation, type InterpolationResult, type PreparedInterpolation, type TrendReport } from '../../shared/interp/interpolate.ts';
import { heatFlowSurface } from '../../shared/products/heat-flow-surface.ts';
import { computeThermalProducts, gridToLonLat, tileRowsFor, type ThermalProductsResult } from '../../shared/products/thermal-products.ts';
import { buildProvenance, type Provenance } from '../../shared/products/provenance.ts';
import { sha256Hex } from '../io/export.ts';
import { between, ProgressTracker, checkAbort, yieldToLoop, type Progress } from './progress.ts';
import { readRunInputs, type RunInputs } from './run-inputs.ts';
import { crossValidationLayer, encodeProductLayer, heatFlowLayers, interpolationMethodText } from './run-layers.ts';
import type { RunLayer, RunResult, SerializedGrid, StoredDataset } from './types.ts';
import { runSimulationOptions, simulateRunHeatFlow, type HeatFlowSimulation } from './heat-flow-simulation.ts';
import { anisotropyEstimateSummary } from '../../shared/schema/anisotropy.ts';
import { noDataAcrossFaultsLayer } from './no-data-layer.ts';

export type { RunFile, RunLayer, RunResult, SerializedGrid, StoredDataset } from './types.ts';
export type { Progress } from './progress.ts';
export { encodeProductLayer } from './run-layers.ts';

/**
 * A later stage adding layers (e.g. isograds from samples): it gets the run's context after the thermal layers
 * and returns finished layers (files encoded, caution and provenance included). `weight` is its share of progress.
 */
export interface ExtraLayerStage {
  name: string;
  weight?: number;
  run(ctx: PipelineContext, progress: (fractionOfStage: number, message: string) => void): Promise<RunLayer[]> | RunLayer[];
}

/** The members of the run summary that later stages write. */
export type StageSummaries = { structure?: StructureSummary };

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

export interface PipelineOptions {
  progress?: (p: Progress) => void;
  signal?: AbortSignal;
  /** Stages run after the thermal layers (the hook for layers built by other engines). */
  extraLayers?: ExtraLayerStage[];
  /** Rows per tile of the interpolation, thermal and Monte Carlo passes (default: about 16,384 / 65,536 cells a tile). */
  tileRows?: number;
}

const now = () => performance.now();

/** JSON carries a non-finite number as null: the summary says so itself. */
const finiteOrNull = (v: number | null) => (v !== null && Number.isFinite(v) ? v : null);

function serialize(g: Grid<Float32Array>): SerializedGrid {
  return { ...gridSpecOf(g), units: g.units, values: g.values };
}

function variogramParameters(interp: InterpolationResult) {
  const v = interp.variogram;
  return v ? { model: v.model, nugget: v.nugget, partialSill: v.partialSill, rangeKm: v.rangeKm } : null;
}

/** The drift for the provenance: kind, how chosen and the least-squares trend (null for IDW). */
function trendParameters(interp: InterpolationResult) {
  const t = interp.variogram?.trend;
  return t ? { kind: t.kind, selectedBy: t.selectedBy, ols: t.ols } : null;
}

/** The run summary's drift: kind, how chosen, the trend's explained variance, and auto's candidates. */
function trendSummary(t: TrendReport): NonNullable<RunSummary['interpolation']['trend']> {
  const out: NonNullable<RunSummary['interpolation']['trend']> = {
    kind: t.kind,
    selectedBy: t.selectedBy,
    explainedVarianceFraction: t.ols === null ? null : finiteOrNull(t.ols.explainedVarianceFraction),
  };
  if (t.candidates) out.candidates = t.candidates.map((c) => ({ ...c, cvRmse: finiteOrNull(c.cvRmse), msdr: finiteOrNull(c.msdr) }));
  if (t.kind === 'external' && t.ols?.covariate) out.covariate = t.ols.covariate;
  return out;
}

function runProvenance(inp: RunInputs, interp: InterpolationResult): Provenance {
  const g = interp.grid;
  const parameters = {
    isothermsC: inp.request.isothermsC,
    depthsKm: inp.request.depthsKm,
    faciesDepthKm: inp.faciesDepthKm,
    realizations: inp.request.realizations ?? 0,
    seed: inp.seed,
    heatFlowRealizations: (inp.request.realizations ?? 0) > 0 ? 'conditional simulation' : null,
    grid: { ...gridSpecOf(g), crs: inp.crs },
    interpolation: inp.interpolation,
    variogram: variogramParameters(interp),
    trend: trendParameters(interp),
  };
  return buildProvenance({ method: 'run', model: inp.doc.model, modelName: inp.doc.name, inputs: inp.hashes, parameters }, sha256Hex);
}

/** The run summary of the run contract (shared/schema/run.ts), checked against its schema. */
function runSummary(
  inp: RunInputs,
  prep: PreparedInterpolation,
  interp: InterpolationResult,
  products: ThermalProductsResult,
  sim: HeatFlowSimulation | null,
  layers: RunLayer[],
  stages: StageSummaries,
  provenance: Provenance,
  timingsMs: Record<string, number>,
): RunSummary {
  const g = interp.grid,
    v = interp.variogram,
    cv = prep.crossValidation;
  const summary: RunSummary = {
    grid: {
      width: g.width,
      height: g.height,
      cells: g.width * g.height,
      west: g.west,
      north: g.north,
      dx: g.dx,
      dy: g.dy,
      crs: inp.crs,
      cellKm: interp.cellKm,
      groundCellKmRange: interp.groundCellKmRange,
    },
    interpolation: {
      method: inp.interpolation.method,
      variogram: v
        ? {
            ...variogramParameters(interp)!,
            source: v.source,
            empirical: v.empirical,
            anisotropy: v.anisotropy,
            ...(v.anisotropyEstimate ? { anisotropyEstimate: anisotropyEstimateSummary(v.anisotropyEstimate) } : {}),
          }
        : null,
      ...(v?.trend ? { trend: trendSummary(v.trend) } : {}),
      emptyCells: { noDataAcrossFaults: interp.stats.hidden, beyondSearchRadius: interp.stats.empty - interp.stats.hidden, masked: interp.stats.masked },
    },
    crossValidation: cv
      ? {
          n: cv.n,
          rmse: finiteOrNull(cv.rmse),
          meanError: finiteOrNull(cv.meanError),
          meanStandardizedError: finiteOrNull(cv.meanStandardizedError),
          meanSquaredDeviationRatio: finiteOrNull(cv.meanSquaredDeviationRatio),
        }
      : null,
    isothermsC: inp.request.isothermsC,
    depthsKm: inp.request.depthsKm,
    faciesDepthKm: inp.faciesDepthKm,
    maxDepthKm: products.maxDepthKm,
    overrides: inp.regions.map((r) => r.label),
    inconsistent: products.counts,
    monteCarlo:
      products.monteCarlo === null
        ? null
        : { ...products.monteCarlo, ...(sim === null ? {} : { heatFlowSimulation: { ...sim.report, ...centralValues(interp.grid, sim) } }) },
    ...stages,
    layers: Object.fromEntries(layers.map((l) => [l.info.name, l.info.stats ?? null])),
    provenance: { tool: provenance.tool, version: provenance.version, contentHash: provenance.contentHash, inputs: provenance.inputs },
    timingsMs,
  };
  // A summary that does not match the contract is a fault of this code, not of the input.
  runSummarySchema.parse(summary);
  return summary;
}

/** Interpolates the heat-flow surface in row tiles, reporting under 'prepare' and 'interpolate'. */
async function interpolateHeatFlow(
  inp: RunInputs,
  tracker: ProgressTracker,
  options: PipelineOptions,
  timingsMs: Record<string, number>,
): Promise<{ prep: PreparedInterpolation; interp: InterpolationResult }> {
  const method = inp.interpolation.method;
  tracker.report('prepare', 0, `${method === 'kriging' ? 'fitting the semivariogram and ' : ''}cross-validating ${inp.points.ids.length} sites`);
  await yieldToLoop();
  const t1 = now();
  const prep = prepareInterpolation(inp.points, inp.interpOptions);
  timingsMs.prepare = now() - t1;
  tracker.finish(
    'prepare',
    prep.crossValidation
      ? `cross-validation RMSE ${prep.crossValidation.rmse.toFixed(2)} mW/m² over ${prep.crossValidation.n} sites`
      : 'interpolation prepared',
  );
  checkAbort(options.signal);
  const t2 = now();
  const g = prep.plan.grid;
  const interp = await heatFlowSurface(prep, {
    tileRows: tileRowsFor(g.width, options.tileRows, 16384),
    tick: async (fraction, message) => {
      tracker.report('interpolate', fraction, `interpolating heat flow (${method}): ${message}`);
      if (fraction < 1) await between(options.signal);
    },
  });
  timingsMs.interpolate = now() - t2;
  tracker.finish('interpolate', `heat flow interpolated on ${g.width} × ${g.height} cells`);
  return { prep, interp };
}

/**
 * The central values of the simulated heat flow beside the kriged map's, averaged over the cells with data
 * (mW/m²): the mean, median and sd over realizations of the regional mean, and the kriged map's mean.
 */
function centralValues(heatFlow: Grid<Float32Array>, sim: HeatFlowSimulation): HeatFlowCentralValues {
  const cells = heatFlow.values.length,
    N = sim.count;
  let kriged = 0,
    n = 0;
  for (let c = 0; c < cells; c++) {
    const v = heatFlow.values[c];
    if (v === v) {
      kriged += v;
      n++;
    }
  }
  if (n === 0) return { regionalMeanMWm2: null, regionalMedianMWm2: null, regionalMeanSdMWm2: null, krigedRegionalMeanMWm2: null, differenceMWm2: null };
  const means = new Float64Array(N);
  for (let r = 0; r < N; r++) {
    let s = 0;
    for (let c = 0; c < cells; c++) {
      const v = sim.values[r * cells + c];
      if (v === v) s += v;
    }
    means[r] = s / n;
  }
  let m = 0,
    ss = 0;
  for (let r = 0; r < N; r++) m += means[r];
  m /= N;
  for (let r = 0; r < N; r++) ss += (means[r] - m) ** 2;
  means.sort();
  const h = (N - 1) * 0.5,
    k = Math.floor(h);
  const med = k + 1 < N ? means[k] + (h - k) * (means[k + 1] - means[k]) : means[k];
  return {
    regionalMeanMWm2: m,
    regionalMedianMWm2: med,
    regionalMeanSdMWm2: N > 1 ? Math.sqrt(ss / (N - 1)) : null,
    krigedRegionalMeanMWm2: kriged / n,
    differenceMWm2: m - kriged / n,
  };
}

/** The run's heat-flow realizations: conditional simulations of the sites on the run's grid (none without realizations). */
async function simulateHeatFlow(
  inp: RunInputs,
  interp: InterpolationResult,
  tracker: ProgressTracker,
  options: PipelineOptions,
  timingsMs: Record<string, number>,
  warnings: string[],
): Promise<HeatFlowSimulation | null> {
  const N = inp.request.realizations ?? 0;
  if (N <= 0) return null;
  tracker.report('simulate', 0, `simulating ${N} heat-flow fields conditioned on ${inp.points.ids.length} sites`);
  await between(options.signal);
  const t0 = now();
  const sim = simulateRunHeatFlow(
    inp.points,
    { ...runSimulationOptions(inp.interpolation, interp.variogram?.trend?.kind, inp.interpOptions.externalDrift), faults: inp.faults },
    interp.grid,
    inp.crsDef,
    N,
    inp.seed,
  );
  timingsMs.simulate = now() - t0;
  warnings.push(...sim.warnings.map((w) => `heat-flow simulation: ${w}`));
  tracker.finish('simulate', `${N} heat-flow fields simulated`);
  return sim;
}

/** The thermal products, their progress mapped onto the run's stages. */
function thermalProducts(
  inp: RunInputs,
  interp: InterpolationResult,
  sim: HeatFlowSimulation | null,
  tracker: ProgressTracker,
  options: PipelineOptions,
): Promise<ThermalProductsResult> {
  const req = inp.request;
  const o = {
    isothermsC: req.isothermsC,
    depthsKm: req.depthsKm,
    faciesDepthKm: inp.faciesDepthKm,
    maxDepthKm: req.maxDepthKm,
    contourIntervalKm: req.contourIntervalKm ?? 1,
    realizations: req.realizations ?? 0,
    seed: inp.seed,
    heatFlowErrorCorrelation: inp.heatFlowErrorCorrelation,
    heatFlowRealizations: sim?.values,
    heatFlowSource: sim?.source,
    tileRows: options.tileRows,
  };
  return computeThermalProducts(interp.grid, interp.sd ?? null, inp.doc.model, inp.regions, inp.crsDef, o, async (stage, within, message) => {
    if (stage === 'contours') tracker.report('contours', within * 0.8, message);
    else if (within >= 1) tracker.finish(stage, message);
    else tracker.report(stage, within, message);
    if (stage === 'contours' || within < 1) await between(options.signal);
  });
}

/**
 * Runs a whole analysis in this thread. Throws InputError for bad requests or data sets (the caller renders it as
 * a 4xx), an AbortError when `signal` fires.
 */
export async function runPipeline(request: unknown, datasets: Record<string, StoredDataset>, options: PipelineOptions = {}): Promise<RunResult> {
  const { signal, extraLayers: extra = [] } = options;
  const tStart = now();
  const timingsMs: Record<string, number> = {};
  const weights: Record<string, number> = { validate: 2, prepare: 6, interpolate: 30, thermal: 15, montecarlo: 0, contours: 8, encode: 20 };
  const inp = await readRunInputs(request, datasets);
  const req = inp.request;
  if ((req.realizations ?? 0) > 0) Object.assign(weights, { montecarlo: 30, simulate: 15 });
  for (const s of extra) weights[`extra:${s.name}`] = s.weight ?? 5;
  const tracker = new ProgressTracker(weights, options.progress);
  const warnings = [...inp.warnings];
  timingsMs.validate = now() - tStart;
  tracker.finish('validate', 'request and data sets valid');
  checkAbort(signal);

  const { prep, interp } = await interpolateHeatFlow(inp, tracker, options, timingsMs);
  warnings.push(...interp.warnings);
  const heatFlow = interp.grid,
    heatFlowSd = interp.sd ?? null;
  const provenance = runProvenance(inp, interp);
  const sim = await simulateHeatFlow(inp, interp, tracker, options, timingsMs, warnings);
  const products = await thermalProducts(inp, interp, sim, tracker, options);
  Object.assign(timingsMs, Object.fromEntries(Object.entries(products.timingsMs).map(([k, v]) => [`products.${k}`, v])));
  warnings.push(...products.warnings);

  const toLonLat = gridToLonLat(inp.crsDef);
  const method = interpolationMethodText(interp, inp.interpolation.method, inp.faults !== null);
  const heatLayers = heatFlowLayers(heatFlow, heatFlowSd, method, toLonLat, req.heatFlowContourIntervalMWm2);
  tracker.finish('contours', 'contours done');

  const t3 = now();
  const all = [...heatLayers, ...products.layers];
  const layers: RunLayer[] = [];
  for (let i = 0; i < all.length; i++) {
    checkAbort(signal);
    layers.push(encodeProductLayer(all[i], provenance));
    tracker.report('encode', (i + 1) / (all.length + 1), `encoding ${all[i].name}`);
    await yieldToLoop();
  }
  if (prep.crossValidation !== null) layers.push(crossValidationLayer(inp.points, prep.crossValidation, provenance, method));
  const hidden = noDataAcrossFaultsLayer(prep, heatFlow, toLonLat, provenance);
  if (hidden !== null) layers.push(hidden);
  timingsMs.encode = now() - t3;
  tracker.finish('encode', `${layers.length} layers encoded`);

  // Later stages (hook).
  const stages: StageSummaries = {};
  for (const s of extra) {
    checkAbort(signal);
    const key = `extra:${s.name}`;
    const ctx: PipelineContext = {
      request: req,
      datasets,
      heatFlow,
      heatFlowSd,
      model: inp.doc.model,
      provenance,
      toLonLat,
      warnings,
      summary: stages,
      signal,
    };
    layers.push(...(await s.run(ctx, (f, m) => tracker.report(key, f, m))));
    tracker.finish(key, `${s.name} done`);
  }

  const summary = runSummary(inp, prep, interp, products, sim, layers, stages, provenance, { ...timingsMs, total: now() - tStart });
  const grids = heatFlowSd ? { heatFlow: serialize(heatFlow), heatFlowSd: serialize(heatFlowSd) } : { heatFlow: serialize(heatFlow) };
  return { layers, summary, grids, model: inp.doc.model, warnings: [...new Set(warnings)] };
}
