/**
 * A run's realizations: the one interface through which everything that needs the run's uncertainty reads it (the
 * spread and exceedance-probability layers, heat in place from a run). Realization r is the pair the run's own
 * P10/P50/P90 maps were computed from (shared/products/uncertainty.ts → prepareGridMonteCarlo): the model
 * parameters drawn from stream (seed, r), one draw per zone model in zone order, and the heat-flow field of
 * realization r: a conditional simulation of the sites on the run's grid (server/runs/heat-flow-simulation.ts),
 * simulated again here value for value (the run's checksum proves it). Runs made before simulation (and grids
 * given without sites) keep the old field q + sd·z with z the stream's next standard normal ("full" correlation)
 * or a normal keyed by (seed, r, cell) ("independent"). Reading them here reproduces the run's percentile maps.
 *
 * `loadRunRealizations` reads the run's stored record (`readRunRecord`, cheap store reads) and builds the
 * realizations from it (`realizationsFromRecord`, the simulation's work); a worker thread gets the record and
 * builds them itself. `realizationsFromGrids` builds them from grids in memory.
 */
import { InputError } from '../../shared/errors.ts';
import type { Grid, GridSpec } from '../../shared/grid/grid.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { applyLayerOverride, overrideRegions, regionZones } from '../../shared/products/overrides.ts';
import { createStream } from '../../shared/random/prng.ts';
import { isUncertainModel, realizeModel, type CompiledModel, type ThermalModel } from '../../shared/thermal/index.ts';
import { cellNormal, prepareGridMonteCarlo, type PreparedGridMonteCarlo } from '../../shared/thermal/monte-carlo.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { interpolationOptionsSchema, pointsFromGeoJson, runTrend } from '../../shared/schema/interp.ts';
import { driftGridFromBytes, gridDatasetBytes } from '../io/grid-dataset.ts';
import type { Store } from '../store/types.ts';
import { runSimulationOptions, simulateRunHeatFlow } from './heat-flow-simulation.ts';
import { faultLines } from './run-inputs.ts';
import type { DriftKind } from '../../shared/interp/drift.ts';

export interface RunRealizations {
  /** Number of realizations. */
  count: number;
  seed: number;
  /** The old per-cell error model, for runs made before simulation (null when the fields are simulated). */
  heatFlowErrorCorrelation: 'full' | 'independent' | null;
  /** The simulated heat-flow fields, realization-major (count × cells, mW/m²); null for the old error model. */
  heatFlowValues: Float32Array | null;
  /** The grid every realization lives on (the run's heat-flow grid). */
  grid: GridSpec;
  /** Zone index per cell (0 = the base model, k = region k's override); undefined when there are no regions. */
  zones: Uint16Array | undefined;
  /** The zone models as given (with their distributions), zone 0 the base model. */
  zoneModels: ThermalModelInput[];
  /** Isotherm and solidus searches stop here, km. */
  maxDepthKm: number;
  /** Where the draws come from, in words (for provenance and reports). */
  source: string;
  /** Surface heat flow of realization r at cell c, mW/m² (NaN = no data). */
  heatFlowAt(r: number, c: number): number;
  /** The compiled model of realization r for zone `zone`; null when that draw was physically impossible. */
  compiledModel(r: number, zone: number): CompiledModel | null;
  /** The drawn model (numbers only) of realization r for zone `zone`, from the same stream. */
  modelDraw(r: number, zone: number): ThermalModel;
}

