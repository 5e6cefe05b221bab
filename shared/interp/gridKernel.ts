import type { GridSpec } from '../grid/grid.ts';
import { converter, rowCentresLocalKm, type Converter, type LocalProjection } from './projection.ts';
import { NeighbourIndex } from './neighbours.ts';
import { FaultBarrier } from './barriers.ts';
import { IdwPredictor } from './idw.ts';
import { KrigingPredictor } from './kriging.ts';
import { RegionMask } from './mask.ts';
import { anisotropyMatrix, transformCoords, type Anisotropy, type VariogramModel } from './variogram.ts';
import { driftFrame, externalDriftFrame, type DriftFrame, type DriftKind } from './drift.ts';
import type { ExternalCovariate } from './externalDrift.ts';

/**
 * The grid kernel: everything needed to fill any row range of an output grid, as plain structured-cloneable data
 * (typed arrays, numbers, strings), so a server can hand the same plan to worker threads and let each fill rows
 * [r0, r1) of shared buffers. Results do not depend on how rows are split (each row's cells are computed in the
 * same order; the factor cache only saves work, it never changes a value beyond round-off).
 */
export interface GridPlan {
  /** Identifies the plan (workers cache their runtime by it). */
  key: string;
  method: 'idw' | 'kriging';
  /** Data in local km (untransformed) and values. */
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** IDW per-point multipliers (e.g. quality), or null. */
  pointWeights: Float64Array | null;
  /** Kriging per-point measurement-error variances, or null. */
  errorVariance: Float64Array | null;
  projection: LocalProjection;
  grid: GridSpec;
  /** proj4 definition of the grid CRS. */
  gridCrsDef: string;
  /** Neighbours per cell; Infinity = all. */
  neighbors: number;
  radiusKm: number;
  power: number;
  variogram: VariogramModel | null;
  anisotropy: Anisotropy | null;
  /** Drift of the mean for kriging (universal kriging, drift.ts); absent or 'none' = ordinary kriging. */
  trend?: DriftKind;
  /** An external drift's covariate at the data and the output cells (externalDrift.ts), or absent. */
  covariate?: ExternalCovariate | null;
  /** Fault pieces x1,y1,x2,y2 in local km, or null. */
  faults: Float64Array | null;
  maxDistanceKm: number | null;
  /** Region rings in grid CRS coordinates, or null. */
  region: number[][][] | null;
  withSd: boolean;
  maxGlobal: number;
}

export interface RowStats {
  cells: number;
  masked: number;
  /** Cells the predictor left empty: no usable data point (search radius or fault barriers). */
  empty: number;
  /** Of `empty`: cells with data within the search radius, every one behind a fault ("no data visible across faults"). */
  hidden: number;
  fallbacks: number;
  regularized: number;
  factorizations: number;
}

/** Built once per plan (per worker): indexes, predictor, converters and row buffers. */
export interface GridRuntime {
  plan: GridPlan;
  toLocal: Converter;
  idw: IdwPredictor | null;
  kriging: KrigingPredictor | null;
  m: [number, number, number, number];
  realIndex: NeighbourIndex | null;
  mask: RegionMask | null;
  rowX: Float64Array;
  rowY: Float64Array;
  inside: Uint8Array;
  out2: Float64Array;
  idBuf: Int32Array;
  d2Buf: Float64Array;
  /** The predictor's coordinates (anisotropy-transformed for kriging), km. */
  tx: Float64Array;
  ty: Float64Array;
  hasBarrier: boolean;
  /** The predictor's point index (in its coordinates), searched without the barrier to tell `hidden` cells. */
  searchIndex: NeighbourIndex;
  /** The kriging drift in the predictor's coordinates, or null (ordinary kriging or IDW). */
  drift: DriftFrame | null;
}

/** The drift frame of a plan for drift `kind`: the polynomial's on coordinates (x, y), or the external covariate's. */
export function planDriftFrame(plan: GridPlan, kind: DriftKind, x: ArrayLike<number>, y: ArrayLike<number>): DriftFrame {
  if (kind !== 'external') return driftFrame(kind, x, y);
  if (!plan.covariate) throw new RangeError('an external drift needs its covariate at the data');
  return externalDriftFrame(plan.covariate.atData);
}

