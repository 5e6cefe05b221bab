import { InputError } from '../errors.ts';
import type { Grid } from '../grid/grid.ts';
import { gridStats } from '../grid/grid.ts';
import { buildOutputGrid, converter, localProjectionFor, lonLatToLocalKm, WGS84_DEF, type OutputGridOptions } from './projection.ts';
import { NeighbourIndex } from './neighbours.ts';
import { createGridRuntime, computeRows, type GridPlan, type GridRuntime, type RowStats } from './gridKernel.ts';
import { crossValidateIdw, crossValidateKriging, type CrossValidation } from './crossValidation.ts';
import {
  VARIOGRAM_MODELS,
  anisotropyMatrix,
  transformCoords,
  empiricalVariogram,
  fitVariogram,
  checkVariogram,
  type Anisotropy,
  type EmpiricalLag,
  type VariogramModel,
  type VariogramModelName,
} from './variogram.ts';

/**
 * The library entry points of the interpolation engine: `prepareInterpolation` (validate, project, merge
 * coincident points, fit the variogram, cross-validate, and build a `GridPlan`), `interpolateGrid` (the whole grid
 * in this thread) and `predictAtPoints`. Coordinates in: WGS84 lon/lat degrees; distances: km.
 */

export interface PointData {
  ids: string[];
  lon: ArrayLike<number>;
  lat: ArrayLike<number>;
  values: ArrayLike<number>;
  /** Data quality per point (`high|medium|low`), for IDW multipliers. */
  quality?: (string | null | undefined)[];
  /** Measurement standard deviation per point (value units); NaN or absent = none. */
  errorSd?: ArrayLike<number> | null;
}

/** Default IDW multipliers by quality: a project choice ("common practice": halve the weight per class down). */
export const DEFAULT_QUALITY_WEIGHTS = { high: 1, medium: 0.5, low: 0.25 } as const;

export interface InterpolationOptions {
  method: 'idw' | 'kriging';
  /** Neighbours per cell, or 'all'. Default 12 (IDW), 16 (kriging). */
  neighbors?: number | 'all';
  radiusKm?: number;
  /** IDW power (default 2). */
  power?: number;
  /** Use quality multipliers in IDW. */
  useQuality?: boolean;
  qualityWeights?: Partial<Record<'high' | 'medium' | 'low', number>>;
  /** 'auto' (default): best leave-one-out RMSE among the three models; a model name: fitted; an object: fixed. */
  variogram?: 'auto' | VariogramModelName | VariogramModel;
  lagKm?: number;
  maxLagKm?: number;
  anisotropy?: Anisotropy | null;
  /**
   * Measurement error done once: each point's errorSd² goes on the kriging diagonal, and the fitted (or given)
   * nugget is split into the known error part (the mean error variance, capped at the nugget, with a warning when
   * the cap binds) and the micro-scale part; estimates and sd are then of the true field (error-filtered), and
   * cross-validation standardizes by the kriging variance plus the point's own error variance.
   */
  measurementError?: boolean;
  /** Fault traces: polylines of [lon, lat]. */
  faults?: number[][][] | null;
  maxDistanceKm?: number | null;
  /** Region rings of [lon, lat] (outer rings and holes, even–odd). */
  region?: number[][][] | null;
  grid?: OutputGridOptions;
  /** Kriging standard-deviation grid (default true for kriging). */
  sd?: boolean;
  /** Leave-one-out cross-validation (default true). */
  crossValidation?: boolean;
  /** Largest grid (cells); default 25,000,000. */
  maxCells?: number;
  /** Largest global kriging system (points); default 5000. */
  maxGlobal?: number;
  /** Units of the values, e.g. 'mW/m²'. */
  units?: string;
}

