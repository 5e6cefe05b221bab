import { InputError } from '../errors.ts';
import type { GridSpec } from '../grid/grid.ts';
import { converter, lonLatToLocalKm, rowCentresLocalKm, type OutputGridOptions } from './projection.ts';
import { prepareInterpolation, type PointData, type VariogramReport, type PreparedInterpolation } from './interpolate.ts';
import type { CrossValidation } from './crossValidation.ts';
import { NormalScoreTransform } from './normalScore.ts';
import { declusterLonLat, type DeclusteringReport } from './declustering.ts';
import { createConditionalSimulator, type ConditionalSimulator } from './simulation.ts';
import type { Anisotropy, VariogramModel, VariogramModelName } from './variogram.ts';
import type { DriftKind } from './drift.ts';
import type { DirectionChoice } from './directional-variogram.ts';
import type { ExternalDriftGrid } from './externalDrift.ts';
import { targetCovariate } from './interpolate.ts';
import { checkTargetCoordinates } from './pointPrep.ts';

/**
 * Conditional simulation of a point field, the library entry points behind `subtherm simulate`: the values are
 * normal-score transformed (optional), the variogram of the (transformed) values is fitted or given, the
 * realizations are simulated in Gaussian space (simulation.ts) and back-transformed. Targets are points (lon/lat)
 * or the cells of an output grid. Realizations are stored realization-major as Float32 (R × targets).
 */

export interface SimulationOptions {
  /** Number of realizations (1 .. 10,000). */
  realizations: number;
  /** Integer seed; realization r draws from stream (seed, r). */
  seed: number;
  variogram?: 'auto' | VariogramModelName | VariogramModel;
  /** Given, none (null), or 'auto': estimated on the (normal-scored) values and used when it cross-validates better. */
  anisotropy?: Anisotropy | 'auto' | null;
  /** With anisotropy 'auto': the direction classes it is estimated from (as in interpolation). */
  directions?: DirectionChoice;
  /**
   * Drift of the mean (as in interpolation, trendSelect.ts): 'none' (default), 'linear', 'quadratic' or 'auto'. The
   * variogram is fitted on the residuals of a least-squares trend, the residual is simulated and the realizations
   * are conditioned by universal kriging, which adds the drift back. With the normal-score transform the drift is
   * one of the normal scores (the back-transform is monotone, so a trend in the scores is a trend in the values).
   */
  trend?: DriftKind | 'auto';
  /** The covariate grid of an external drift (trend 'external', or a candidate of 'auto'). */
  externalDrift?: ExternalDriftGrid | null;
  /** 'normal-score' (default) or 'none' (simulate the values as Gaussian). */
  transform?: 'normal-score' | 'none';
  /**
   * Declustering weights for the normal-score transform's histogram (declustering.ts): 'none' (default, equal
   * weights), 'auto' (cell size of the minimum declustered mean) or a given cell size in km.
   */
  declustering?: 'none' | 'auto' | { cellKm: number };
  /** Conditioning neighbours per target, or 'all'. Default 16. */
  neighbors?: number | 'all';
  lagKm?: number;
  maxLagKm?: number;
  grid?: OutputGridOptions;
  /** Largest realizations × targets held in memory (Float32 values). Default 150,000,000 (600 MB). */
  maxValues?: number;
  maxCells?: number;
  /** Leave-one-out cross-validation of the Gaussian-space kriging (default true). */
  crossValidation?: boolean;
  /** Use the points' errorSd as measurement errors (realizations are of the true field). */
  measurementError?: boolean;
  /** Fault traces as lines of [lon, lat] degrees: barriers between the data and the targets they condition. */
  faults?: number[][][] | null;
  /** Unconditional sampler; default: exact for points (up to 3000 sites), lattice for grids. */
  sampler?: 'auto' | 'cholesky' | 'lattice';
  units?: string;
}

export interface TransformReport {
  kind: 'normal-score' | 'none';
  /** Data values (after merging coincident points) and their scores: the back-transform table. */
  points?: number;
  lowTail?: number;
  highTail?: number;
  method?: string;
  /** The declustering weights of the histogram (absent: equal weights). */
  declustering?: DeclusteringReport;
}

