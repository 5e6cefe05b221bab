import { NeighbourIndex, type VisibilityTest } from './neighbours.ts';

/**
 * Inverse-distance weighting, Shepard (1968): û(x) = Σ wᵢuᵢ / Σ wᵢ with wᵢ = qᵢ·dᵢ^(−p), qᵢ an optional
 * per-point weight (e.g. from data quality). Exact at data points: a location closer than EXACT_KM to one or more
 * points takes their (q-weighted) mean, so an exact hit is never NaN. The estimate always lies within the range of
 * the values used.
 */

/** Distance (km) below which a location counts as on a data point: 1 µm, far below any survey precision. */
export const EXACT_KM = 1e-9;
const EXACT_D2 = EXACT_KM * EXACT_KM;

export interface IdwOptions {
  /** Power p > 0 (default 2). */
  power?: number;
  /** Nearest points used; Infinity = all (global). Default 12. */
  neighbors?: number;
  /** Only points within this distance (km); default unlimited. */
  radiusKm?: number;
  /** Per-point multipliers qᵢ ≥ 0 (e.g. quality); default 1 for all. */
  pointWeights?: Float64Array | null;
  /** Points a location may not see (fault barriers). */
  visibility?: VisibilityTest | null;
}

/** IDW at locations in local km, reusing one neighbour search buffer. */
export class IdwPredictor {
  readonly power: number;
  readonly k: number;
  readonly radiusKm: number;
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly z: Float64Array;
  private readonly q: Float64Array | null;
  private readonly vis: VisibilityTest | null;
  private readonly index: NeighbourIndex;
  private readonly ids: Int32Array;
  private readonly d2: Float64Array;
  /** Locations with no usable point (radius, barriers): NaN there. */
  emptyCount = 0;

  constructor(x: Float64Array, y: Float64Array, z: Float64Array, opts: IdwOptions = {}, index?: NeighbourIndex) {
    this.power = opts.power ?? 2;
    if (!(this.power > 0) || !Number.isFinite(this.power)) throw new RangeError(`IDW power must be a positive number, got ${this.power}`);
    const k = opts.neighbors ?? 12;
    if (!(k >= 1)) throw new RangeError(`IDW needs at least one neighbour, got ${k}`);
    this.k = Math.min(k, x.length);
    this.radiusKm = opts.radiusKm ?? Infinity;
    if (!(this.radiusKm > 0)) throw new RangeError(`search radius must be > 0 km, got ${this.radiusKm}`);
    this.x = x;
    this.y = y;
    this.z = z;
    this.q = opts.pointWeights ?? null;
    this.vis = opts.visibility ?? null;
    this.index = index ?? new NeighbourIndex(x, y);
    this.ids = new Int32Array(Math.max(1, this.k));
    this.d2 = new Float64Array(Math.max(1, this.k));
  }

  /** Estimate at (qx, qy) km; `exclude` leaves one point out (cross-validation). NaN only when no point qualifies. */
  predict(qx: number, qy: number, exclude = -1): number {
    const p = this.power,
      half = p / 2;
    const q = this.q;
    const r2 = this.radiusKm * this.radiusKm;
    let sw = 0,
      swz = 0,
      exW = 0,
      exWZ = 0,
      exN = 0,
      used = 0;
    if (this.k >= this.x.length) {
      // Global: every (visible) point.
      const { x, y, z } = this;
      for (let i = 0; i < x.length; i++) {
        if (i === exclude) continue;
        const dx = x[i] - qx,
          dy = y[i] - qy;
        const d2 = dx * dx + dy * dy;
        if (d2 > r2) continue;
        if (this.vis !== null && !this.vis.visible(qx, qy, i)) continue;
        const qi = q === null ? 1 : q[i];
        used++;
        if (d2 <= EXACT_D2) {
          exW += qi;
          exWZ += qi * z[i];
          exN++;
          continue;
        }
        const w = qi * (p === 2 ? 1 / d2 : Math.pow(d2, -half));
        sw += w;
        swz += w * z[i];
      }
    } else {
      const n = this.index.nearest(qx, qy, this.k, this.radiusKm, this.ids, this.d2, this.vis, exclude);
      used = n;
      for (let t = 0; t < n; t++) {
        const i = this.ids[t],
          d2 = this.d2[t];
        const qi = q === null ? 1 : q[i];
        if (d2 <= EXACT_D2) {
          exW += qi;
          exWZ += qi * this.z[i];
          exN++;
          continue;
        }
        const w = qi * (p === 2 ? 1 / d2 : Math.pow(d2, -half));
        sw += w;
        swz += w * this.z[i];
      }
    }
    if (used === 0) {
      this.emptyCount++;
      return NaN;
    }
    if (exN > 0) return exW > 0 ? exWZ / exW : meanExact(this, qx, qy, exclude);
    if (!(sw > 0)) {
      this.emptyCount++;
      return NaN;
    } // all multipliers zero
    return swz / sw;
  }
}

/** Exact hits whose multipliers are all zero: the plain mean of the coincident values. */
function meanExact(p: IdwPredictor, qx: number, qy: number, exclude: number): number {
  const self = p as unknown as { x: Float64Array; y: Float64Array; z: Float64Array };
  let s = 0,
    n = 0;
  for (let i = 0; i < self.x.length; i++) {
    if (i === exclude) continue;
    const dx = self.x[i] - qx,
      dy = self.y[i] - qy;
    if (dx * dx + dy * dy <= EXACT_D2) {
      s += self.z[i];
      n++;
    }
  }
  return s / n;
}
