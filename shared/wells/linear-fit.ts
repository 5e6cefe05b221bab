/**
 * Weighted straight-line least squares y = a + b·x with per-point standard deviations, the parameter covariance
 * and internally studentized residuals. Used for the Horner line, temperature–depth gradients and the Bullard plot.
 */

/** How the parameter covariance is scaled by the scatter about the line. */
export type CovarianceScale =
  /** (XᵀWX)⁻¹ as it is: the stated σ are taken as exact (no scatter estimate). */
  | 'none'
  /** (XᵀWX)⁻¹ · χ²/(n − 2): the classical least-squares standard errors (σ are relative weights only). */
  | 'residual'
  /** (XᵀWX)⁻¹ · max(1, χ²/(n − 2)): σ are absolute, but a scatter larger than they allow widens the errors
   * (the "Birge ratio" scaling); never narrows them. */
  | 'birge';

export interface LineFit {
  /** Intercept a (value of y at x = 0), in y's units. */
  intercept: number;
  /** Slope b, in y's units per x unit. */
  slope: number;
  seIntercept: number;
  seSlope: number;
  /** Covariance of (a, b) after scaling. */
  covInterceptSlope: number;
  /** Σ wᵢ rᵢ², wᵢ = 1/σᵢ². */
  chi2: number;
  /** n − 2 (0 when the line goes exactly through two points). */
  dof: number;
  /** Residuals yᵢ − (a + b·xᵢ). */
  residuals: Float64Array;
  /** Internally studentized residuals rᵢ / (σᵢ·√(1 − hᵢᵢ)) with the weighted hat-matrix leverage hᵢᵢ (NaN where
   * hᵢᵢ ≈ 1, i.e. a point the line must pass through, whose residual says nothing). */
  standardized: Float64Array;
}

/**
 * Fits y = a + b·x by weighted least squares (weights 1/σᵢ²), the textbook normal equations written about the
 * weighted mean of x for numerical stability (e.g. Press et al., Numerical Recipes, §15.2 "Fitting data to a
 * straight line"). Needs at least two distinct x values; returns null otherwise (the slope is undefined).
 * `include` (optional, 1 = use) leaves points out of the fit; their residuals are still computed, and their
 * standardized residual is the prediction residual r / (σ·√(1 + h)).
 */
export function fitLine(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  sd: ArrayLike<number>,
  scale: CovarianceScale,
  include?: ArrayLike<number>,
): LineFit | null {
  const n = x.length;
  if (y.length !== n || sd.length !== n) throw new RangeError('fitLine: x, y and sd must have the same length');
  const m = weightedMeans(x, y, sd, include);
  if (m.used < 2) return null;
  const { sw, xm, ym, used } = m;
  let sxx = 0;
  let sxy = 0;
  for (let i = 0; i < n; i++) {
    if (include && include[i] !== 1) continue;
    const w = 1 / (sd[i] * sd[i]);
    const dx = x[i] - xm;
    sxx += w * dx * dx;
    sxy += w * dx * (y[i] - ym);
  }
  // Distinct x values: a spread below 1e-12 of the x scale is numerically a single x.
  const xScale = Math.max(Math.abs(xm), 1e-300);
  if (!(sxx / sw > 1e-24 * xScale * xScale)) return null;
  const slope = sxy / sxx;
  const intercept = ym - slope * xm;
  const residuals = new Float64Array(n);
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i] - (intercept + slope * x[i]);
    residuals[i] = r;
    if (include && include[i] !== 1) continue;
    chi2 += (r * r) / (sd[i] * sd[i]);
  }
  const dof = used - 2;
  let f = 1;
  if (scale === 'residual') f = dof > 0 ? chi2 / dof : NaN;
  else if (scale === 'birge') f = dof > 0 ? Math.max(1, chi2 / dof) : 1;
  // Unscaled covariance about the weighted mean: var(b) = 1/Sxx, var(a) = 1/Sw + xm²/Sxx, cov = −xm/Sxx.
  const varB = 1 / sxx;
  const varA = 1 / sw + (xm * xm) / sxx;
  return {
    intercept,
    slope,
    seIntercept: Math.sqrt(varA * f),
    seSlope: Math.sqrt(varB * f),
    covInterceptSlope: (-xm / sxx) * f,
    chi2,
    dof,
    residuals,
    standardized: studentized(x, sd, residuals, { sw, xm, sxx }, include),
  };
}

/** Σw, the weighted means of x and y (w = 1/σ²) and the number of points in the fit; checks each point used. */
function weightedMeans(x: ArrayLike<number>, y: ArrayLike<number>, sd: ArrayLike<number>, include?: ArrayLike<number>) {
  let sw = 0;
  let swx = 0;
  let swy = 0;
  let used = 0;
  for (let i = 0; i < x.length; i++) {
    if (include && include[i] !== 1) continue;
    const s = sd[i];
    if (!(s > 0) || !Number.isFinite(x[i]) || !Number.isFinite(y[i])) throw new RangeError(`fitLine: point ${i} needs finite x, y and σ > 0`);
    const w = 1 / (s * s);
    sw += w;
    swx += w * x[i];
    swy += w * y[i];
    used++;
  }
  return { sw, xm: swx / sw, ym: swy / sw, used };
}

/**
 * Studentized residuals with the weighted hat-matrix leverage hᵢᵢ = wᵢ·(1/Σw + (xᵢ − x̄)²/Sxx): rᵢ/(σᵢ·√(1 − hᵢᵢ))
 * for a point in the fit, the prediction residual rᵢ/(σᵢ·√(1 + hᵢᵢ)) for a point left out.
 */
function studentized(
  x: ArrayLike<number>,
  sd: ArrayLike<number>,
  residuals: Float64Array,
  { sw, xm, sxx }: { sw: number; xm: number; sxx: number },
  include?: ArrayLike<number>,
): Float64Array {
  const standardized = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) {
    const inFit = !include || include[i] === 1;
    const w = 1 / (sd[i] * sd[i]);
    const dx = x[i] - xm;
    const h = w * (1 / sw + (dx * dx) / sxx);
    if (!inFit) {
      // A left-out point: prediction residual, variance σ² + var(ŷ) = σ²(1 + h).
      standardized[i] = residuals[i] / (sd[i] * Math.sqrt(1 + h));
      continue;
    }
    // 1 − h below 1e-9: the point fixes the line (e.g. two points); its residual is zero by construction.
    standardized[i] = 1 - h > 1e-9 ? residuals[i] / (sd[i] * Math.sqrt(1 - h)) : NaN;
  }
  return standardized;
}
