/**
 * The heat-flow realizations of a run: conditional simulations (shared/interp/simulateField.ts) of the sites' heat
 * flow on the run's grid, one field per realization, spatially coherent and honouring the data. The run's Monte
 * Carlo (percentile maps), its spread and probability layers and heat in place over the run all read these same
 * fields (server/runs/realizations.ts), so a regional total's spread is the spread of the simulated regional field,
 * not one shift of every cell nor independent cells.
 *
 * Deterministic in (sites, interpolation options, grid, realizations, seed): a run's realizations are simulated once
 * while it runs and again, value for value, when a later reader asks for them (the run stores a checksum of them to
 * prove it). The simulation draws from its own streams, keyed by seed + 2³² (run seeds are below 2³²), so the
 * heat-flow fields are independent of the model-parameter draws, which use streams keyed by the seed itself.
 */
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { simulateOnGrid, type SimulationOptions } from '../../shared/interp/simulateField.ts';
import type { HeatFlowCentralValues, HeatFlowSimulationSummary } from '../../shared/schema/run.ts';
import type { Anisotropy, VariogramModel, VariogramModelName } from '../../shared/interp/variogram.ts';
import type { DriftKind } from '../../shared/interp/drift.ts';
import type { ExternalDriftGrid } from '../../shared/interp/externalDrift.ts';
import type { DirectionChoice } from '../../shared/interp/directional-variogram.ts';
import { runTrend } from '../../shared/schema/interp.ts';

/** Offset between a run's seed and the key of its heat-flow simulation streams. */
export const SIMULATION_STREAM_OFFSET = 2 ** 32;
/** Largest realizations × cells of simulated heat flow held by one run (Float32: 600 MiB). */
export const MAX_SIMULATED_VALUES = 150_000_000;

/** The warning of a request that still names heatFlowErrorCorrelation. */
export const HEAT_FLOW_CORRELATION_DEPRECATED =
  'heatFlowErrorCorrelation is deprecated and no longer used: a run\'s heat-flow realizations are conditional simulations of the sites (spatially coherent, honouring the data), which replace both "full" (one shift of every cell) and "independent" (unrelated cells); drop the field from the request';

/** The interpolation options of a run that the simulation follows. */
export interface RunSimulationOptions {
  variogram?: 'auto' | VariogramModelName | VariogramModel;
  anisotropy?: Anisotropy | 'auto' | null;
  /** With anisotropy 'auto': the direction classes of the directional semivariograms it is estimated from. */
  directions?: DirectionChoice;
  /**
   * Drift of the mean (the kriged map's): the residual is simulated and conditioned by universal kriging; 'external'
   * (or a candidate of 'auto') needs `externalDrift`.
   */
  trend?: DriftKind | 'auto';
  /** The covariate grid of an external drift (shared/interp/externalDrift.ts), or null. */
  externalDrift?: ExternalDriftGrid | null;
  neighbors?: number | 'all';
  lagKm?: number;
  maxLagKm?: number;
  measurementError?: boolean;
  /** Declustering of the normal-score transform's histogram (default none). */
  declustering?: SimulationOptions['declustering'];
  /**
   * Simulate normal scores and back-transform, or the values as Gaussian. Default: 'none' for a fixed variogram
   * (given in heat-flow units), else 'normal-score' (runs always use the default; the CLI may choose).
   */
  transform?: 'normal-score' | 'none';
  /** Fault traces (lines of [lon, lat] degrees): barriers between the sites and the cells they condition, as in kriging. */
  faults?: number[][][] | null;
}

/**
 * The options the kriged heat-flow map and the simulation conditioned like it share, picked from either's options:
 * the same anisotropy (and its direction classes), drift (and its covariate grid), neighbours, lags and measurement errors for both.
 */
export function sharedKrigingOptions(o: RunSimulationOptions) {
  return {
    anisotropy: o.anisotropy,
    directions: o.directions,
    trend: o.trend,
    externalDrift: o.externalDrift,
    neighbors: o.neighbors,
    lagKm: o.lagKm,
    maxLagKm: o.maxLagKm,
    measurementError: o.measurementError,
  };
}

/**
 * Refuses a run request whose interpolation declusters with a fixed variogram: a fixed variogram is in heat-flow
 * units, so the simulation has no normal-score transform, and declustering weights only that transform's histogram.
 */