export interface SimulationResult {
  /** Realization-major values, realizations × targets (NaN: no data). */
  values: Float32Array;
  realizations: number;
  targets: number;
  variogram: VariogramReport;
  transform: TransformReport;
  sampler: { kind: 'cholesky' | 'lattice'; method: string } & Record<string, unknown>;
  crossValidation: CrossValidation | null;
  /** Kriging weights shared by all realizations. */
  conditioning: { neighbors: number | 'all'; weights: number };
  warnings: string[];
  timingsMs: Record<string, number>;
  units: string;
}

export const MAX_REALIZATIONS = 10_000;
const now = () => (typeof performance !== 'undefined' ? performance.now() : Date.now());

const SAMPLER_METHODS = {
  cholesky: 'LU (Cholesky) unconditional simulation (Davis 1987)',
  lattice: 'circulant-embedding FFT unconditional simulation (Wood & Chan 1994; Dietrich & Newsam 1997)',
} as const;

/** The method in words: the sampler and the conditioning kriging (ordinary, or universal with the drift). */
function samplerMethod(kind: 'cholesky' | 'lattice', trend: DriftKind): string {
  const kriging =
    trend === 'none'
      ? 'ordinary kriging'
      : `${trend === 'external' ? 'kriging with an external drift' : `universal kriging with a ${trend} drift`} (Chilès & Delfiner 2012, §7.3.1)`;
  return `${SAMPLER_METHODS[kind]}, conditioned by ${kriging} of the residuals (Journel & Huijbregts 1978)`;
}

function checkCounts(opts: SimulationOptions): void {
  const R = opts.realizations;
  if (!(Number.isInteger(R) && R >= 1 && R <= MAX_REALIZATIONS))
    throw new InputError(
      `--realizations must be an integer 1..${MAX_REALIZATIONS}, got ${R}`,
      [{ field: 'realizations', problem: `expected 1..${MAX_REALIZATIONS}` }],
      'bad_option',
    );
  if (!(Number.isSafeInteger(opts.seed) && opts.seed >= 0))
    throw new InputError(`--seed must be a non-negative integer, got ${opts.seed}`, [{ field: 'seed', problem: 'expected an integer ≥ 0' }], 'bad_option');
  const t = opts.transform ?? 'normal-score';
  if (t !== 'normal-score' && t !== 'none')
    throw new InputError(
      `--transform must be normal-score or none, got ${String(t)}`,
      [{ field: 'transform', problem: 'expected normal-score or none' }],
      'bad_option',
    );
}

/** Transform and prepare (variogram of the Gaussian values, cross-validation, plan). */
function prepare(
  points: PointData,
  opts: SimulationOptions,
  needGrid: boolean,
): { prep: PreparedInterpolation; ns: NormalScoreTransform | null; report: TransformReport } {
  checkCounts(opts);
  let ns: NormalScoreTransform | null = null;
  let gaussPoints = points;
  let report: TransformReport = { kind: 'none' };
  if ((opts.transform ?? 'normal-score') === 'normal-score') {
    const v = points.values;
    for (let i = 0; i < v.length; i++)
      if (!Number.isFinite(v[i]))
        throw new InputError(
          `point ${points.ids[i]} has a value that is not a finite number`,
          [{ feature: points.ids[i], field: 'value', problem: `must be a finite number, got ${v[i]}` }],
          'invalid_points',
        );
    const dc = declusterLonLat(points, opts.declustering ?? 'none');
    try {
      ns = new NormalScoreTransform(v, dc?.weights ?? null);
    } catch (e) {
      throw new InputError(
        `normal-score transform: ${(e as Error).message}`,
        [{ field: 'values', problem: 'need at least two distinct values; or use --transform none' }],
        'degenerate_values',
      );
    }
    const scores = Float64Array.from(v, (x) => ns!.forward(x));
    // Errors in score units through the transform's local slope: (score(v + e) − score(v − e)) / 2.
    const es = points.errorSd;
    const errorSd =
      es === undefined || es === null
        ? es
        : Float64Array.from(v, (x, i) => {
            const e = es[i];
            return Number.isFinite(e) ? (ns!.forward(x + e) - ns!.forward(x - e)) / 2 : NaN;
          });
    gaussPoints = { ...points, values: scores, errorSd };
    report = {
      kind: 'normal-score',
      points: ns.values.length,
      lowTail: ns.lowTail,
      highTail: ns.highTail,
      method:
        'normal scores at mid-rank probabilities, linear back-transform with linear tails in probability to the data range ± 10 % (Deutsch & Journel 1998, GSLIB nscore/backtr)',
    };
    if (dc !== null) report.declustering = dc.report;
  }
  const prep = prepareInterpolation(
    gaussPoints,
    {
      method: 'kriging',
      neighbors: opts.neighbors ?? 16,
      variogram: opts.variogram ?? 'auto',
      anisotropy: opts.anisotropy ?? null,
      directions: opts.directions,
      trend: opts.trend ?? 'none',
      externalDrift: opts.externalDrift ?? null,
      lagKm: opts.lagKm,
      maxLagKm: opts.maxLagKm,
      grid: opts.grid,
      sd: false,
      crossValidation: opts.crossValidation ?? true,
      maxCells: opts.maxCells,
      units: ns === null ? opts.units : 'normal score',
      measurementError: opts.measurementError,
      faults: opts.faults ?? null,
    },
    needGrid,
  );
  return { prep, ns, report };
}