export interface VariogramReport {
  model: VariogramModelName;
  nugget: number;
  partialSill: number;
  sill: number;
  rangeKm: number;
  /** 'fitted' (Cressie WLS), or 'fixed' (given by the user). */
  source: 'fitted' | 'fixed';
  anisotropy: Anisotropy | null;
  lagKm: number | null;
  maxLagKm: number | null;
  /** Points used for the empirical semivariogram (a seeded subset above 4000). */
  empiricalPoints: number;
  empirical: EmpiricalLag[];
  /**
   * With measurement errors: the nugget split into the sites' mean error variance (value units², capped at the
   * nugget) and the micro-scale remainder; the kriging uses the micro-scale nugget plus each site's own error
   * variance on its diagonal.
   */
  nuggetSplit?: { measurementErrorVariance: number; microScale: number; meanClaimedErrorVariance: number; capped: boolean };
  /** With 'auto': each candidate and its leave-one-out RMSE. */
  candidates?: { model: VariogramModelName; nugget: number; partialSill: number; rangeKm: number; cvRmse: number }[];
}

export interface PreparedInterpolation {
  plan: GridPlan;
  cellKm: number;
  ids: string[];
  variogram: VariogramReport | null;
  crossValidation: CrossValidation | null;
  warnings: string[];
  timingsMs: Record<string, number>;
  units: string;
}

const now = () => (typeof performance !== 'undefined' ? performance.now() : Date.now());
let planCounter = 0;