export function requireDeclusterWithTransform(iopt: { variogram?: unknown; decluster?: 'none' | 'auto' | number }): void {
  if (iopt.decluster === undefined || iopt.decluster === 'none' || typeof iopt.variogram !== 'object' || iopt.variogram === null) return;
  throw new InputError(
    `interpolation.decluster ${String(iopt.decluster)} cannot apply: declustering weights the histogram of the simulation's normal-score transform, and a run with a fixed variogram (heat-flow units) simulates the values without that transform`,
    [{ field: 'interpolation.decluster', problem: "drop it, or use variogram 'auto' or a model name so the realizations go through normal scores" }],
    'invalid_run',
  );
}

/**
 * The simulation's drift: with `trend: 'auto'`, the drift the deterministic kriging chose (`chosen`, its report's
 * trend kind), so the kriged map and the realizations carry one drift rather than choosing separately.
 */
export function followKrigedTrend(trend: RunSimulationOptions['trend'], chosen: DriftKind | undefined): RunSimulationOptions['trend'] {
  return trend === 'auto' && chosen !== undefined ? chosen : trend;
}

/**
 * The run's interpolation options that its heat-flow simulation follows (IDW runs: the simulation's defaults);
 * `chosenTrend` is the drift the run's kriging chose (see followKrigedTrend), `externalDrift` the covariate grid of
 * a trend naming a grid data set.
 */
export function runSimulationOptions(
  iopt: {
    variogram?: RunSimulationOptions['variogram'];
    anisotropy?: RunSimulationOptions['anisotropy'];
    directions?: DirectionChoice;
    /** A run's interpolation.trend (shared/schema/interp.ts `runTrend`: a grid data set's form is an external drift). */
    trend?: string;
    /** none, auto or a cell side in km (the run request's interpolation.decluster). */
    decluster?: 'none' | 'auto' | number;
    neighbors?: number | 'all';
    lagKm?: number;
    maxLagKm?: number;
    measurementError?: boolean;
    method: string;
  },
  chosenTrend?: DriftKind,
  externalDrift: ExternalDriftGrid | null = null,
): RunSimulationOptions {
  return {
    variogram: iopt.variogram,
    anisotropy: iopt.anisotropy ?? null,
    directions: iopt.directions,
    trend: iopt.method === 'kriging' ? followKrigedTrend(runTrend(iopt.trend).trend, chosenTrend) : undefined,
    externalDrift: iopt.method === 'kriging' ? externalDrift : null,
    declustering: typeof iopt.decluster === 'number' ? { cellKm: iopt.decluster } : iopt.decluster,
    neighbors: iopt.method === 'kriging' ? iopt.neighbors : undefined,
    lagKm: iopt.lagKm,
    maxLagKm: iopt.maxLagKm,
    measurementError: iopt.measurementError,
  };
}

export interface HeatFlowSimulation {
  /** Realization-major values (realization r, cell c at r·cells + c), mW/m²; NaN where the run's grid has no data. */
  values: Float32Array;
  count: number;
  seed: number;
  /** Sum of realization 0 over its cells with data (proves a later re-simulation gives the same fields). */
  checksum: number;
  /** What the summary reports: method, variogram (of the normal scores), transform, sampler. */
  report: Omit<HeatFlowSimulationSummary, keyof HeatFlowCentralValues>;
  /** Where the draws come from, in words. */
  source: string;
  warnings: string[];
}

/**
 * Simulates `count` heat-flow fields on `grid` (its CRS's proj4 definition `crsDef`), conditioned on the sites.
 * Cells where `grid` has no data (masked, beyond the search distance) stay NaN. The one path from sites to heat-flow
 * realizations: web runs (their percentile maps, spread, probability and heat-in-place jobs) and the CLI verbs
 * (`heat-in-place --points`, `isotherms --points`) all call it, so the same sites, options, grid and seed give the
 * same fields value for value.
 */
