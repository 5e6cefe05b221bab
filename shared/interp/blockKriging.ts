import { RegionMask } from './mask.ts';
import { InputError } from '../errors.ts';
import { choleskyInPlace, choleskySolve } from './linalg.ts';
import { converter, lonLatToLocalKm, WGS84_DEF } from './projection.ts';
import type { PreparedInterpolation } from './interpolate.ts';
import { anisotropyMatrix, covariance, checkVariogram, type Anisotropy, type VariogramModel } from './variogram.ts';
import { driftAt, driftFrame, DriftSystem, externalDriftFrame, type DriftKind } from './drift.ts';
import { covariateAtLocal, requireCovered, type ExternalDriftGrid } from './externalDrift.ts';

/**
 * Ordinary block kriging of the mean over a polygon (Journel & Huijbregts 1978, §V.A.2; Isaaks & Srivastava 1989,
 * ch. 13): the block V is discretised into N points u_k on a regular grid inside the polygon; the point-to-block
 * covariances are C̄(xᵢ, V) = (1/N) Σ_k C(xᵢ − u_k) and the block-to-block covariance C̄(V, V) = (1/N²) Σ_k Σ_l
 * C(u_k − u_l) (C(0) = the full sill on the diagonal). The system C·λ + μ·1 = c̄, 1ᵀλ = 1 gives the block mean
 * λᵀz and its kriging variance σ²_V = C̄(V, V) − λᵀc̄ − μ. All data take part (a global neighbourhood): the block
 * estimate is then exactly the mean of the point-kriging estimates at the discretisation points.
 * Coordinates in local km (untransformed); the anisotropy map is applied inside.
 * With a drift (universal block kriging, drift.ts) the constant's row becomes the drift monomials' rows, with the
 * monomials' mean over the discretisation points on the right-hand side: C·λ + F·μ = c̄, Fᵀλ = f̄;
 * σ²_V = C̄(V, V) − λᵀc̄ − μᵀf̄.
 * With an external drift (terms 1 and the covariate s, drift.ts) f̄ holds 1 and the mean of s over the same
 * discretisation points: the block mean of a₀ + a₁·s(x) is a₀ + a₁·s̄(V), so the system is the universal one with
 * s̄(V) in place of the monomials' mean (Wackernagel 2003, ch. 37; R gstat takes the block's covariate value from
 * newdata in the same way).
 */

export interface BlockDiscretisation {
  /** Discretisation points (local km). */
  x: Float64Array;
  y: Float64Array;
  /** Grid spacing used (km). */
  spacingKm: number;
}

/**
 * Points of a regular grid inside the rings (outer rings and holes, even–odd; local km), spacing chosen so the
 * polygon's bounding box holds about `target` points (default 400) and refined until at least `minInside` (16)
 * fall inside. Returns null when the polygon is degenerate (no point inside even at 1/64 of the first spacing).
 */
export function discretisePolygon(rings: number[][][], target = 400, minInside = 16): BlockDiscretisation | null {
  let x0 = Infinity,
    x1 = -Infinity,
    y0 = Infinity,
    y1 = -Infinity;
  for (const r of rings)
    for (const p of r) {
      x0 = Math.min(x0, p[0]);
      x1 = Math.max(x1, p[0]);
      y0 = Math.min(y0, p[1]);
      y1 = Math.max(y1, p[1]);
    }
  if (!(x1 > x0 && y1 > y0)) return null;
  const mask = new RegionMask(rings);
  let h = Math.sqrt(((x1 - x0) * (y1 - y0)) / target);
  for (let attempt = 0; attempt < 7; attempt++, h /= 2) {
    const nx = Math.max(1, Math.ceil((x1 - x0) / h)),
      ny = Math.max(1, Math.ceil((y1 - y0) / h));
    const inside = new Uint8Array(nx);
    const xs: number[] = [],
      ys: number[] = [];
    for (let r = 0; r < ny; r++) {
      const y = y1 - (r + 0.5) * h;
      mask.row(y, x0, h, nx, inside);
      for (let c = 0; c < nx; c++)
        if (inside[c] === 1) {
          xs.push(x0 + (c + 0.5) * h);
          ys.push(y);
        }
    }
    if (xs.length >= minInside || (attempt === 6 && xs.length > 0)) return { x: Float64Array.from(xs), y: Float64Array.from(ys), spacingKm: h };
  }
  return null;
}

