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
  empty: number;
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
  if (plan.method === 'idw') {
    const barrier = plan.faults !== null && plan.faults.length > 0 ? new FaultBarrier(plan.faults, plan.x, plan.y) : null;
    idw = new IdwPredictor(plan.x, plan.y, plan.z, {
      power: plan.power,
      neighbors: plan.neighbors,
      radiusKm: plan.radiusKm,
      pointWeights: plan.pointWeights,
      visibility: barrier,
    });
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
    drift,
  };
}

/**
 * Fills rows [r0, r1) of the full-grid buffers `values` (and `sd` when given and the plan has sd), index
 * row·width + col; masked or unreachable cells are NaN. Returns counts for the warnings.
 */
export function computeRows(rt: GridRuntime, r0: number, r1: number, values: Float32Array | Float64Array, sd: Float32Array | Float64Array | null): RowStats {
  const { plan, rowX, rowY, inside, out2, m } = rt;
  const g = plan.grid;
  const W = g.width;
  const stats: RowStats = { cells: 0, masked: 0, empty: 0, fallbacks: 0, regularized: 0, factorizations: 0 };
  const k0 = rt.kriging !== null ? { ...rt.kriging.counters } : null;
  const idwEmpty0 = rt.idw?.emptyCount ?? 0;
  const withSd = sd !== null && plan.withSd && rt.kriging !== null;
  const maxD = plan.maxDistanceKm;
  const atCells = plan.covariate?.atCells ?? null;
  for (let r = r0; r < r1; r++) {
    rowCentresLocalKm(g, rt.toLocal, r, rowX, rowY);
    if (rt.mask !== null) rt.mask.row(g.north - (r + 0.5) * g.dy, g.west, g.dx, W, inside);
    const base = r * W;
    for (let c = 0; c < W; c++) {
      stats.cells++;
      const qx = rowX[c],
        qy = rowY[c];
      if ((rt.mask !== null && inside[c] === 0) || (maxD !== null && rt.realIndex!.nearestDistance(qx, qy, maxD, rt.idBuf, rt.d2Buf) > maxD)) {
        stats.masked++;
        values[base + c] = NaN;
        if (sd !== null) sd[base + c] = NaN;
        continue;
      }
      if (rt.idw !== null) {
        values[base + c] = rt.idw.predict(qx, qy);
        if (sd !== null) sd[base + c] = NaN;
      } else {
        const tx = m[0] * qx + m[1] * qy,
          ty = m[2] * qx + m[3] * qy;
        rt.kriging!.predict(tx, ty, out2, withSd, -1, atCells === null ? NaN : atCells[base + c]);
        values[base + c] = out2[0];
        if (sd !== null) sd[base + c] = withSd ? out2[1] : NaN;
      }
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

/** Adds row statistics (from several row ranges or workers). */
export function addStats(a: RowStats, b: RowStats): RowStats {
  return {
    cells: a.cells + b.cells,
    masked: a.masked + b.masked,
    empty: a.empty + b.empty,
    fallbacks: a.fallbacks + b.fallbacks,
    regularized: a.regularized + b.regularized,
    factorizations: a.factorizations + b.factorizations,
  };
}
