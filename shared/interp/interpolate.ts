import { InputError } from '../errors.ts';
import type { Grid } from '../grid/grid.ts';
import { gridStats } from '../grid/grid.ts';
import { groundCellWarning } from '../geodesy/ground-cell.ts';
import { buildOutputGrid, converter, localProjectionFor, lonLatToLocalKm, WGS84_DEF, type LocalProjection } from './projection.ts';
import { createGridRuntime, computeRows, type GridPlan, type RowStats } from './gridKernel.ts';
import { crossValidateIdw, type CrossValidation } from './crossValidation.ts';
import { checkTargetCoordinates, faultsToLocalKm, mergeCoincident, requirePoints, searchSettings, validatePoints } from './pointPrep.ts';
import { prepareKrigingPlan } from './trendSelect.ts';
import { covariateAtCells, covariateAtLocal, extrapolationWarning, requireCovered, requireVarying, type ExternalCovariate } from './externalDrift.ts';
import type { InterpolationOptions, PointData, PreparedInterpolation, VariogramReport } from './interpTypes.ts';

export { DEFAULT_QUALITY_WEIGHTS } from './interpTypes.ts';
export type { InterpolationOptions, PointData, PreparedInterpolation, TrendReport, VariogramReport } from './interpTypes.ts';

/**
 * The library entry points of the interpolation engine: `prepareInterpolation` (validate, project, merge
 * coincident points, fit the variogram and the drift, cross-validate, and build a `GridPlan`), `interpolateGrid`
 * (the whole grid in this thread) and `predictAtPoints`. Coordinates in: WGS84 lon/lat degrees; distances: km.
 */

const now = () => (typeof performance !== 'undefined' ? performance.now() : Date.now());
let planCounter = 0;

/** The output grid of a plan (checked against the cell limit when a grid is wanted) and the region in its CRS. */
function planGrid(points: PointData, opts: InterpolationOptions, needGrid: boolean) {
  const gopts = { ...(opts.grid ?? {}) };
  const spec = buildOutputGrid(points.lon, points.lat, gopts);
  const cells = spec.width * spec.height;
  const maxCells = opts.maxCells ?? 25_000_000;
  if (needGrid && cells > maxCells) {
    throw new InputError(
      `the grid would have ${cells.toLocaleString('en')} cells (${spec.width} × ${spec.height}), above the limit of ${maxCells.toLocaleString('en')}`,
      [{ field: 'cellKm', problem: 'use a larger cell, a smaller bbox or --size' }],
      'grid_too_large',
    );
  }
  const gridCrsDef = gopts.crsDef ?? WGS84_DEF;
  let region: number[][][] | null = null;
  if (opts.region && opts.region.length > 0) {
    const c = gridCrsDef === WGS84_DEF ? null : converter(WGS84_DEF, gridCrsDef);
    region = opts.region.map((ring) => ring.map((p) => (c === null ? [p[0], p[1]] : c.forward([p[0], p[1]]))));
  }
  const { cellKm, groundCellKmRange, ...gridSpec } = spec;
  return { cellKm, groundCellKmRange, gridSpec, gridCrsDef, region };
}

/** Projects the points into the local km projection and merges coincident ones. */
function projectAndMerge(points: PointData, opts: InterpolationOptions) {
  const n0 = points.ids.length;
  const projection: LocalProjection = localProjectionFor(points.lon, points.lat);
  const px = new Float64Array(n0),
    py = new Float64Array(n0);
  lonLatToLocalKm(projection, points.lon, points.lat, px, py);
  const merged = mergeCoincident(points, px, py, opts);
  requirePoints(opts.method, merged.ids.length, ' after merging coincident points');
  return { projection, merged };
}