function runAll(
  prep: PreparedInterpolation,
  ns: NormalScoreTransform | null,
  opts: SimulationOptions,
  tx: Float64Array,
  ty: Float64Array,
  sampler: 'auto' | 'cholesky' | 'lattice',
  latticeKm: number | undefined,
  report: TransformReport,
): SimulationResult {
  const R = opts.realizations,
    T = tx.length;
  const maxValues = opts.maxValues ?? 150_000_000;
  if (R * T > maxValues) {
    throw new InputError(
      `${R} realizations × ${T.toLocaleString('en')} targets = ${(R * T).toLocaleString('en')} values, above the memory budget of ${maxValues.toLocaleString('en')} values (${Math.round((maxValues * 4) / 2 ** 20)} MiB)`,
      [{ field: 'realizations', problem: 'use fewer realizations, a coarser grid or a smaller bbox' }],
      'too_many_values',
    );
  }
  const plan = prep.plan;
  const t0 = now();
  // With the plan's own output grid, the targets are its cells and the plan has already warned about them.
  const driftWarnings: string[] = [];
  const atTargets = targetCovariate(opts, prep, tx, ty, [], plan.covariate?.atCells ? undefined : driftWarnings);
  let sim: ConditionalSimulator;
  try {
    sim = createConditionalSimulator({
      x: plan.x,
      y: plan.y,
      z: plan.z,
      tx,
      ty,
      model: plan.variogram!,
      anisotropy: plan.anisotropy,
      neighbors: plan.neighbors,
      maxGlobal: plan.maxGlobal,
      sampler,
      latticeKm,
      errorVariance: plan.errorVariance,
      faults: plan.faults,
      trend: plan.trend,
      covariate: atTargets === null ? null : { atData: plan.covariate!.atData, atTargets },
    });
  } catch (e) {
    if (e instanceof RangeError)
      throw new InputError(`simulation cannot be set up: ${e.message}`, [{ field: 'variogram', problem: e.message }], 'simulation_setup');
    throw e;
  }
  const tSetup = now() - t0;
  const values = new Float32Array(R * T);
  const t1 = now();
  sim.run(opts.seed, 0, R, (r, v) => {
    const base = r * T;
    if (ns === null) for (let t = 0; t < T; t++) values[base + t] = v[t];
    else
      for (let t = 0; t < T; t++) {
        const g = v[t];
        values[base + t] = g === g ? ns.backward(g) : NaN;
      }
  });
  const neighbors = plan.neighbors === Infinity ? 'all' : plan.neighbors;
  return {
    values,
    realizations: R,
    targets: T,
    variogram: prep.variogram!,
    transform: report,
    sampler: { kind: sim.sampler, method: samplerMethod(sim.sampler, plan.trend ?? 'none'), ...sim.samplerInfo },
    crossValidation: prep.crossValidation,
    conditioning: { neighbors, weights: sim.weights.ids.length },
    warnings: [...prep.warnings, ...driftWarnings, ...sim.warnings],
    timingsMs: { ...prep.timingsMs, setup: tSetup, realizations: now() - t1 },
    units: opts.units ?? '',
  };
}

