/**
 * Indicator surfaces for isograds: for each zone boundary j (the isograd opening rank j = 1 … 5), the estimated
 * probability that the grade is at or above rank j.
 *
 * Default method: indicator kriging (Journel 1983, "Nonparametric estimation of spatial distributions", Math. Geol.
 * 15; Goovaerts 1997, "Geostatistics for Natural Resources Evaluation", §7.1–7.3): one indicator per boundary,
 * Iⱼ(x) = 1 when the grade is at or above rank j, estimated by the engine's ordinary kriging
 * (shared/interp/kriging.ts) of the samples decided for that boundary, with fault barriers (a sample informs a
 * location only when no fault trace lies between them). Each boundary's indicator semivariogram is fitted
 * (Matheron's estimator, Cressie's weighted least squares, spherical model: shared/interp/variogram.ts) when it has at
 * least MIN_FIT_SAMPLES decided samples and MIN_FIT_MINORITY of each class; the others take the median-indicator
 * variogram (the fit of the boundary whose proportion of ones is nearest 0.5; Goovaerts 1997 §7.3.1). Estimates are
 * clipped to [0, 1] and made non-increasing in j by the average of the upward and downward corrections (order
 * relations; Deutsch & Journel 1998, "GSLIB", 2nd ed., §IV.1.9).
 *
 * Alternative method 'idw': inverse-distance weighting of the sample indicators
 * (Shepard 1968: P̂ⱼ = Σ wᵢ Iᵢⱼ / Σ wᵢ, wᵢ = dᵢ^(−p)), with the interpolation engine's neighbour search
 * (shared/interp/neighbours.ts) and fault barriers (shared/interp/barriers.ts): a sample informs a location only
 * when the straight path between them crosses no fault trace. Indicator interpolation of an ordered categorical
 * variable follows Journel (1983, "Nonparametric estimation of spatial distributions", Math. Geol. 15).
 *
 * All five boundaries share one neighbour set per location (the k nearest visible informative samples), so one
 * search serves five surfaces, and the surfaces are nested: with only decided samples P̂₁ ≥ P̂₂ ≥ … ≥ P̂₅. A
 * sample whose rank interval straddles a boundary is left out of that boundary's sums only. Exact hits (closer
 * than EXACT_KM) take the mean indicator of the coincident samples, as the engine's IDW does.
 *
 * Grids here are in the local km frame: cell (c, r) has its centre at (x0 + c·cellKm, y0 + r·cellKm), row 0 at
 * the south, index r·width + c.
 */
import { NeighbourIndex } from '../interp/neighbours.ts';
import { FaultBarrier } from '../interp/barriers.ts';
import { EXACT_KM } from '../interp/idw.ts';
import { MAX_RANK } from './grade.ts';
import { KrigingPredictor } from '../interp/kriging.ts';
import type { VariogramModel } from '../interp/variogram.ts';
import { faultDistanceGrid } from './fault-distance.ts';
import { chooseIndicatorVariograms, correctOrderRelations, indicatorSets, type IndicatorVariogram } from './indicator-variograms.ts';

export { MIN_FIT_SAMPLES, MIN_FIT_MINORITY, correctOrderRelations, type IndicatorVariogram } from './indicator-variograms.ts';
import type { VisibilityTest } from '../interp/neighbours.ts';

/**
 * The fault barrier of one boundary's points, answered from a memo shared by the five boundaries (their points are
 * mostly the same samples, so each sample's visibility from a location is tested once), and switched off where no
 * fault piece lies within the search disk (same result, cheaper).
 */
class SwitchedBarrier implements VisibilityTest {
  on = true;
  constructor(
    private readonly b: FaultBarrier,
    private readonly toField: Int32Array,
    private readonly memo: { stamp: number; seen: Int32Array; val: Uint8Array },
  ) {}
  visible(x: number, y: number, i: number): boolean {
    if (!this.on) return true;
    const g = this.toField[i],
      m = this.memo;
    if (m.seen[g] === m.stamp) return m.val[g] === 1;
    const v = this.b.visible(x, y, g);
    m.seen[g] = m.stamp;
    m.val[g] = v ? 1 : 0;
    return v;
  }
}

/** Number of zone boundaries (biotite-in … sillimanite-in). */
export const BOUNDARY_COUNT = MAX_RANK;

export interface LocalGrid {
  /** Centre of cell (0, 0), local km. */
  x0: number;
  y0: number;
  cellKm: number;
  width: number;
  height: number;
}

export interface IndicatorOptions {
  /** 'kriging' (default) or 'idw'. */
  method?: 'kriging' | 'idw';
  /** Variogram for every boundary instead of fitting (kriging). */
  variogram?: VariogramModel;
  /** IDW power p (default 2). */
  power?: number;
  /** Nearest visible informative samples per location (default 16 for kriging, 12 for IDW). */
  neighbors?: number;
  /** Only samples within this distance, km (default unlimited). */
  radiusKm?: number;
  /** Fault pieces x1, y1, x2, y2 in local km (null: none). */
  faults?: Float64Array | null;
}