/** Validates and projects the points, merges coincident ones, and builds the plan. */
export function prepareInterpolation(points: PointData, opts: InterpolationOptions, needGrid = true): PreparedInterpolation {
  const t0 = now();
  const warnings: string[] = [];
  const method = opts.method;
  if (method !== 'idw' && method !== 'kriging')
    throw new InputError(`unknown method "${String(method)}"`, [{ field: 'method', problem: 'expected idw or kriging' }], 'bad_option');
  const n0 = points.ids.length;
  if (points.lon.length !== n0 || points.lat.length !== n0 || points.values.length !== n0) throw new RangeError('PointData arrays differ in length');
  const bad: { feature: string; field: string; problem: string }[] = [];
  for (let i = 0; i < n0 && bad.length < 50; i++) {
    const lon = points.lon[i],
      lat = points.lat[i],
      v = points.values[i];
    if (!(lon >= -180 && lon <= 180)) bad.push({ feature: points.ids[i], field: 'longitude', problem: `must be within [-180, 180] degrees, got ${lon}` });
    if (!(lat >= -90 && lat <= 90)) bad.push({ feature: points.ids[i], field: 'latitude', problem: `must be within [-90, 90] degrees, got ${lat}` });
    if (!Number.isFinite(v)) bad.push({ feature: points.ids[i], field: 'value', problem: `must be a finite number, got ${v}` });
    const e = points.errorSd?.[i];
    if (e !== undefined && !Number.isNaN(e) && !(e >= 0 && Number.isFinite(e)))
      bad.push({ feature: points.ids[i], field: 'uncertainty', problem: `must be a finite number ≥ 0, got ${e}` });
  }
  if (bad.length > 0) throw new InputError(`${bad.length} problem(s) in the points`, bad, 'invalid_points');
  const minPoints = method === 'kriging' ? 3 : 1;
  if (n0 < minPoints)
    throw new InputError(
      `${method} needs at least ${minPoints} points, got ${n0}`,
      [{ field: 'points', problem: `expected ≥ ${minPoints} points` }],
      'too_few_points',
    );

  const proj = localProjectionFor(points.lon, points.lat);
  const px = new Float64Array(n0),
    py = new Float64Array(n0);
  lonLatToLocalKm(proj, points.lon, points.lat, px, py);

  // Merge coincident points (closer than 1 mm): mean value, mean of the error variances over m² (mean of m
  // independent measurements), the best quality's multiplier.
  const qw = { ...DEFAULT_QUALITY_WEIGHTS, ...(opts.qualityWeights ?? {}) };
  for (const [k, v] of Object.entries(qw))
    if (!(v >= 0 && Number.isFinite(v)))
      throw new InputError(
        `quality weight for ${k} must be ≥ 0, got ${v}`,
        [{ field: 'qualityWeights', problem: 'expected a finite number ≥ 0' }],
        'bad_option',
      );
  const index = new NeighbourIndex(px, py);
  const group = new Int32Array(n0).fill(-1);
  const ids: string[] = [];
  const xs: number[] = [],
    ys: number[] = [],
    zs: number[] = [],
    ws: number[] = [],
    evs: number[] = [];
  const found: number[] = [];
  const merged: string[] = [];
  const useEv = method === 'kriging' && opts.measurementError === true && points.errorSd !== undefined && points.errorSd !== null;
  for (let i = 0; i < n0; i++) {
    if (group[i] >= 0) continue;
    found.length = 0;
    const m = index.within(px[i], py[i], 1e-6, found);
    const members = found
      .slice(0, m)
      .filter((j) => group[j] < 0)
      .sort((a, b) => a - b);
    const gi = ids.length;
    let sz = 0,
      sev = 0,
      w = 0;
    for (const j of members) {
      group[j] = gi;
      sz += points.values[j];
      const e = points.errorSd?.[j];
      sev += useEv && e !== undefined && Number.isFinite(e) ? e * e : 0;
      const q = points.quality?.[j];
      w = Math.max(w, opts.useQuality && q !== undefined && q !== null && q in qw ? qw[q as keyof typeof qw] : 1);
    }
    ids.push(members.map((j) => points.ids[j]).join('+'));
    if (members.length > 1) merged.push(ids[gi]);
    xs.push(px[i]);
    ys.push(py[i]);
    zs.push(sz / members.length);
    ws.push(w);
    evs.push(sev / (members.length * members.length));
  }
  if (merged.length > 0)
    warnings.push(
      `${merged.length} group(s) of coincident points were merged (mean value): ${merged.slice(0, 10).join(', ')}${merged.length > 10 ? ', ...' : ''}`,
    );
  const n = ids.length;
  if (n < minPoints)
    throw new InputError(
      `${method} needs at least ${minPoints} distinct locations, got ${n} after merging coincident points`,
      [{ field: 'points', problem: `expected ≥ ${minPoints} distinct locations` }],
      'too_few_points',
    );
  const x = Float64Array.from(xs),
    y = Float64Array.from(ys),
    z = Float64Array.from(zs);
  const pointWeights = method === 'idw' && opts.useQuality ? Float64Array.from(ws) : null;
  const errorVariance = useEv ? Float64Array.from(evs) : null;
  if (method === 'kriging' && opts.measurementError === true && !useEv)
    warnings.push('measurement error requested but no point carries an uncertainty: none used');

  const neighbors = opts.neighbors === 'all' ? Infinity : (opts.neighbors ?? (method === 'idw' ? 12 : 16));
  if (!(neighbors >= 1))
    throw new InputError(
      `neighbors must be a positive integer or "all", got ${String(opts.neighbors)}`,
      [{ field: 'neighbors', problem: 'expected ≥ 1' }],
      'bad_option',
    );
  const radiusKm = opts.radiusKm ?? Infinity;
  if (!(radiusKm > 0)) throw new InputError(`search radius must be > 0 km, got ${radiusKm}`, [{ field: 'radiusKm', problem: 'expected > 0' }], 'bad_option');
  const power = opts.power ?? 2;
  if (!(power > 0 && Number.isFinite(power)))
    throw new InputError(`power must be > 0, got ${power}`, [{ field: 'power', problem: 'expected a positive number' }], 'bad_option');
  const maxGlobal = opts.maxGlobal ?? 5000;
  if (method === 'kriging' && neighbors >= n && n > maxGlobal) {
    throw new InputError(
      `global kriging of ${n} points exceeds the limit of ${maxGlobal}`,
      [{ field: 'neighbors', problem: 'use a local neighbourhood, e.g. 16 neighbors' }],
      'too_many_points',
    );
  }
  if (opts.maxDistanceKm !== undefined && opts.maxDistanceKm !== null && !(opts.maxDistanceKm > 0))
    throw new InputError(`maxDistanceKm must be > 0, got ${opts.maxDistanceKm}`, [{ field: 'maxDistanceKm', problem: 'expected > 0' }], 'bad_option');

  // Faults to local km pieces.
  let faults: Float64Array | null = null;
  if (opts.faults && opts.faults.length > 0) {
    const c = converter(WGS84_DEF, proj.def);
    const segs: number[] = [];
    for (const line of opts.faults) {
      for (let i = 0; i + 1 < line.length; i++) {
        const a = c.forward([line[i][0], line[i][1]]),
          b = c.forward([line[i + 1][0], line[i + 1][1]]);
        segs.push(a[0], a[1], b[0], b[1]);
      }
    }
    faults = Float64Array.from(segs);
  }

  // Grid.
  const gopts: OutputGridOptions = { ...(opts.grid ?? {}) };
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
  const { cellKm, ...gridSpec } = spec;
  const timingsMs: Record<string, number> = { prepare: now() - t0 };

  const basePlan: GridPlan = {
    key: `plan-${++planCounter}-${n}-${Date.now()}`,
    method,
    x,
    y,
    z,
    pointWeights,
    errorVariance,
    projection: proj,
    grid: gridSpec,
    gridCrsDef,
    neighbors,
    radiusKm,
    power,
    variogram: null,
    anisotropy: opts.anisotropy ?? null,
    faults,
    maxDistanceKm: opts.maxDistanceKm ?? null,
    region,
    withSd: method === 'kriging' && (opts.sd ?? true),
    maxGlobal,
  };
  const units = opts.units ?? '';
  const wantCv = opts.crossValidation ?? true;

  if (method === 'idw') {
    if (opts.sd === true) warnings.push('IDW has no error model: no standard-deviation grid');
    if (opts.anisotropy) warnings.push('anisotropy applies to kriging only; IDW ignored it');
    const t1 = now();
    const cv = wantCv
      ? crossValidateIdw(ids, x, y, z, createGridRuntime({ ...basePlan, grid: { ...gridSpec, width: 1, height: 1 }, region: null, maxDistanceKm: null }).idw!)
      : null;
    timingsMs.crossValidation = now() - t1;
    return { plan: basePlan, cellKm, ids, variogram: null, crossValidation: cv, warnings, timingsMs, units };
  }

  // Kriging: variogram.
  const t2 = now();
  const am = anisotropyMatrix(basePlan.anisotropy);
  const t = basePlan.anisotropy ? transformCoords(am, x, y) : { x, y };
  let report: VariogramReport;
  let cv: CrossValidation | null = null;
  const vg = opts.variogram ?? 'auto';
  // Measurement error once: the known part of the nugget is the sites' mean error variance (capped at the nugget).
  let meanEv = 0;
  if (errorVariance !== null) {
    for (let i = 0; i < n; i++) meanEv += errorVariance[i];
    meanEv /= n;
  }
  const split = (model: VariogramModel): VariogramModel =>
    errorVariance === null ? model : { ...model, nugget: model.nugget - Math.min(meanEv, model.nugget) };
  const cvFor = (model: VariogramModel): CrossValidation => {
    const m = split(model);
    const rt: GridRuntime = createGridRuntime({ ...basePlan, variogram: m, grid: { ...gridSpec, width: 1, height: 1 }, region: null, maxDistanceKm: null });
    return crossValidateKriging(ids, rt.tx, rt.ty, z, rt.kriging!, m, errorVariance, rt.hasBarrier, radiusKm);
  };
  if (typeof vg === 'object') {
    try {
      checkVariogram(vg);
    } catch (e) {
      throw new InputError(`bad variogram: ${(e as Error).message}`, [{ field: 'variogram', problem: (e as Error).message }], 'bad_option');
    }
    report = {
      ...vg,
      sill: vg.nugget + vg.partialSill,
      source: 'fixed',
      anisotropy: basePlan.anisotropy,
      lagKm: null,
      maxLagKm: null,
      empiricalPoints: 0,
      empirical: [],
    };
    try {
      const emp = empiricalVariogram(t.x, t.y, z, { lagKm: opts.lagKm, maxLagKm: opts.maxLagKm });
      report.empirical = emp.lags;
      report.lagKm = emp.lagKm;
      report.maxLagKm = emp.maxLagKm;
      report.empiricalPoints = emp.pointsUsed;
    } catch {
      /* empirical points are informative only for a fixed model */
    }
    timingsMs.variogram = now() - t2;
    if (wantCv) {
      const t3 = now();
      cv = cvFor(vg);
      timingsMs.crossValidation = now() - t3;
    }
  } else {
    let zmin = Infinity,
      zmax = -Infinity;
    for (let i = 0; i < n; i++) {
      zmin = Math.min(zmin, z[i]);
      zmax = Math.max(zmax, z[i]);
    }
    if (!(zmax > zmin))
      throw new InputError(
        `all ${n} values are equal (${zmin}): the semivariogram is flat and cannot be fitted`,
        [{ field: 'values', problem: 'kriging needs varying values, or give a fixed --variogram MODEL:NUGGET,PARTIAL_SILL,RANGE_KM' }],
        'degenerate_variogram',
      );
    if (opts.lagKm !== undefined && !(opts.lagKm > 0))
      throw new InputError(`lagKm must be > 0, got ${opts.lagKm}`, [{ field: 'lagKm', problem: 'expected > 0' }], 'bad_option');
    if (opts.maxLagKm !== undefined && !(opts.maxLagKm > 0))
      throw new InputError(`maxLagKm must be > 0, got ${opts.maxLagKm}`, [{ field: 'maxLagKm', problem: 'expected > 0' }], 'bad_option');
    const emp = empiricalVariogram(t.x, t.y, z, { lagKm: opts.lagKm, maxLagKm: opts.maxLagKm });
    if (emp.lags.length < 2)
      throw new InputError(
        `the empirical semivariogram has ${emp.lags.length} non-empty lag(s); at least 2 are needed to fit a model`,
        [{ field: 'lagKm', problem: 'use a smaller --lag-km or a larger --max-lag-km, or give a fixed --variogram' }],
        'degenerate_variogram',
      );
    if (!emp.lags.some((l) => l.gamma > 0))
      throw new InputError(
        'the empirical semivariogram is zero at every lag: nothing to fit',
        [{ field: 'values', problem: 'give a fixed variogram model' }],
        'degenerate_variogram',
      );
    const models: VariogramModelName[] = vg === 'auto' ? [...VARIOGRAM_MODELS] : [vg];
    const candidates: NonNullable<VariogramReport['candidates']> = [];
    let best: { m: VariogramModel; cv: CrossValidation | null; score: number } | null = null;
    let cvMs = 0;
    for (const name of models) {
      const f = fitVariogram(name, emp.lags);
      const m: VariogramModel = { model: name, nugget: f.nugget, partialSill: f.partialSill, rangeKm: f.rangeKm };
      let c: CrossValidation | null = null;
      let score = f.objective;
      if (vg === 'auto' || wantCv) {
        const t3 = now();
        c = cvFor(m);
        cvMs += now() - t3;
        score = c.rmse;
      }
      candidates.push({ ...m, cvRmse: c?.rmse ?? NaN });
      if (best === null || score < best.score) best = { m, cv: c, score };
    }
    const m = best!.m;
    cv = wantCv ? best!.cv : null;
    if (m.rangeKm >= 10 * Math.max(...emp.lags.map((l) => l.lagKm)) * (1 - 1e-9)) {
      warnings.push(
        `the fitted range reached its limit (${m.rangeKm.toFixed(0)} km, 10 × the largest lag): the semivariogram has no sill within the lags (a trend?); treat the standard deviation with care`,
      );
    }
    report = {
      ...m,
      sill: m.nugget + m.partialSill,
      source: 'fitted',
      anisotropy: basePlan.anisotropy,
      lagKm: emp.lagKm,
      maxLagKm: emp.maxLagKm,
      empiricalPoints: emp.pointsUsed,
      empirical: emp.lags,
    };
    if (vg === 'auto') report.candidates = candidates;
    timingsMs.variogram = now() - t2 - cvMs;
    timingsMs.crossValidation = cvMs;
  }
  const plan: GridPlan = {
    ...basePlan,
    variogram: split({ model: report.model, nugget: report.nugget, partialSill: report.partialSill, rangeKm: report.rangeKm }),
  };
  if (errorVariance !== null) {
    const known = Math.min(meanEv, report.nugget);
    const capped = meanEv > report.nugget;
    report.nuggetSplit = { measurementErrorVariance: known, microScale: report.nugget - known, meanClaimedErrorVariance: meanEv, capped };
    if (capped)
      warnings.push(
        `the sites' mean error variance (${meanEv.toPrecision(4)}) exceeds the variogram's nugget (${report.nugget.toPrecision(4)}): the claimed errors are larger than the data allow; the error part of the nugget is capped at the nugget (no micro-scale part left)`,
      );
  }
  if (cv !== null && cv.unpredicted > 0) warnings.push(`cross-validation: ${cv.unpredicted} point(s) had no usable neighbour and were left out`);
  return { plan, cellKm, ids, variogram: report, crossValidation: cv, warnings, timingsMs, units };
}

