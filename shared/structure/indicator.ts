/**
 * Indicator surfaces for isograds: for each zone boundary j (the isograd opening rank j = 1 … 5), the estimated
 * probability that the grade is at or above rank j, by inverse-distance weighting of the sample indicators
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
import { pointSegmentDistance2 } from '../grid/segment.ts';
import { NeighbourIndex } from '../interp/neighbours.ts';
import { FaultBarrier } from '../interp/barriers.ts';
import { EXACT_KM } from '../interp/idw.ts';
import { MAX_RANK } from './grade.ts';

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
  /** IDW power p (default 2). */
  power?: number;
  /** Nearest visible informative samples per location (default 12). */
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

  /**
   * @param x, y sample positions, local km
   * @param lo, hi rank intervals (−1 = no zone information: the sample is skipped)
   */
  constructor(x: ArrayLike<number>, y: ArrayLike<number>, lo: ArrayLike<number>, hi: ArrayLike<number>, opts: IndicatorOptions = {}) {
    this.power = opts.power ?? 2;
    if (!(this.power > 0 && Number.isFinite(this.power))) throw new RangeError(`IDW power must be a positive number, got ${this.power}`);
    const k = opts.neighbors ?? 12;
    if (!(k >= 1)) throw new RangeError(`at least one neighbour is needed, got ${k}`);
    this.radiusKm = opts.radiusKm ?? Infinity;
    if (!(this.radiusKm > 0)) throw new RangeError(`search radius must be > 0 km, got ${this.radiusKm}`);
    const keep: number[] = [];
    for (let i = 0; i < x.length; i++) if (lo[i] >= 0 && hi[i] >= lo[i] && Number.isFinite(x[i]) && Number.isFinite(y[i])) keep.push(i);
    const n = keep.length;
    this.x = new Float64Array(n); this.y = new Float64Array(n);
    this.lo = new Int8Array(n); this.hi = new Int8Array(n);
    this.source = Int32Array.from(keep);
    for (let t = 0; t < n; t++) {
      const i = keep[t];
      this.x[t] = x[i]; this.y[t] = y[i]; this.lo[t] = lo[i]; this.hi[t] = hi[i];
    }
    this.k = Math.max(1, Math.min(k, n));
    this.index = new NeighbourIndex(this.x, this.y);
    this.faults = opts.faults !== undefined && opts.faults !== null && opts.faults.length >= 4 ? opts.faults : null;
    this.barrier = this.faults !== null ? new FaultBarrier(this.faults, this.x, this.y) : null;
    this.ids = new Int32Array(this.k);
    this.d2 = new Float64Array(this.k);
  }

  get count(): number {
    return this.x.length;
  }

  /** Fills out[0..4] from the first `n` entries of the neighbour buffers; returns the nearest distance (km). */
  private accumulate(n: number, out: Float64Array | Float32Array, outOffset: number, stride: number): number {
    const { num, den, exNum, exDen, ids, d2, lo, hi } = this;
    num.fill(0); den.fill(0); exNum.fill(0); exDen.fill(0);
    const half = this.power / 2, p2 = this.power === 2;
    let exact = false;
    for (let t = 0; t < n; t++) {
      const i = ids[t], dd = d2[t];
      const l = lo[i], h = hi[i];
      if (dd <= EXACT_D2) {
        exact = true;
        for (let j = 0; j < BOUNDARY_COUNT; j++) {
          const r = j + 1;
          if (l >= r) { exNum[j] += 1; exDen[j] += 1; } else if (h < r) exDen[j] += 1;
        }
        continue;
      }
      const w = p2 ? 1 / dd : Math.pow(dd, -half);
      for (let j = 0; j < BOUNDARY_COUNT; j++) {
        const r = j + 1;
        if (l >= r) { num[j] += w; den[j] += w; } else if (h < r) den[j] += w;
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
    if (this.count === 0) { out.fill(NaN, 0, BOUNDARY_COUNT); return Infinity; }
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

  /**
   * Distance (km) from each cell centre to the nearest fault piece, capped at `capKm` (cells farther away hold
   * capKm, a lower bound), into `out`. Brute force over each piece's neighbourhood of cells.
   */
  faultDistanceGrid(g: LocalGrid, capKm: number, out: Float32Array): void {
    out.fill(capKm);
    const f = this.faults;
    if (f === null) return;
    const W = g.width, H = g.height, s = g.cellKm;
    const cap2 = capKm * capKm;
    for (let q = 0; q + 3 < f.length; q += 4) {
      const ax = f[q], ay = f[q + 1], bx = f[q + 2], by = f[q + 3];
      const c0 = Math.max(0, Math.floor((Math.min(ax, bx) - capKm - g.x0) / s));
      const c1 = Math.min(W - 1, Math.ceil((Math.max(ax, bx) + capKm - g.x0) / s));
      const r0 = Math.max(0, Math.floor((Math.min(ay, by) - capKm - g.y0) / s));
      const r1 = Math.min(H - 1, Math.ceil((Math.max(ay, by) + capKm - g.y0) / s));
      for (let r = r0; r <= r1; r++) {
        const py = g.y0 + r * s;
        for (let c = c0; c <= c1; c++) {
          const d2 = pointSegmentDistance2(g.x0 + c * s, py, ax, ay, bx, by);
          if (d2 < cap2) {
            const d = Math.sqrt(d2);
            if (d < out[r * W + c]) out[r * W + c] = d;
          }
        }
      }
    }
  }

  /**
   * Fills the five indicator grids (boundary-major: value of boundary j at cell i is out[(j − 1)·W·H + i]) and the
   * distance to the nearest visible sample per cell (`nearestKm`, km). Cells whose search disk holds no fault piece
   * skip the barrier test (the k nearest points are then all visible, so the result is the same).
   */
  grid(g: LocalGrid, out: Float32Array, nearestKm: Float32Array, faultDistKm?: Float32Array): void {
    const W = g.width, H = g.height, N = W * H;
    if (out.length < BOUNDARY_COUNT * N || nearestKm.length < N) throw new RangeError('indicator grid buffers too small');
    if (this.count === 0) { out.fill(NaN); nearestKm.fill(Infinity); return; }
    let fd: Float32Array | null = null;
    if (this.barrier !== null) {
      // Cap: a generous multiple of the typical k-th neighbour distance; beyond it the test is exact anyway.
      fd = faultDistKm ?? new Float32Array(N);
      if (faultDistKm === undefined) this.faultDistanceGrid(g, this.faultCapKm(g), fd);
    }
    const { ids, d2, k, radiusKm } = this;
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
    if (v >= 0.5) r = j + 1; else break;
  }
  return r;
}