/** An external drift's covariate at the merged points and (with a grid) at the output cells, checked for coverage. */
function externalCovariate(
  opts: InterpolationOptions,
  projection: LocalProjection,
  merged: { ids: string[]; x: Float64Array; y: Float64Array },
  grid: { spec: GridPlan['grid']; crsDef: string } | null,
): ExternalCovariate | null {
  const d = opts.externalDrift;
  if (!d || opts.method !== 'kriging') return null;
  const atData = covariateAtLocal(d, projection, merged.x, merged.y);
  requireCovered(d, atData, 'points', (i) => `point ${merged.ids[i]}`);
  requireVarying(d, atData);
  let atCells: Float64Array | null = null;
  if (grid !== null) {
    atCells = covariateAtCells(d, grid.spec, grid.crsDef);
    const W = grid.spec.width;
    requireCovered(d, atCells, 'cells of the output grid', (i) => `row ${Math.floor(i / W)}, column ${i % W}`);
  }
  return { name: d.name, atData, atCells };
}

/** Validates and projects the points, merges coincident ones, and builds the plan. */
export function prepareInterpolation(points: PointData, opts: InterpolationOptions, needGrid = true): PreparedInterpolation {
  const t0 = now();
  const method = opts.method;
  if (method !== 'idw' && method !== 'kriging')
    throw new InputError(`unknown method "${String(method)}"`, [{ field: 'method', problem: 'expected idw or kriging' }], 'bad_option');
  validatePoints(points, method);
  const { projection, merged } = projectAndMerge(points, opts);
  const warnings = [...merged.warnings];
  const { ids, x, y, z } = merged;
  const search = searchSettings(opts, ids.length);
  const faults = faultsToLocalKm(opts.faults, projection);
  const { cellKm, groundCellKmRange, gridSpec, gridCrsDef, region } = planGrid(points, opts, needGrid);
  const cellWarning = needGrid ? groundCellWarning(cellKm, groundCellKmRange, gridSpec.crs) : null;
  if (cellWarning !== null) warnings.push(cellWarning);
  const timingsMs: Record<string, number> = { prepare: now() - t0 };
  const basePlan: GridPlan = {
    key: `plan-${++planCounter}-${ids.length}-${Date.now()}`,
    method,
    x,
    y,
    z,
    pointWeights: merged.pointWeights,
    errorVariance: merged.errorVariance,
    projection,
    grid: gridSpec,
    gridCrsDef,
    ...search,
    variogram: null,
    anisotropy: opts.anisotropy === 'auto' ? null : (opts.anisotropy ?? null),
    faults,
    maxDistanceKm: opts.maxDistanceKm ?? null,
    region,
    withSd: method === 'kriging' && (opts.sd ?? true),
    covariate: externalCovariate(opts, projection, merged, needGrid ? { spec: gridSpec, crsDef: gridCrsDef } : null),
  };
  const units = opts.units ?? '';
  const wantCv = opts.crossValidation ?? true;

  if (method === 'idw') {
    if (opts.sd === true) warnings.push('IDW has no error model: no standard-deviation grid');
    if (opts.anisotropy) warnings.push('anisotropy applies to kriging only; IDW ignored it');
    if (opts.trend !== undefined && opts.trend !== 'none') warnings.push('a trend applies to kriging only; IDW ignored it');
    const t1 = now();
    const cv = wantCv
      ? crossValidateIdw(ids, x, y, z, createGridRuntime({ ...basePlan, grid: { ...gridSpec, width: 1, height: 1 }, region: null, maxDistanceKm: null }).idw!)
      : null;
    timingsMs.crossValidation = now() - t1;
    return { plan: basePlan, cellKm, groundCellKmRange, ids, variogram: null, crossValidation: cv, warnings, timingsMs, units };
  }

  const choice = prepareKrigingPlan({ basePlan, ids, errorVariance: merged.errorVariance, opts, wantCv });
  timingsMs.variogram = choice.variogramMs;
  timingsMs.crossValidation = choice.cvMs;
  warnings.push(...choice.warnings);
  const cov = choice.plan.trend === 'external' ? choice.plan.covariate : null;
  const extrapolated = cov?.atCells ? extrapolationWarning(opts.externalDrift!, cov.atData, cov.atCells, 'cells of the output grid') : null;
  if (extrapolated !== null) warnings.push(extrapolated);
  const cv: CrossValidation | null = choice.cv;
  if (cv !== null && cv.unpredicted > 0) warnings.push(`cross-validation: ${cv.unpredicted} point(s) had no usable neighbour and were left out`);
  const report: VariogramReport = choice.report;
  return { plan: choice.plan, cellKm, groundCellKmRange, ids, variogram: report, crossValidation: cv, warnings, timingsMs, units };
}