export function simulateRunHeatFlow(
  points: PointData,
  o: RunSimulationOptions,
  grid: Grid<Float32Array>,
  crsDef: string,
  count: number,
  seed: number,
): HeatFlowSimulation {
  const cells = grid.width * grid.height;
  if (count * cells > MAX_SIMULATED_VALUES) {
    throw new InputError(
      `${count} realizations × ${cells.toLocaleString('en')} cells = ${(count * cells).toLocaleString('en')} simulated heat-flow values, above the run's memory budget of ${MAX_SIMULATED_VALUES.toLocaleString('en')} (${Math.round((MAX_SIMULATED_VALUES * 4) / 2 ** 20)} MiB)`,
      [{ field: 'realizations', problem: `at most ${Math.floor(MAX_SIMULATED_VALUES / cells)} realizations on this grid; or use larger cells` }],
      'too_many_values',
    );
  }
  // A fixed variogram object is in heat-flow units: simulate the values themselves (no normal-score transform).
  const fixed = typeof o.variogram === 'object';
  const transform = o.transform ?? (fixed ? 'none' : 'normal-score');
  const opts: SimulationOptions = {
    realizations: count,
    seed: seed + SIMULATION_STREAM_OFFSET,
    variogram: o.variogram ?? 'auto',
    anisotropy: o.anisotropy ?? null,
    directions: o.directions,
    trend: o.trend ?? 'none',
    externalDrift: o.externalDrift ?? null,
    transform,
    declustering: transform === 'normal-score' ? (o.declustering ?? 'none') : 'none',
    neighbors: o.neighbors ?? 16,
    lagKm: o.lagKm,
    maxLagKm: o.maxLagKm,
    crossValidation: false,
    measurementError: o.measurementError,
    faults: o.faults ?? null,
    maxValues: MAX_SIMULATED_VALUES,
    units: 'mW/m²',
  };
  const r = simulateOnGrid(points, opts, grid, crsDef);
  const values = r.values;
  const q = grid.values;
  for (let c = 0; c < cells; c++) if (!(q[c] === q[c])) for (let k = 0; k < count; k++) values[k * cells + c] = NaN;
  let checksum = 0;
  for (let c = 0; c < cells; c++) {
    const v = values[c];
    if (v === v) checksum += v;
  }
  const v = r.variogram;
  const space = r.transform.kind === 'normal-score' ? 'normal scores' : 'mW/m²';
  const barriers = (o.faults ?? []).length > 0;
  const report: HeatFlowSimulation['report'] = {
    method: `conditional simulation: ${r.sampler.method}${r.transform.kind === 'normal-score' ? ", through a normal-score transform of the sites' heat flow and its back-transform" : ''}${barriers ? "; a site conditions no cell across a fault (the kriged map's barriers)" : ''}`,
    variogram: { model: v.model, nugget: v.nugget, partialSill: v.partialSill, rangeKm: v.rangeKm, anisotropy: v.anisotropy, source: v.source, space },
    transform: r.transform.kind,
    sampler: r.sampler.kind,
    neighbors: r.conditioning.neighbors,
    streams: `seed + ${SIMULATION_STREAM_OFFSET}`,
    faultBarriers: barriers,
    trend: v.trend?.kind ?? 'none',
    checksum,
  };
  const dc = r.transform.declustering;
  if (dc !== undefined)
    report.declustering = {
      cellKm: dc.cellKm,
      selectedBy: dc.selectedBy,
      naiveMean: dc.naiveMean,
      declusteredMean: dc.declusteredMean,
      naiveSd: dc.naiveSd,
      declusteredSd: dc.declusteredSd,
    };
  const source = `heat flow from ${count} conditional simulations of the sites (${r.sampler.kind === 'lattice' ? 'circulant embedding' : 'Cholesky'} conditioned by ${(v.trend?.kind ?? 'none') === 'none' ? 'ordinary' : v.trend!.kind === 'external' ? `universal (external drift: ${v.trend!.ols?.covariate?.name ?? 'covariate grid'})` : `universal (${v.trend!.kind} drift)`} kriging, ${v.model} variogram of the ${space}, range ${v.rangeKm.toPrecision(4)} km${barriers ? ', faults as barriers' : ''})`;
  const warnings = [...r.warnings];
  if (transform === 'none' && o.declustering !== undefined && o.declustering !== 'none')
    warnings.push('declustering weights the normal-score histogram; this simulation has no normal-score transform (a fixed variogram), so it was not used');
  return { values, count, seed, checksum, report, source, warnings };
}