/** The realizations of heat-flow grids and zone models (the run's streams for this seed and correlation). */
export function realizationsFromGrids(input: {
  heatFlow: Grid<Float32Array | Float64Array>;
  heatFlowSd: Grid<Float32Array | Float64Array> | null;
  zoneModels: ThermalModelInput[];
  zones?: Uint16Array;
  maxDepthKm: number;
  realizations: number;
  seed: number;
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /** Simulated heat-flow fields (realization-major, realizations × cells) and where they come from. */
  heatFlowRealizations?: { values: Float32Array; source: string };
}): RunRealizations {
  const N = input.realizations;
  if (!(Number.isInteger(N) && N >= 1)) throw new RangeError(`realizations must be a positive integer, got ${N}`);
  const corr = input.heatFlowErrorCorrelation ?? 'full';
  // The run's own preparation: the same draws, in the same order, compiled the same way.
  const prep: PreparedGridMonteCarlo = prepareGridMonteCarlo({
    models: input.zoneModels,
    zones: input.zones,
    heatFlowMWm2: input.heatFlow.values,
    heatFlowSdMWm2: input.heatFlowSd?.values,
    heatFlowErrorCorrelation: corr,
    heatFlowRealizationsMWm2: input.heatFlowRealizations?.values,
    isothermsC: [],
    depthsKm: [],
    maxDepthKm: input.maxDepthKm,
    realizations: N,
    seed: input.seed,
  });
  const q = input.heatFlow.values;
  const sd = input.heatFlowSd?.values;
  const seed = input.seed;
  const { width, height, west, north, dx, dy, crs } = input.heatFlow;
  const withSd = sd !== undefined;
  const sims = input.heatFlowRealizations?.values;
  const cells = width * height;
  const sources = [
    sims !== undefined
      ? input.heatFlowRealizations!.source
      : withSd
        ? `heat flow = kriged value + kriging sd × a standard normal (${corr === 'full' ? 'one per realization for all cells' : 'one per cell'})`
        : 'heat flow = the interpolated value (no standard deviation grid)',
    input.zoneModels.some(isUncertainModel) ? 'model parameters drawn from their distributions once per realization' : 'model parameters fixed',
  ];
  return {
    count: N,
    seed,
    heatFlowErrorCorrelation: sims === undefined ? corr : null,
    heatFlowValues: sims ?? null,
    grid: { width, height, west, north, dx, dy, crs },
    zones: input.zones,
    zoneModels: input.zoneModels,
    maxDepthKm: input.maxDepthKm,
    source: `Monte Carlo, ${N} realizations, seed ${seed}, streams (seed, realization): ${sources.join('; ')}`,
    heatFlowAt(r, c) {
      if (sims !== undefined) return q[c] === q[c] ? sims[r * cells + c] : NaN;
      const s = withSd ? sd[c] : 0;
      return s > 0 ? q[c] + s * (corr === 'independent' ? cellNormal(seed, r, c) : prep.fullNormal[r]) : q[c];
    },
    compiledModel(r, zone) {
      const m = prep.compiled[r]?.[zone];
      if (m === undefined) throw new RangeError(`no realization ${r} of zone ${zone}`);
      return m;
    },
    modelDraw(r, zone) {
      if (!(r >= 0 && r < N && zone >= 0 && zone < input.zoneModels.length)) throw new RangeError(`no realization ${r} of zone ${zone}`);
      const rng = createStream(seed, 0);
      rng.reset(seed, r);
      let draw: ThermalModel | null = null;
      for (let k = 0; k <= zone; k++) draw = realizeModel(input.zoneModels[k], rng);
      delete draw!.surfaceHeatFlowMWm2; // the grid gives q0
      return draw!;
    },
  };
}

/** What building a run's realizations needs, read from the store (plain data: it crosses a thread boundary). */
export interface RunRecord {
  runId: string;
  request: Record<string, unknown>;
  summary: Record<string, unknown>;
  model: ThermalModelInput;
  heatFlow: Grid<Float32Array>;
  heatFlowSd: Grid<Float32Array> | null;
  /** Bodies of the run's sites and regions data sets (null when the run has none). */
  sitesBody: string | null;
  regionsBody: string | null;
  /** Body of the run's faults data set when its simulation treated them as barriers (else null). */
  faultsBody: string | null;
  /** Body of the grid data set of a simulation with an external drift (else null or absent). */
  driftBody?: string | null;
}

interface StoredMonteCarlo {
  realizations?: number;
  seed?: number;
  heatFlowErrorCorrelation?: 'full' | 'independent' | null;
  /** trend: the drift the stored realizations carried; the re-simulation takes the same. */
  heatFlowSimulation?: { checksum?: number; faultBarriers?: boolean; trend?: DriftKind };
}

/** Reads what a finished run's realizations are built from (store reads only; no computation). */
export async function readRunRecord(store: Store, runId: string): Promise<RunRecord> {
  const run = await store.getRun(runId);
  if (!run) throw new InputError(`no run with id "${runId}"`, [{ field: 'runId', problem: 'not found' }], 'run_not_found');
  if (run.status !== 'done')
    throw new InputError(
      `run ${runId} is ${run.status}; its realizations exist when it is done`,
      [{ field: 'runId', problem: `status ${run.status}` }],
      'run_not_done',
    );
  const request = (run.request ?? {}) as { regions?: string; sites?: string; faults?: string; interpolation?: { trend?: string } };
  const summary = (run.summary ?? {}) as { monteCarlo?: StoredMonteCarlo | null };
  const heat = await store.getRunGrid(runId, 'heatFlow');
  if (!heat) throw new InputError(`run ${runId} has no stored heat-flow grid`, [{ field: 'runId', problem: 'no heat-flow grid' }], 'run_without_grid');
  const sdRec = await store.getRunGrid(runId, 'heatFlowSd');
  const body = async (id: string | undefined, field: string): Promise<string | null> => {
    if (id === undefined) return null;
    const ds = await store.getDataset(id);
    if (!ds) throw new InputError(`the ${field} data set "${id}" of run ${runId} is no longer stored`, [{ field, problem: 'not found' }], 'dataset_not_found');
    return ds.body;
  };
  const simulated = summary.monteCarlo?.heatFlowSimulation !== undefined;
  return {
    runId,
    request: run.request as Record<string, unknown>,
    summary: run.summary as Record<string, unknown>,
    model: run.model as ThermalModelInput,
    heatFlow: { ...heat.meta, values: heat.values },
    heatFlowSd: sdRec ? { ...sdRec.meta, values: sdRec.values } : null,
    sitesBody: simulated ? await body(request.sites, 'sites') : null,
    regionsBody: await body(request.regions, 'regions'),
    faultsBody: simulated && summary.monteCarlo?.heatFlowSimulation?.faultBarriers === true ? await body(request.faults, 'faults') : null,
    driftBody: simulated ? await body(runTrend(request.interpolation?.trend).driftDataset ?? undefined, 'interpolation.trend') : null,
  };
}