export interface InterpolationResult {
  grid: Grid<Float32Array>;
  sd?: Grid<Float32Array>;
  cellKm: number;
  /** Smallest and largest ground side of a cell over the grid, km. */
  groundCellKmRange: [number, number];
  variogram: VariogramReport | null;
  crossValidation: CrossValidation | null;
  warnings: string[];
  timingsMs: Record<string, number>;
  stats: RowStats;
}

/** Warnings from the grid pass's counters. */
export function rowStatsWarnings(s: RowStats): string[] {
  const w: string[] = [];
  if (s.regularized > 0) w.push(`${s.regularized} kriging system(s) were ill-conditioned and solved with a small diagonal regularization`);
  if (s.fallbacks > 0) w.push(`${s.fallbacks} cell(s) had a singular kriging system and fell back to inverse-distance weighting (sd = √sill)`);
  if (s.hidden > 0)
    w.push(
      `${s.hidden} cell(s) see no data across faults (every data point within reach lies behind a fault trace) and are no data: nothing on their side of the faults informs them`,
    );
  if (s.empty > s.hidden) w.push(`${s.empty - s.hidden} cell(s) had no data point within the search radius and are no data`);
  return w;
}

/** Wraps plan buffers into Grid objects (after `computeRows` filled them, here or in workers). */
export function finishGrid(prep: PreparedInterpolation, values: Float32Array, sd: Float32Array | null, stats: RowStats, gridMs: number): InterpolationResult {
  const g = prep.plan.grid;
  const grid: Grid<Float32Array> = { ...g, values, units: prep.units };
  const res: InterpolationResult = {
    grid,
    cellKm: prep.cellKm,
    groundCellKmRange: prep.groundCellKmRange,
    variogram: prep.variogram,
    crossValidation: prep.crossValidation,
    warnings: [...prep.warnings, ...rowStatsWarnings(stats)],
    timingsMs: { ...prep.timingsMs, grid: gridMs },
    stats,
  };
  if (sd !== null) res.sd = { ...g, values: sd, units: prep.units };
  return res;
}

/**
 * Interpolates a grid in this thread: IDW (Shepard 1968) or ordinary kriging with a fitted or fixed
 * semivariogram, kriging standard deviation, leave-one-out cross-validation, fault barriers and masks.
 */
export function interpolateGrid(points: PointData, opts: InterpolationOptions): InterpolationResult {
  const prep = prepareInterpolation(points, opts);
  const t = now();
  const g = prep.plan.grid;
  const values = new Float32Array(g.width * g.height);
  const sd = prep.plan.withSd ? new Float32Array(g.width * g.height) : null;
  const rt = createGridRuntime(prep.plan);
  const stats = computeRows(rt, 0, g.height, values, sd);
  return finishGrid(prep, values, sd, stats, now() - t);
}

/**
 * An external drift's covariate at targets (local km of the plan), checked for coverage; null without one. When
 * `warnings` is given, a warning is added if the drift is extrapolated at some targets.
 */