/** Builds the runtime of a plan (indexes, barrier, predictor, factor caches). */
export function createGridRuntime(plan: GridPlan): GridRuntime {
  const m = anisotropyMatrix(plan.method === 'kriging' ? plan.anisotropy : null);
  const iso = m[0] === 1 && m[1] === 0 && m[2] === 0 && m[3] === 1;
  let idw: IdwPredictor | null = null;
  let kriging: KrigingPredictor | null = null;
  let tx = plan.x,
    ty = plan.y;
  let drift: DriftFrame | null = null;
  const hasBarrier = plan.faults !== null && plan.faults.length > 0;
  let searchIndex: NeighbourIndex;
  if (plan.method === 'idw') {
    const barrier = plan.faults !== null && plan.faults.length > 0 ? new FaultBarrier(plan.faults, plan.x, plan.y) : null;
    searchIndex = new NeighbourIndex(plan.x, plan.y);
    idw = new IdwPredictor(
      plan.x,
      plan.y,
      plan.z,
      { power: plan.power, neighbors: plan.neighbors, radiusKm: plan.radiusKm, pointWeights: plan.pointWeights, visibility: barrier },
      searchIndex,
    );
  } else {
    if (plan.variogram === null) throw new RangeError('kriging plan without a variogram');
    const t = iso ? { x: plan.x, y: plan.y } : transformCoords(m, plan.x, plan.y);
    tx = t.x;
    ty = t.y;
    let barrier: FaultBarrier | null = null;
    if (plan.faults !== null && plan.faults.length > 0) {
      const f = plan.faults;
      const tf = new Float64Array(f.length);
      for (let i = 0; i < f.length; i += 2) {
        tf[i] = m[0] * f[i] + m[1] * f[i + 1];
        tf[i + 1] = m[2] * f[i] + m[3] * f[i + 1];
      }
      barrier = new FaultBarrier(tf, t.x, t.y);
    }
    if (plan.trend !== undefined && plan.trend !== 'none') drift = planDriftFrame(plan, plan.trend, t.x, t.y);
    kriging = new KrigingPredictor(t.x, t.y, plan.z, plan.variogram, {
      neighbors: plan.neighbors,
      radiusKm: plan.radiusKm,
      errorVariance: plan.errorVariance,
      visibility: barrier,
      maxGlobal: plan.maxGlobal,
      drift,
    });
    searchIndex = kriging.index;
  }
  const realIndex = plan.maxDistanceKm !== null ? (iso && kriging !== null ? kriging.index : new NeighbourIndex(plan.x, plan.y)) : null;
  const w = plan.grid.width;
  return {
    plan,
    toLocal: converter(plan.gridCrsDef, plan.projection.def),
    idw,
    kriging,
    m,
    realIndex,
    mask: plan.region !== null ? new RegionMask(plan.region) : null,
    rowX: new Float64Array(w),
    rowY: new Float64Array(w),
    inside: new Uint8Array(w),
    out2: new Float64Array(2),
    idBuf: new Int32Array(1),
    d2Buf: new Float64Array(1),
    tx,
    ty,
    hasBarrier,
    searchIndex,
    drift,
  };
}

/** True when the cell at local km (qx, qy), column c of the row whose region flags are in `rt.inside`, is masked. */
function maskedCell(rt: GridRuntime, c: number, qx: number, qy: number): boolean {
  const maxD = rt.plan.maxDistanceKm;
  return (rt.mask !== null && rt.inside[c] === 0) || (maxD !== null && rt.realIndex!.nearestDistance(qx, qy, maxD, rt.idBuf, rt.d2Buf) > maxD);
}

/**
 * True when a cell the predictor left empty has data within the search radius, every one behind a fault: no data
 * point is visible from it across the faults (the straight path to each crosses a trace), so it has no value.
 * (px, py): the cell in the predictor's coordinates (anisotropy-transformed for kriging).
 */
function hiddenByFaults(rt: GridRuntime, px: number, py: number): boolean {
  return rt.hasBarrier && rt.searchIndex.nearest(px, py, 1, rt.plan.radiusKm, rt.idBuf, rt.d2Buf) > 0;
}

/** Region flags and local km centres of row r into the runtime's row buffers. */
function prepareRow(rt: GridRuntime, r: number): void {
  const g = rt.plan.grid;
  rowCentresLocalKm(g, rt.toLocal, r, rt.rowX, rt.rowY);
  if (rt.mask !== null) rt.mask.row(g.north - (r + 0.5) * g.dy, g.west, g.dx, g.width, rt.inside);
}