export interface InterpolationResult {
  grid: Grid<Float32Array>;
  sd?: Grid<Float32Array>;
  cellKm: number;
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
  if (s.empty > 0) w.push(`${s.empty} cell(s) had no usable data point (search radius or fault barriers) and are no data`);
  return w;
}

/** Wraps plan buffers into Grid objects (after `computeRows` filled them, here or in workers). */
export function finishGrid(prep: PreparedInterpolation, values: Float32Array, sd: Float32Array | null, stats: RowStats, gridMs: number): InterpolationResult {
  const g = prep.plan.grid;
  const grid: Grid<Float32Array> = { ...g, values, units: prep.units };
  const res: InterpolationResult = {
    grid,
    cellKm: prep.cellKm,
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
  for (let i = 0; i < targets.ids.length; i++) {
    const lon = targets.lon[i],
      lat = targets.lat[i];
    if (!(lon >= -180 && lon <= 180 && lat >= -90 && lat <= 90))
      throw new InputError(
        `target ${targets.ids[i]} has coordinates out of range`,
        [{ feature: targets.ids[i], field: 'geometry', problem: 'expected lon in [-180, 180], lat in [-90, 90]' }],
        'invalid_points',
      );
  }
  const prep = prepareInterpolation(points, { ...opts, region: null }, false);
  const t = now();
  const rt = createGridRuntime({ ...prep.plan, grid: { ...prep.plan.grid, width: 1, height: 1 } });
  const nT = targets.ids.length;
  const tx = new Float64Array(nT),
    ty = new Float64Array(nT);
  lonLatToLocalKm(prep.plan.projection, targets.lon, targets.lat, tx, ty);
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
      rt.kriging!.predict(m[0] * tx[i] + m[1] * ty[i], m[2] * tx[i] + m[3] * ty[i], out, prep.plan.withSd);
      v = out[0];
      s = out[1];
    }
    predictions.push({ id: targets.ids[i], value: Number.isFinite(v) ? v : null, sd: Number.isFinite(s) ? s : null });
  }
  const warnings = [...prep.warnings];
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