const EXACT_D2 = EXACT_KM * EXACT_KM;

export { pointSegmentDistance2 } from '../grid/segment.ts';

/** The indicator field of a set of graded samples (local km), ready to evaluate at points or on a grid. */
export class IndicatorField {
  readonly power: number;
  readonly k: number;
  readonly radiusKm: number;
  /** Informative samples (rank known at least in part), local km. */
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly lo: Int8Array;
  readonly hi: Int8Array;
  /** Index of each informative sample in the caller's arrays. */
  readonly source: Int32Array;
  readonly index: NeighbourIndex;
  readonly barrier: FaultBarrier | null;
  readonly faults: Float64Array | null;
  private readonly ids: Int32Array;
  private readonly d2: Float64Array;
  private readonly num = new Float64Array(BOUNDARY_COUNT);
  private readonly den = new Float64Array(BOUNDARY_COUNT);
  private readonly exNum = new Float64Array(BOUNDARY_COUNT);
  private readonly exDen = new Float64Array(BOUNDARY_COUNT);
  /** Searches that needed the barrier test (diagnostics). */
  barrierSearches = 0;
  readonly method: 'kriging' | 'idw';
  /** Per boundary (index j − 1): the kriging predictor of its decided samples (null: none decided). */
  private readonly kp: (KrigingPredictor | null)[] = [];
  /** Per boundary: informative-sample index → the predictor's point index (−1: undecided for it). */
  private readonly kIndex: Int32Array[] = [];
  private readonly kVis: (SwitchedBarrier | null)[] = [];
  readonly variograms: (IndicatorVariogram | null)[] = [];
  private readonly kOut = new Float64Array(2);
  private kIds = new Int32Array(0);
  private kD2 = new Float64Array(0);
  private readonly nearIds = new Int32Array(1);
  private visMemo = { stamp: 0, seen: new Int32Array(0), val: new Uint8Array(0) };
  private readonly nearD2 = new Float64Array(1);

  /**
   * @param x, y sample positions, local km
   * @param lo, hi rank intervals (−1 = no zone information: the sample is skipped)
   */
  constructor(x: ArrayLike<number>, y: ArrayLike<number>, lo: ArrayLike<number>, hi: ArrayLike<number>, opts: IndicatorOptions = {}) {
    this.method = opts.method ?? 'kriging';
    this.power = opts.power ?? 2;
    if (!(this.power > 0 && Number.isFinite(this.power))) throw new RangeError(`IDW power must be a positive number, got ${this.power}`);
    const k = opts.neighbors ?? (this.method === 'kriging' ? 16 : 12);
    if (!(k >= 1)) throw new RangeError(`at least one neighbour is needed, got ${k}`);
    this.radiusKm = opts.radiusKm ?? Infinity;
    if (!(this.radiusKm > 0)) throw new RangeError(`search radius must be > 0 km, got ${this.radiusKm}`);
    const keep: number[] = [];
    for (let i = 0; i < x.length; i++) if (lo[i] >= 0 && hi[i] >= lo[i] && Number.isFinite(x[i]) && Number.isFinite(y[i])) keep.push(i);
    const n = keep.length;
    this.x = new Float64Array(n);
    this.y = new Float64Array(n);
    this.lo = new Int8Array(n);
    this.hi = new Int8Array(n);
    this.source = Int32Array.from(keep);
    for (let t = 0; t < n; t++) {
      const i = keep[t];
      this.x[t] = x[i];
      this.y[t] = y[i];
      this.lo[t] = lo[i];
      this.hi[t] = hi[i];
    }
    this.k = Math.max(1, Math.min(k, n));
    this.index = new NeighbourIndex(this.x, this.y);
    this.faults = opts.faults !== undefined && opts.faults !== null && opts.faults.length >= 4 ? opts.faults : null;
    this.barrier = this.faults !== null ? new FaultBarrier(this.faults, this.x, this.y) : null;
    this.ids = new Int32Array(this.k);
    this.d2 = new Float64Array(this.k);
    if (this.method === 'kriging') this.setUpKriging(opts.variogram ?? null);
  }