/** Conditional realizations at target points (lon/lat degrees). */
export function simulateAtPoints(
  points: PointData,
  opts: SimulationOptions,
  targets: { ids: string[]; lon: ArrayLike<number>; lat: ArrayLike<number> },
): SimulationResult {
  checkTargetCoordinates(targets);
  const { prep, ns, report } = prepare(points, opts, false);
  const T = targets.ids.length;
  const tx = new Float64Array(T),
    ty = new Float64Array(T);
  lonLatToLocalKm(prep.plan.projection, targets.lon, targets.lat, tx, ty);
  return runAll(prep, ns, opts, tx, ty, opts.sampler ?? 'auto', undefined, report);
}

/** Conditional realizations on the cells of an output grid (row-major, north row first). */
export function simulateGrid(points: PointData, opts: SimulationOptions): SimulationResult & { grid: GridSpec; cellKm: number } {
  const { prep, ns, report } = prepare(points, opts, true);
  const g = prep.plan.grid;
  const res = runOnCells(prep, ns, opts, report, g, prep.plan.gridCrsDef, prep.cellKm > 0 ? prep.cellKm : Infinity);
  return { ...res, grid: g, cellKm: prep.cellKm };
}

/**
 * Conditional realizations on the cells of a given grid (e.g. a run's heat-flow grid) in the CRS whose proj4
 * definition is `gridCrsDef` (row-major, north row first); the grid options of `opts` are ignored.
 */
export function simulateOnGrid(points: PointData, opts: SimulationOptions, grid: GridSpec, gridCrsDef: string): SimulationResult {
  const { grid: _ignored, ...rest } = opts;
  const { prep, ns, report } = prepare(points, rest, false);
  return runOnCells(prep, ns, rest, report, grid, gridCrsDef, Infinity);
}

/** Targets at the cell centres of `g` (local km of the data's projection), then the realizations. */
function runOnCells(
  prep: PreparedInterpolation,
  ns: NormalScoreTransform | null,
  opts: SimulationOptions,
  report: TransformReport,
  g: GridSpec,
  gridCrsDef: string,
  cellKm: number,
): SimulationResult {
  const W = g.width,
    H = g.height,
    T = W * H;
  if (opts.realizations * T > (opts.maxValues ?? 150_000_000)) runAll(prep, ns, opts, new Float64Array(T), new Float64Array(T), 'lattice', 1, report); // throws the budget error
  const tx = new Float64Array(T),
    ty = new Float64Array(T);
  const toLocal = converter(gridCrsDef, prep.plan.projection.def);
  const rx = new Float64Array(W),
    ry = new Float64Array(W);
  for (let r = 0; r < H; r++) {
    rowCentresLocalKm(g, toLocal, r, rx, ry);
    tx.set(rx, r * W);
    ty.set(ry, r * W);
  }
  // Lattice spacing: the smallest distance between neighbouring cell centres at the grid's centre (km).
  const rc = Math.floor(H / 2),
    cc = Math.floor(W / 2),
    i0 = rc * W + cc;
  const sx = W > 1 ? Math.hypot(tx[i0 + (cc + 1 < W ? 1 : -1)] - tx[i0], ty[i0 + (cc + 1 < W ? 1 : -1)] - ty[i0]) : Infinity;
  const sy = H > 1 ? Math.hypot(tx[i0 + (rc + 1 < H ? W : -W)] - tx[i0], ty[i0 + (rc + 1 < H ? W : -W)] - ty[i0]) : Infinity;
  const h = Math.min(sx, sy, cellKm);
  return runAll(prep, ns, opts, tx, ty, opts.sampler ?? 'lattice', Number.isFinite(h) ? h : undefined, report);
}