/**
 * The realizations of a finished run, from its stored grids, model, request and data sets. `realizations`
 * overrides the run's count (e.g. for a run made without Monte Carlo); otherwise a run with none is a 409.
 */
export async function loadRunRealizations(store: Store, runId: string, opts: { realizations?: number } = {}): Promise<RunRealizations> {
  return realizationsFromRecord(await readRunRecord(store, runId), opts);
}

/** Builds a run's realizations from its record (simulating its heat-flow fields again when the run did). */
export async function realizationsFromRecord(rec: RunRecord, opts: { realizations?: number } = {}): Promise<RunRealizations> {
  const runId = rec.runId;
  const request = rec.request as {
    regions?: string;
    realizations?: number;
    seed?: number;
    heatFlowErrorCorrelation?: 'full' | 'independent';
    maxDepthKm?: number;
    interpolation?: unknown;
  };
  const summary = rec.summary as { maxDepthKm?: number; monteCarlo?: StoredMonteCarlo | null };
  const N = opts.realizations ?? summary.monteCarlo?.realizations ?? request.realizations ?? 0;
  if (!(Number.isInteger(N) && N >= 1)) {
    throw new InputError(
      `run ${runId} was made without realizations: start a run with "realizations" (e.g. 100) for spread and probability`,
      [{ field: 'realizations', problem: 'the run has none' }],
      'run_without_realizations',
    );
  }
  const heatFlow = rec.heatFlow;
  const base = rec.model;
  const zoneModels: ThermalModelInput[] = [base];
  let zones: Uint16Array | undefined;
  const crsDef = heatFlow.crs === 'EPSG:4326' ? WGS84_DEF : await loadCrsDefinition(heatFlow.crs);
  if (rec.regionsBody !== null) {
    const found = overrideRegions(parseFeatureCollection('regions', JSON.parse(rec.regionsBody)).collection.features);
    if (found.regions.length > 0) {
      zoneModels.push(...found.regions.map((r) => applyLayerOverride(base, r.override)));
      zones = regionZones(heatFlow, found.regions, crsDef);
    }
  }
  const deepest = Math.max(...zoneModels.map((m) => m.layers[m.layers.length - 1].bottomKm));
  const seed = summary.monteCarlo?.seed ?? request.seed ?? 0;
  let heatFlowRealizations: { values: Float32Array; source: string } | undefined;
  const stored = summary.monteCarlo?.heatFlowSimulation;
  if (stored !== undefined && rec.sitesBody !== null) {
    const iopt = interpolationOptionsSchema.parse(request.interpolation);
    const { points } = pointsFromGeoJson(JSON.parse(rec.sitesBody), 'heatFlowMWm2', { source: `data set of run ${runId}` });
    const faults = rec.faultsBody === null ? null : faultLines(parseFeatureCollection('faults', JSON.parse(rec.faultsBody)).collection.features);
    const drift = rec.driftBody ? await driftGridFromBytes(gridDatasetBytes(rec.driftBody), `grid data set ${runTrend(iopt.trend).driftDataset}`) : null;
    const sim = simulateRunHeatFlow(points, { ...runSimulationOptions(iopt, stored.trend, drift), faults }, heatFlow, crsDef, N, seed);
    // Realization 0 does not depend on the count: the same sum proves the same fields.
    if (stored.checksum !== undefined && !(Math.abs(sim.checksum - stored.checksum) <= 1e-9 * Math.max(1, Math.abs(stored.checksum)))) {
      throw new InputError(
        `run ${runId}: its heat-flow realizations cannot be reproduced by this version (checksum ${sim.checksum} against the run's ${stored.checksum}); run it again`,
        [{ field: 'runId', problem: 'realizations not reproducible' }],
        'run_not_reproducible',
      );
    }
    heatFlowRealizations = { values: sim.values, source: sim.source };
  }
  return realizationsFromGrids({
    heatFlow,
    heatFlowSd: rec.heatFlowSd,
    zoneModels,
    zones,
    maxDepthKm: summary.maxDepthKm ?? request.maxDepthKm ?? deepest,
    realizations: N,
    seed,
    heatFlowErrorCorrelation: summary.monteCarlo?.heatFlowErrorCorrelation ?? request.heatFlowErrorCorrelation ?? 'full',
    heatFlowRealizations,
  });
}