  /** One ordinary-kriging predictor per boundary over its decided samples, with fitted or median-indicator variograms. */
  private setUpKriging(given: VariogramModel | null): void {
    const n = this.count;
    const sets = indicatorSets(this.x, this.y, this.lo, this.hi, BOUNDARY_COUNT);
    const variograms = chooseIndicatorVariograms(sets, this.x, this.y, given);
    this.visMemo = { stamp: 1, seen: new Int32Array(n), val: new Uint8Array(n) };
    this.kIds = new Int32Array(this.k);
    this.kD2 = new Float64Array(this.k);
    for (let j = 0; j < BOUNDARY_COUNT; j++) {
      const set = sets[j],
        v = variograms[j];
      this.kIndex.push(set.map);
      if (v === null) {
        this.kp.push(null);
        this.kVis.push(null);
        this.variograms.push(null);
        continue;
      }
      const toField = new Int32Array(set.z.length);
      for (let i = 0; i < n; i++) if (set.map[i] >= 0) toField[set.map[i]] = i;
      const vis = this.barrier !== null ? new SwitchedBarrier(this.barrier, toField, this.visMemo) : null;
      this.kVis.push(vis);
      this.kp.push(new KrigingPredictor(set.x, set.y, set.z, v.model, { neighbors: this.k, visibility: vis, radiusKm: this.radiusKm }));
      this.variograms.push(v);
    }
  }

  /**
   * Kriged, order-corrected P̂ⱼ at (qx, qy) into out[offset + j·stride]; `faultFarKm` (when known) is the distance to
   * the nearest fault piece, so the barrier test is skipped when every neighbour lies nearer than that.
   */
  private krige(qx: number, qy: number, out: Float64Array | Float32Array, offset: number, stride: number, exclude: number, faultFarKm: number): void {
    const p = this.num; // scratch
    this.visMemo.stamp++; // a new location: forget the visibilities of the last one
    for (let j = 0; j < BOUNDARY_COUNT; j++) {
      const kp = this.kp[j];
      if (kp === null) {
        p[j] = NaN;
        continue;
      }
      const vis = this.kVis[j];
      if (vis !== null) {
        vis.on = true;
        if (faultFarKm > 0 && exclude < 0) {
          const m = kp.index.nearest(qx, qy, kp.k, this.radiusKm, this.kIds, this.kD2);
          const disk = m === kp.k ? Math.sqrt(this.kD2[m - 1]) : this.radiusKm;
          if (faultFarKm > disk) vis.on = false;
        }
      }
      const ex = exclude >= 0 ? this.kIndex[j][exclude] : -1;
      const m = kp.predict(qx, qy, this.kOut, false, ex);
      p[j] = m > 0 ? this.kOut[0] : NaN;
      if (vis !== null) vis.on = true;
    }
    correctOrderRelations(p);
    for (let j = 0; j < BOUNDARY_COUNT; j++) out[offset + j * stride] = p[j];
  }

  /** Distance (km) to the nearest visible informative sample (barriers honoured), or Infinity. */
  private nearestVisibleKm(qx: number, qy: number, exclude: number): number {
    const m = this.index.nearest(qx, qy, 1, this.radiusKm, this.nearIds, this.nearD2, this.barrier, exclude);
    return m > 0 ? Math.sqrt(this.nearD2[0]) : Infinity;
  }

  get count(): number {
    return this.x.length;
  }

  /** Fills out[0..4] from the first `n` entries of the neighbour buffers; returns the nearest distance (km). */
  private accumulate(n: number, out: Float64Array | Float32Array, outOffset: number, stride: number): number {
    const { num, den, exNum, exDen, ids, d2, lo, hi } = this;
    num.fill(0);
    den.fill(0);
    exNum.fill(0);
    exDen.fill(0);
    const half = this.power / 2,
      p2 = this.power === 2;
    let exact = false;
    for (let t = 0; t < n; t++) {
      const i = ids[t],
        dd = d2[t];
      const l = lo[i],
        h = hi[i];
      if (dd <= EXACT_D2) {
        exact = true;
        for (let j = 0; j < BOUNDARY_COUNT; j++) {
          const r = j + 1;
          if (l >= r) {
            exNum[j] += 1;
            exDen[j] += 1;
          } else if (h < r) exDen[j] += 1;
        }
        continue;
      }
      const w = p2 ? 1 / dd : Math.pow(dd, -half);
      for (let j = 0; j < BOUNDARY_COUNT; j++) {
        const r = j + 1;
        if (l >= r) {
          num[j] += w;
          den[j] += w;
        } else if (h < r) den[j] += w;
      }
    }
    for (let j = 0; j < BOUNDARY_COUNT; j++) {
      const v = exact && exDen[j] > 0 ? exNum[j] / exDen[j] : den[j] > 0 ? num[j] / den[j] : NaN;
      out[outOffset + j * stride] = v;
    }
    return n > 0 ? Math.sqrt(d2[0]) : Infinity;
  }