/**
 * Fills rows [r0, r1) of the full-grid buffers `values` (and `sd` when given and the plan has sd), index
 * row·width + col; masked or unreachable cells are NaN. Returns counts for the warnings.
 */
export function computeRows(rt: GridRuntime, r0: number, r1: number, values: Float32Array | Float64Array, sd: Float32Array | Float64Array | null): RowStats {
  const { plan, rowX, rowY, out2, m } = rt;
  const W = plan.grid.width;
  const stats: RowStats = { cells: 0, masked: 0, empty: 0, hidden: 0, fallbacks: 0, regularized: 0, factorizations: 0 };
  const k0 = rt.kriging !== null ? { ...rt.kriging.counters } : null;
  const idwEmpty0 = rt.idw?.emptyCount ?? 0;
  const withSd = sd !== null && plan.withSd && rt.kriging !== null;
  const atCells = plan.covariate?.atCells ?? null;
  for (let r = r0; r < r1; r++) {
    prepareRow(rt, r);
    const base = r * W;
    for (let c = 0; c < W; c++) {
      stats.cells++;
      const qx = rowX[c],
        qy = rowY[c];
      if (maskedCell(rt, c, qx, qy)) {
        stats.masked++;
        values[base + c] = NaN;
        if (sd !== null) sd[base + c] = NaN;
        continue;
      }
      let px = qx,
        py = qy;
      if (rt.idw !== null) {
        values[base + c] = rt.idw.predict(qx, qy);
        if (sd !== null) sd[base + c] = NaN;
      } else {
        px = m[0] * qx + m[1] * qy;
        py = m[2] * qx + m[3] * qy;
        rt.kriging!.predict(px, py, out2, withSd, -1, atCells === null ? NaN : atCells[base + c]);
        values[base + c] = out2[0];
        if (sd !== null) sd[base + c] = withSd ? out2[1] : NaN;
      }
      if (rt.hasBarrier && values[base + c] !== values[base + c] && hiddenByFaults(rt, px, py)) stats.hidden++;
    }
  }
  if (rt.kriging !== null && k0 !== null) {
    const k1 = rt.kriging.counters;
    stats.empty = k1.empty - k0.empty;
    stats.fallbacks = k1.fallbacks - k0.fallbacks;
    stats.regularized = k1.regularized - k0.regularized;
    stats.factorizations = k1.factorizations - k0.factorizations;
  } else if (rt.idw !== null) stats.empty = rt.idw.emptyCount - idwEmpty0;
  return stats;
}

/**
 * The cells of a filled grid (`values`, as computeRows left them) that are empty because no data point is visible
 * from them across the faults: 1 there, else 0 (masked cells and cells out of the search radius are 0).
 */
export function hiddenCellMask(rt: GridRuntime, values: ArrayLike<number>): Uint8Array {
  const { plan, rowX, rowY, m } = rt;
  const W = plan.grid.width;
  const out = new Uint8Array(W * plan.grid.height);
  if (!rt.hasBarrier) return out;
  for (let r = 0; r < plan.grid.height; r++) {
    let any = false;
    for (let c = 0; c < W && !any; c++) any = values[r * W + c] !== values[r * W + c];
    if (!any) continue;
    prepareRow(rt, r);
    for (let c = 0; c < W; c++) {
      const v = values[r * W + c];
      if (v === v || maskedCell(rt, c, rowX[c], rowY[c])) continue;
      const px = rt.idw !== null ? rowX[c] : m[0] * rowX[c] + m[1] * rowY[c],
        py = rt.idw !== null ? rowY[c] : m[2] * rowX[c] + m[3] * rowY[c];
      if (hiddenByFaults(rt, px, py)) out[r * W + c] = 1;
    }
  }
  return out;
}

/** Adds row statistics (from several row ranges or workers). */
export function addStats(a: RowStats, b: RowStats): RowStats {
  return {
    cells: a.cells + b.cells,
    masked: a.masked + b.masked,
    empty: a.empty + b.empty,
    hidden: a.hidden + b.hidden,
    fallbacks: a.fallbacks + b.fallbacks,
    regularized: a.regularized + b.regularized,
    factorizations: a.factorizations + b.factorizations,
  };
}
