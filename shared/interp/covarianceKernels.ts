import { expNonPositive } from './fast-exp.ts';

/**
 * The hot loops of the kriging predictor: covariance vectors c₀ᵢ = C(|xᵢ − q|) for one location, one loop per model
 * (no per-point branch on the model). Models in the practical-range convention (variogram.ts; DESIGN.md §3):
 * code 0 spherical, 1 exponential, 2 Gaussian; C(h) = partial sill · ρ(h) for h > 0 and the full sill at h = 0.
 */

/** Covariance model parameters as the kernels read them (value units², km). */
export interface CovarianceParams {
  code: number;
  psill: number;
  sill: number;
  rangeKm: number;
}

/** c₀[i] = C(|x[ids[i]] − q|) for i < n into `out` (distances in km). */
export function covarianceVector(
  p: CovarianceParams,
  x: Float64Array,
  y: Float64Array,
  ids: Int32Array,
  n: number,
  qx: number,
  qy: number,
  out: Float64Array,
): void {
  const { psill, sill, code } = p;
  if (code === 1) {
    const f = -3 / p.rangeKm;
    for (let i = 0; i < n; i++) {
      const a = ids[i];
      const dx = x[a] - qx,
        dy = y[a] - qy;
      const h = Math.sqrt(dx * dx + dy * dy);
      out[i] = h > 0 ? psill * Math.exp(f * h) : sill;
    }
  } else if (code === 2) {
    const f = -3 / (p.rangeKm * p.rangeKm);
    for (let i = 0; i < n; i++) {
      const a = ids[i];
      const dx = x[a] - qx,
        dy = y[a] - qy;
      const h2 = dx * dx + dy * dy;
      out[i] = h2 > 0 ? psill * Math.exp(f * h2) : sill;
    }
  } else {
    const inv = 1 / p.rangeKm;
    for (let i = 0; i < n; i++) {
      const a = ids[i];
      const dx = x[a] - qx,
        dy = y[a] - qy;
      const h = Math.sqrt(dx * dx + dy * dy);
      const r = h * inv;
      out[i] = h > 0 ? (r < 1 ? psill * (1 - 1.5 * r + 0.5 * r * r * r) : 0) : sill;
    }
  }
}

/**
 * The sums Σ c₀ᵢ·bᵢ and Σ c₀ᵢ·wᵢ over every point in index order (the global "dual" form of ordinary kriging), in
 * one pass without storing c₀, with e^t from a table (fast-exp.ts, relative error < 1e-12). Writes [cb, cw] into
 * `out` and returns true; returns false for a model other than exponential or Gaussian (the caller takes the
 * general path).
 */
export function globalDualSums(
  p: CovarianceParams,
  x: Float64Array,
  y: Float64Array,
  b: Float64Array,
  w: Float64Array,
  n: number,
  qx: number,
  qy: number,
  out: Float64Array,
): boolean {
  const { psill, sill } = p;
  let cb = 0,
    cw = 0;
  if (p.code === 1) {
    const f = -3 / p.rangeKm;
    for (let i = 0; i < n; i++) {
      const dx = x[i] - qx,
        dy = y[i] - qy;
      const h = Math.sqrt(dx * dx + dy * dy);
      const c = h > 0 ? psill * expNonPositive(f * h) : sill;
      cb += c * b[i];
      cw += c * w[i];
    }
  } else if (p.code === 2) {
    const f = -3 / (p.rangeKm * p.rangeKm);
    for (let i = 0; i < n; i++) {
      const dx = x[i] - qx,
        dy = y[i] - qy;
      const h2 = dx * dx + dy * dy;
      const c = h2 > 0 ? psill * expNonPositive(f * h2) : sill;
      cb += c * b[i];
      cw += c * w[i];
    }
  } else return false;
  out[0] = cb;
  out[1] = cw;
  return true;
}