  /**
   * P̂ⱼ for j = 1 … 5 at (qx, qy) km into out[0..4] (NaN where no decided sample is visible); `exclude` leaves
   * informative sample `exclude` out (leave-one-out). Returns the distance (km) to the nearest visible sample.
   */
  predict(qx: number, qy: number, out: Float64Array, exclude = -1): number {
    if (this.count === 0) {
      out.fill(NaN, 0, BOUNDARY_COUNT);
      return Infinity;
    }
    if (this.method === 'kriging') {
      this.krige(qx, qy, out, 0, 1, exclude, 0);
      return this.nearestVisibleKm(qx, qy, exclude);
    }
    const n = this.index.nearest(qx, qy, this.k, this.radiusKm, this.ids, this.d2, this.barrier, exclude);
    return this.accumulate(n, out, 0, 1);
  }

  /**
   * Cap of the fault-distance grid (km): three times the typical distance of the k-th neighbour for the data
   * density over the grid, plus two cells. Any cap is correct (the stored distance is a lower bound); a larger one
   * spares barrier tests in sparse areas.
   */
  faultCapKm(g: LocalGrid): number {
    const spacing = Math.sqrt((g.width * g.height * g.cellKm * g.cellKm) / Math.max(1, this.count));
    return 3 * spacing * Math.sqrt(this.k / Math.PI) + 2 * g.cellKm;
  }

  /** Distance (km) from each cell centre to the nearest fault piece, capped at `capKm`, into `out` (fault-distance.ts). */
  faultDistanceGrid(g: LocalGrid, capKm: number, out: Float32Array): void {
    faultDistanceGrid(this.faults, g, capKm, out);
  }

  /**
   * Fills the five indicator grids (boundary-major: value of boundary j at cell i is out[(j − 1)·W·H + i]) and the
   * distance to the nearest visible sample per cell (`nearestKm`, km). Cells whose search disk holds no fault piece
   * skip the barrier test (the k nearest points are then all visible, so the result is the same).
   */
  grid(g: LocalGrid, out: Float32Array, nearestKm: Float32Array, faultDistKm?: Float32Array): void {
    const W = g.width,
      H = g.height,
      N = W * H;
    if (out.length < BOUNDARY_COUNT * N || nearestKm.length < N) throw new RangeError('indicator grid buffers too small');
    if (this.count === 0) {
      out.fill(NaN);
      nearestKm.fill(Infinity);
      return;
    }
    let fd: Float32Array | null = null;
    if (this.barrier !== null) {
      // Cap: a generous multiple of the typical k-th neighbour distance; beyond it the test is exact anyway.
      fd = faultDistKm ?? new Float32Array(N);
      if (faultDistKm === undefined) this.faultDistanceGrid(g, this.faultCapKm(g), fd);
    }
    const { ids, d2, k, radiusKm } = this;
    if (this.method === 'kriging') {
      for (let r = 0; r < H; r++) {
        const qy = g.y0 + r * g.cellKm;
        for (let c = 0; c < W; c++) {
          const qx = g.x0 + c * g.cellKm;
          const cell = r * W + c;
          const far = fd !== null ? fd[cell] : Infinity;
          this.krige(qx, qy, out, cell, N, -1, far);
          if (fd !== null && !(far > 0)) this.barrierSearches++;
          // Nearest visible sample: without the barrier test when the nearest sample is nearer than any fault.
          const m = this.index.nearest(qx, qy, 1, radiusKm, this.nearIds, this.nearD2);
          if (m === 0) {
            nearestKm[cell] = Infinity;
            continue;
          }
          const d = Math.sqrt(this.nearD2[0]);
          nearestKm[cell] = fd === null || fd[cell] > d ? d : this.nearestVisibleKm(qx, qy, -1);
        }
      }
      return;
    }
    for (let r = 0; r < H; r++) {
      const qy = g.y0 + r * g.cellKm;
      for (let c = 0; c < W; c++) {
        const qx = g.x0 + c * g.cellKm;
        const cell = r * W + c;
        let n = this.index.nearest(qx, qy, k, radiusKm, ids, d2);
        if (fd !== null) {
          const disk = n === k ? Math.sqrt(d2[n - 1]) : radiusKm;
          if (!(fd[cell] > disk)) {
            this.barrierSearches++;
            n = this.index.nearest(qx, qy, k, radiusKm, ids, d2, this.barrier);
          }
        }
        nearestKm[cell] = this.accumulate(n, out, cell, N);
      }
    }
  }
}

/**
 * The inferred rank from the five indicator values (p[0] = P̂ for biotite-in …): the largest j such that
 * P̂₁ … P̂ⱼ are all ≥ 0.5 (0 = chlorite); −1 when P̂₁ is undefined (no decided sample in reach).
 */
export function rankFromIndicators(p: ArrayLike<number>, offset = 0, stride = 1): number {
  let r = 0;
  for (let j = 0; j < BOUNDARY_COUNT; j++) {
    const v = p[offset + j * stride];
    if (Number.isNaN(v)) return j === 0 ? -1 : r;
    if (v >= 0.5) r = j + 1;
    else break;
  }
  return r;
}