export function targetCovariate(
  opts: { externalDrift?: InterpolationOptions['externalDrift'] },
  prep: PreparedInterpolation,
  tx: Float64Array,
  ty: Float64Array,
  ids: string[],
  warnings?: string[],
): Float64Array | null {
  if (prep.plan.trend !== 'external' || !opts.externalDrift) return null;
  const s = covariateAtLocal(opts.externalDrift, prep.plan.projection, tx, ty);
  requireCovered(opts.externalDrift, s, 'targets', (i) => `target ${ids[i] ?? i}`);
  const w = warnings ? extrapolationWarning(opts.externalDrift, prep.plan.covariate!.atData, s, 'targets') : null;
  if (w !== null) warnings!.push(w);
  return s;
}

export interface PointPrediction {
  id: string;
  value: number | null;
  sd: number | null;
}

/**
 * Predicts at target points (lon/lat) with the same method, variogram and options as a grid would use.
 * Targets outside `maxDistanceKm` or without usable neighbours get null.
 */
export function predictAtPoints(
  points: PointData,
  opts: InterpolationOptions,
  targets: { ids: string[]; lon: ArrayLike<number>; lat: ArrayLike<number> },
): {
  predictions: PointPrediction[];
  variogram: VariogramReport | null;
  crossValidation: CrossValidation | null;
  warnings: string[];
  timingsMs: Record<string, number>;
} {
  checkTargetCoordinates(targets);
  const prep = prepareInterpolation(points, { ...opts, region: null }, false);
  const t = now();
  const rt = createGridRuntime({ ...prep.plan, grid: { ...prep.plan.grid, width: 1, height: 1 } });
  const nT = targets.ids.length;
  const tx = new Float64Array(nT),
    ty = new Float64Array(nT);
  lonLatToLocalKm(prep.plan.projection, targets.lon, targets.lat, tx, ty);
  const warnings = [...prep.warnings];
  const s0 = targetCovariate(opts, prep, tx, ty, targets.ids, warnings);
  const out = new Float64Array(2);
  const predictions: PointPrediction[] = [];
  const maxD = prep.plan.maxDistanceKm;
  for (let i = 0; i < nT; i++) {
    if (maxD !== null && rt.realIndex!.nearestDistance(tx[i], ty[i], maxD, rt.idBuf, rt.d2Buf) > maxD) {
      predictions.push({ id: targets.ids[i], value: null, sd: null });
      continue;
    }
    let v: number,
      s: number = NaN;
    if (rt.idw !== null) v = rt.idw.predict(tx[i], ty[i]);
    else {
      const m = rt.m;
      rt.kriging!.predict(m[0] * tx[i] + m[1] * ty[i], m[2] * tx[i] + m[3] * ty[i], out, prep.plan.withSd, -1, s0 === null ? NaN : s0[i]);
      v = out[0];
      s = out[1];
    }
    predictions.push({ id: targets.ids[i], value: Number.isFinite(v) ? v : null, sd: Number.isFinite(s) ? s : null });
  }
  const empty = predictions.filter((p) => p.value === null).length;
  if (empty > 0) warnings.push(`${empty} target(s) could not be predicted (no usable data point within reach): value null`);
  return { predictions, variogram: prep.variogram, crossValidation: prep.crossValidation, warnings, timingsMs: { ...prep.timingsMs, predict: now() - t } };
}

/** Summary of a grid for reports: size, bbox, cell size and value statistics. */
export function gridSummary(
  grid: Grid<Float32Array>,
  cellKm: number,
): {
  nx: number;
  ny: number;
  bbox: [number, number, number, number];
  crs: string;
  cellKm: number;
  min: number | null;
  max: number | null;
  mean: number | null;
  noData: number;
} {
  const s = gridStats(grid.values);
  return {
    nx: grid.width,
    ny: grid.height,
    bbox: [grid.west, grid.north - grid.height * grid.dy, grid.west + grid.width * grid.dx, grid.north],
    crs: grid.crs,
    cellKm,
    min: s.min,
    max: s.max,
    mean: s.mean,
    noData: s.noData,
  };
}