export interface BlockEstimate {
  value: number;
  sd: number;
  /** Block-to-block covariance C̄(V, V) (value units²). */
  blockVariance: number;
  points: number;
}

/** Ordinary block kriging of blocks given by their discretisations, from all data (local km). */
export class BlockKriging {
  private readonly n: number;
  private readonly L: Float64Array;
  private readonly b: Float64Array;
  private readonly s: number;
  private readonly dx: Float64Array;
  private readonly dy: Float64Array;
  private readonly z: Float64Array;
  private readonly m: [number, number, number, number];
  private readonly drift: DriftSystem | null;

  constructor(
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    private readonly model: VariogramModel,
    anisotropy: Anisotropy | null = null,
    errorVariance: Float64Array | null = null,
    trend: DriftKind = 'none',
    /** An external drift's covariate at the data (trend 'external'). */
    covariateAtData: Float64Array | null = null,
  ) {
    checkVariogram(model);
    const n = x.length;
    if (n < 1) throw new RangeError('block kriging needs at least one point');
    this.m = anisotropyMatrix(anisotropy);
    const m = this.m;
    this.dx = new Float64Array(n);
    this.dy = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      this.dx[i] = m[0] * x[i] + m[1] * y[i];
      this.dy[i] = m[2] * x[i] + m[3] * y[i];
    }
    this.z = z;
    this.n = n;
    const L = new Float64Array(n * n);
    const sill = model.nugget + model.partialSill;
    let ok = false;
    for (let attempt = 0; attempt < 5 && !ok; attempt++) {
      const jitter = attempt === 0 ? 0 : sill * Math.pow(10, -12 + 2 * attempt);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < i; j++) L[i * n + j] = covariance(model, Math.hypot(this.dx[i] - this.dx[j], this.dy[i] - this.dy[j]));
        L[i * n + i] = sill + (errorVariance === null ? 0 : errorVariance[i]) + jitter;
      }
      ok = choleskyInPlace(L, n, n);
    }
    if (!ok) throw new RangeError('the data covariance matrix is singular: block kriging cannot be solved');
    this.L = L;
    this.b = new Float64Array(n);
    choleskySolve(L, n, n, new Float64Array(n).fill(1), this.b);
    this.s = this.b.reduce((a, v) => a + v, 0);
    this.drift = null;
    if (trend === 'external' && covariateAtData?.length !== n) throw new RangeError('an external drift needs its covariate at every datum');
    if (trend !== 'none') {
      this.drift = new DriftSystem(trend === 'external' ? externalDriftFrame(covariateAtData!) : driftFrame(trend, this.dx, this.dy), n);
      if (
        !this.drift.build(
          L,
          n,
          this.dx,
          this.dy,
          z,
          Int32Array.from({ length: n }, (_, i) => i),
        )
      )
        throw new RangeError(`the ${trend} drift is singular on these points: block kriging cannot be solved`);
    }
  }

  /** The block's estimate; `covariate`: an external drift's covariate at the discretisation points (trend 'external'). */
  estimate(d: BlockDiscretisation, covariate: Float64Array | null = null): BlockEstimate {
    const { n, m, model, dx, dy } = this;
    const N = d.x.length;
    if (this.drift?.frame.kind === 'external' && covariate?.length !== N)
      throw new RangeError('an external drift needs its covariate at every discretisation point');
    const ux = new Float64Array(N),
      uy = new Float64Array(N);
    for (let k = 0; k < N; k++) {
      ux[k] = m[0] * d.x[k] + m[1] * d.y[k];
      uy[k] = m[2] * d.x[k] + m[3] * d.y[k];
    }
    const cbar = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = 0; k < N; k++) s += covariance(model, Math.hypot(dx[i] - ux[k], dy[i] - uy[k]));
      cbar[i] = s / N;
    }
    let cvv = 0;
    for (let k = 0; k < N; k++) {
      cvv += model.nugget + model.partialSill;
      for (let l = 0; l < k; l++) cvv += 2 * covariance(model, Math.hypot(ux[k] - ux[l], uy[k] - uy[l]));
    }
    cvv /= N * N;
    const w = new Float64Array(n);
    choleskySolve(this.L, n, n, cbar, w);
    let driftTerm: number;
    if (this.drift === null) {
      const mu = (w.reduce((a, v) => a + v, 0) - 1) / this.s;
      for (let i = 0; i < n; i++) w[i] -= mu * this.b[i];
      driftTerm = mu;
    } else {
      const fbar = this.blockDrift(ux, uy, covariate);
      this.drift.solveWith(cbar, n, fbar, new Float64Array(2));
      this.drift.subtractDrift(w, n);
      driftTerm = 0;
      for (let j = 0; j < this.drift.p; j++) driftTerm += this.drift.mu[j] * fbar[j];
    }
    let value = 0,
      lc = 0;
    for (let i = 0; i < n; i++) {
      value += w[i] * this.z[i];
      lc += w[i] * cbar[i];
    }
    const v = cvv - lc - driftTerm;
    return { value, sd: Math.sqrt(v > 0 ? v : 0), blockVariance: cvv, points: N };
  }

  /** The drift terms' mean over a block's discretisation points (transformed coordinates; covariate s there). */
  private blockDrift(ux: Float64Array, uy: Float64Array, s: Float64Array | null): Float64Array {
    const p = this.drift!.p;
    const fbar = new Float64Array(p),
      f = new Float64Array(p);
    for (let k = 0; k < ux.length; k++) {
      driftAt(this.drift!.frame, ux[k], uy[k], f, s === null ? NaN : s[k]);
      for (let j = 0; j < p; j++) fbar[j] += f[j] / ux.length;
    }
    return fbar;
  }
}

