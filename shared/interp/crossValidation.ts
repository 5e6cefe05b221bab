import type { KrigingPredictor } from './kriging.ts';
import type { IdwPredictor } from './idw.ts';
import { choleskyInPlace, choleskySolve, dot } from './linalg.ts';
import { covariance, type VariogramModel } from './variogram.ts';
import { driftAtDatum, driftTerms, type DriftFrame } from './drift.ts';

/**
 * Leave-one-out cross-validation: each point is predicted from the others with the same method and
 * neighbourhood. Summary statistics as in Isaaks & Srivastava (1989, ch. 15) and, for kriging, the standardized
 * errors of Journel & Huijbregts (1978): mean standardized error ≈ 0 and mean squared deviation ratio
 * MSDR = mean((r/σ)²) ≈ 1 when the kriging variance is honest. For a global neighbourhood without barriers the
 * closed form of Dubrule (1983) gives all N leave-one-out residuals from one factorization:
 * rᵢ = [K⁻¹z̃]ᵢ / [K⁻¹]ᵢᵢ and σᵢ² = 1/[K⁻¹]ᵢᵢ, K the bordered kriging matrix (bordered by the constant, or by
 * the drift monomials for universal kriging).
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
  drift: DriftFrame | null = null,
): CrossValidation {
  const n = x.length;
  if (p.global && !hasBarrier && radiusKm === Infinity && n >= 3) {
    const r = dubrule(x, y, z, model, errorVariance, drift);
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
    const m = p.predict(x[i], y[i], out, true, i, drift?.covariate?.atData[i] ?? NaN);
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
 * Dubrule (1983) leave-one-out residuals for global kriging: with C = L·Lᵀ, the drift matrix F (the constant for
 * ordinary kriging), B = C⁻¹F, S = FᵀB, the bordered inverse's top-left block is C⁻¹ − B·S⁻¹·Bᵀ, so
 * [K⁻¹]ᵢᵢ = (C⁻¹)ᵢᵢ − bᵢᵀS⁻¹bᵢ (bᵢ the i-th row of B) and [K⁻¹z̃]ᵢ = (C⁻¹z)ᵢ − bᵢᵀS⁻¹(Bᵀz). Returns null if C or
 * S is not positive definite.
 */
export function dubrule(
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  model: VariogramModel,
  ev: Float64Array | null,
  drift: DriftFrame | null = null,
): { residual: Float64Array; sd: Float64Array } | null {
  const n = x.length;
  const L = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) L[i * n + j] = covariance(model, Math.sqrt((x[i] - x[j]) ** 2 + (y[i] - y[j]) ** 2));
    L[i * n + i] = model.nugget + model.partialSill + (ev === null ? 0 : ev[i]);
  }
  if (!choleskyInPlace(L, n, n)) return null;
  const frame: DriftFrame = drift ?? { kind: 'none', cxKm: 0, cyKm: 0, scaleKm: 1 };
  const p = driftTerms(frame.kind);
  if (n <= p) return null;
  // B = C⁻¹F column by column, S = FᵀB, g = Bᵀz, w = C⁻¹z.
  const F = new Float64Array(n * p),
    row = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    driftAtDatum(frame, x, y, i, row);
    for (let j = 0; j < p; j++) F[j * n + i] = row[j];
  }
  const B = new Float64Array(n * p);
  for (let j = 0; j < p; j++) choleskySolve(L, n, n, F.subarray(j * n, (j + 1) * n), B.subarray(j * n, (j + 1) * n));
  const w = new Float64Array(n);
  choleskySolve(L, n, n, z, w);
  const S = new Float64Array(p * p),
    g = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    g[j] = dot(B.subarray(j * n, (j + 1) * n), z, n);
    for (let k = 0; k < p; k++) S[j * p + k] = dot(F.subarray(j * n, (j + 1) * n), B.subarray(k * n, (k + 1) * n), n);
  }
  if (!choleskyInPlace(S, p, p, 1e-12)) return null;
  const sg = new Float64Array(p);
  choleskySolve(S, p, p, g, sg);
  const diag = inverseDiagonal(L, n);
  const residual = new Float64Array(n),
    sd = new Float64Array(n),
    bi = new Float64Array(p),
    sbi = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < p; j++) bi[j] = B[j * n + i];
    choleskySolve(S, p, p, bi, sbi);
    const aii = diag[i] - dot(bi, sbi, p);
    residual[i] = (w[i] - dot(bi, sg, p)) / aii;
    sd[i] = Math.sqrt(1 / aii);
  }
  return { residual, sd };
}

/** diag(C⁻¹) from C's Cholesky factor L: column sums of squares of L⁻¹ (column j solves L·v = e_j; zero above j). */
function inverseDiagonal(L: Float64Array, n: number): Float64Array {
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
  return diag;
}
