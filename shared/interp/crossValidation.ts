import type { KrigingPredictor } from './kriging.ts';
import type { IdwPredictor } from './idw.ts';
import { choleskyInPlace, choleskySolve, dot } from './linalg.ts';
import { covariance, type VariogramModel } from './variogram.ts';

/**
 * Leave-one-out cross-validation: each point is predicted from the others with the same method and
 * neighbourhood. Summary statistics as in Isaaks & Srivastava (1989, ch. 15) and, for kriging, the standardized
 * errors of Journel & Huijbregts (1978): mean standardized error ≈ 0 and mean squared deviation ratio
 * MSDR = mean((r/σ)²) ≈ 1 when the kriging variance is honest. For a global neighbourhood without barriers the
 * closed form of Dubrule (1983) gives all N leave-one-out residuals from one factorization:
 * rᵢ = [K⁻¹z̃]ᵢ / [K⁻¹]ᵢᵢ and σᵢ² = 1/[K⁻¹]ᵢᵢ, K the bordered kriging matrix.
 */

export interface CvResidual {
  id: string;
  observed: number;
  predicted: number;
  /** Standard deviation of the prediction error (kriging; includes the point's measurement error); null for IDW. */
  sd: number | null;
  /** observed − predicted. */
  residual: number;
}

export interface CrossValidation {
  method: 'idw' | 'kriging';
  n: number;
  /** Points that could not be predicted (no visible neighbour): left out of the statistics. */
  unpredicted: number;
  meanError: number;
  rmse: number;
  meanStandardizedError: number | null;
  meanSquaredDeviationRatio: number | null;
  residuals: CvResidual[];
}

/** Summary statistics of residuals (NaN-free inputs). */
export function summarize(method: 'idw' | 'kriging', res: CvResidual[], unpredicted: number): CrossValidation {
  let se = 0,
    sse = 0,
    sz = 0,
    szz = 0,
    nz = 0;
  for (const r of res) {
    se += r.residual;
    sse += r.residual * r.residual;
    if (r.sd !== null && r.sd > 0) {
      const t = r.residual / r.sd;
      sz += t;
      szz += t * t;
      nz++;
    }
  }
  const n = res.length;
  return {
    method,
    n,
    unpredicted,
    meanError: n > 0 ? se / n : NaN,
    rmse: n > 0 ? Math.sqrt(sse / n) : NaN,
    meanStandardizedError: nz > 0 ? sz / nz : null,
    meanSquaredDeviationRatio: nz > 0 ? szz / nz : null,
    residuals: res,
  };
}

/** Leave-one-out IDW (same predictor, each point excluded in turn). Coordinates km. */
export function crossValidateIdw(ids: string[], x: Float64Array, y: Float64Array, z: Float64Array, p: IdwPredictor): CrossValidation {
  const res: CvResidual[] = [];
  let un = 0;
  for (let i = 0; i < x.length; i++) {
    const v = p.predict(x[i], y[i], i);
    if (!Number.isFinite(v)) {
      un++;
      continue;
    }
    res.push({ id: ids[i], observed: z[i], predicted: v, sd: null, residual: z[i] - v });
  }
  return summarize('idw', res, un);
}

/**
 * Leave-one-out kriging. `x`, `y` are the predictor's own (anisotropy-transformed) coordinates. Global
 * neighbourhoods without barriers use Dubrule's closed form; otherwise each point is predicted from its
 * neighbourhood among the others.
 */
export function crossValidateKriging(
  ids: string[],
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  p: KrigingPredictor,
  model: VariogramModel,
  errorVariance: Float64Array | null,
  hasBarrier: boolean,
  radiusKm = Infinity,
): CrossValidation {
  const n = x.length;
  if (p.global && !hasBarrier && radiusKm === Infinity && n >= 3) {
    const r = dubrule(x, y, z, model, errorVariance);
    if (r !== null) {
      const res: CvResidual[] = [];
      for (let i = 0; i < n; i++) res.push({ id: ids[i], observed: z[i], predicted: z[i] - r.residual[i], sd: r.sd[i], residual: r.residual[i] });
      return summarize('kriging', res, 0);
    }
  }
  const out = new Float64Array(2);
  const res: CvResidual[] = [];
  let un = 0;
  for (let i = 0; i < n; i++) {
    const m = p.predict(x[i], y[i], out, true, i);
    if (m === 0 || !Number.isFinite(out[0])) {
      un++;
      continue;
    }
    const ev = errorVariance === null ? 0 : errorVariance[i];
    const sd = Math.sqrt(out[1] * out[1] + ev);
    res.push({ id: ids[i], observed: z[i], predicted: out[0], sd, residual: z[i] - out[0] });
  }
  return summarize('kriging', res, un);
}

/**
 * Dubrule (1983) leave-one-out residuals for global ordinary kriging: with C = L·Lᵀ, b = C⁻¹1, s = 1ᵀb,
 * the bordered inverse's top-left block is C⁻¹ − b·bᵀ/s, so [K⁻¹]ᵢᵢ = (C⁻¹)ᵢᵢ − bᵢ²/s and
 * [K⁻¹z̃]ᵢ = (C⁻¹z)ᵢ − bᵢ·(bᵀz)/s. Returns null if C is not positive definite.
 */
export function dubrule(
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  model: VariogramModel,
  ev: Float64Array | null,
): { residual: Float64Array; sd: Float64Array } | null {
  const n = x.length;
  const L = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) L[i * n + j] = covariance(model, Math.sqrt((x[i] - x[j]) ** 2 + (y[i] - y[j]) ** 2));
    L[i * n + i] = model.nugget + model.partialSill + (ev === null ? 0 : ev[i]);
  }
  if (!choleskyInPlace(L, n, n)) return null;
  const b = new Float64Array(n),
    w = new Float64Array(n),
    ones = new Float64Array(n).fill(1);
  choleskySolve(L, n, n, ones, b);
  choleskySolve(L, n, n, z, w);
  const s = dot(b, ones, n),
    bz = dot(b, z, n);
  // diag(C⁻¹) = column sums of squares of L⁻¹; column j of L⁻¹ solves L·v = e_j (entries above j are zero).
  const diag = new Float64Array(n);
  const v = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    v[j] = 1 / L[j * n + j];
    let acc = v[j] * v[j];
    for (let i = j + 1; i < n; i++) {
      const ri = i * n;
      let t = 0;
      for (let k = j; k < i; k++) t -= L[ri + k] * v[k];
      v[i] = t / L[ri + i];
      acc += v[i] * v[i];
    }
    diag[j] = acc;
  }
  const residual = new Float64Array(n),
    sd = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const aii = diag[i] - (b[i] * b[i]) / s;
    residual[i] = (w[i] - (b[i] * bz) / s) / aii;
    sd[i] = Math.sqrt(1 / aii);
  }
  return { residual, sd };
}