export interface BlockPolygon {
  id: string;
  /** Rings of [lon, lat] degrees (outer rings and holes, even–odd). */
  rings: number[][][];
}

/**
 * Block estimates of the prepared (kriging) interpolation's field over polygons: `{ id, value, sd, units }` per
 * polygon, plus the discretisation size. With an external drift the covariate grid (`externalDrift`) is read at each
 * block's discretisation points and must cover them. Throws InputError for a polygon with no area.
 */
export function blockEstimates(
  prep: PreparedInterpolation,
  polygons: BlockPolygon[],
  externalDrift: ExternalDriftGrid | null = null,
): { id: string; value: number; sd: number; units: string; discretisationPoints: number; spacingKm: number }[] {
  const plan = prep.plan;
  if (plan.method !== 'kriging' || plan.variogram === null)
    throw new InputError('block estimates need --method kriging', [{ field: 'block', problem: 'use --method kriging' }], 'bad_option');
  if (plan.x.length > plan.maxGlobal)
    throw new InputError(
      `block kriging uses all ${plan.x.length} points, above the limit of ${plan.maxGlobal}`,
      [{ field: 'block', problem: `expected at most ${plan.maxGlobal} points` }],
      'too_many_points',
    );
  const external = plan.trend === 'external';
  if (external && (!externalDrift || !plan.covariate))
    throw new RangeError('block estimates with an external drift need its covariate grid and its values at the data');
  const bk = new BlockKriging(
    plan.x,
    plan.y,
    plan.z,
    plan.variogram,
    plan.anisotropy,
    plan.errorVariance,
    plan.trend ?? 'none',
    plan.covariate?.atData ?? null,
  );
  return polygons.map((poly) => {
    const rings = poly.rings.map((ring) => {
      const lon = ring.map((p) => p[0]),
        lat = ring.map((p) => p[1]);
      const x = new Float64Array(ring.length),
        y = new Float64Array(ring.length);
      lonLatToLocalKm(plan.projection, lon, lat, x, y);
      return Array.from(x, (v, i) => [v, y[i]]);
    });
    const d = discretisePolygon(rings);
    if (d === null)
      throw new InputError(
        `block ${poly.id} has no area to estimate over`,
        [{ feature: poly.id, field: 'geometry', problem: 'expected a polygon with a non-zero area' }],
        'bad_geometry',
      );
    let s: Float64Array | null = null;
    if (external) {
      s = covariateAtLocal(externalDrift!, plan.projection, d.x, d.y);
      const toLonLat = converter(plan.projection.def, WGS84_DEF);
      requireCovered(externalDrift!, s, 'discretisation points of the blocks', (i) => {
        const [lo, la] = toLonLat.forward([d.x[i], d.y[i]]);
        return `block ${poly.id} at lon ${lo.toFixed(5)}, lat ${la.toFixed(5)}`;
      });
    }
    const e = bk.estimate(d, s);
    return { id: poly.id, value: e.value, sd: e.sd, units: prep.units, discretisationPoints: e.points, spacingKm: d.spacingKm };
  });
}
