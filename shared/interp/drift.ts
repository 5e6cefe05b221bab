import { pointEnvelope } from './envelope.ts';
import { choleskyInPlace, choleskySolve, dot } from './linalg.ts';

/**
 * Polynomial drift in the coordinates for universal kriging (Matheron 1969, "Le krigeage universel"; Goovaerts
 * 1997, Geostatistics for Natural Resources Evaluation, §5.3 "kriging with a trend model"; Wackernagel 2003,
 * Multivariate Geostatistics, ch. 37). The mean is m(x) = Σⱼ aⱼ·fⱼ(x) with unknown aⱼ and the monomials
 *   none: 1;  linear: 1, x, y;  quadratic: 1, x, y, x², x·y, y².
 * The kriging system borders the covariance matrix with the drift: [C F; Fᵀ 0]·[λ; μ] = [c₀; f₀].
 * Coordinates enter centred and scaled (u = (x − cx)/s, v = (y − cy)/s) only to keep the system well conditioned:
 * a linear change of the monomials' basis leaves the estimate and the variance unchanged, as does any linear
 * map of the coordinates (e.g. the anisotropy map), since it keeps the space of linear or quadratic functions.
 */

export const TREND_KINDS = ['none', 'linear', 'quadratic'] as const;
export type TrendKind = (typeof TREND_KINDS)[number];
/**
 * A drift: a polynomial in the coordinates, or 'external': kriging with an external drift (Wackernagel 2003, ch. 37;
 * Goovaerts 1997, §6.3.3), whose terms are 1 and a covariate s(x) known at the data and at every location
 * estimated (e.g. a sediment-thickness grid), m(x) = a₀ + a₁·s(x).
 */
export type DriftKind = TrendKind | 'external';

/** Number of drift terms (1 for none: the ordinary-kriging constant; 2 for an external drift: 1 and s). */
export function driftTerms(kind: DriftKind): number {
  return kind === 'quadratic' ? 6 : kind === 'linear' ? 3 : kind === 'external' ? 2 : 1;
}

/**
 * A drift in coordinates centred on (cxKm, cyKm) and divided by scaleKm; an external drift carries its covariate at
 * the data (indexed as the predictor's points) with the centre and scale it enters with. Structured-cloneable.
 */
export interface DriftFrame {
  kind: DriftKind;
  cxKm: number;
  cyKm: number;
  scaleKm: number;
  covariate?: { atData: Float64Array; mean: number; scale: number };
}

/** The frame of an external drift: the covariate at the data, centred on its mean and divided by its sd. */
export function externalDriftFrame(atData: Float64Array): DriftFrame {
  const n = atData.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += atData[i] / n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (atData[i] - mean) ** 2;
  const sd = Math.sqrt(ss / Math.max(1, n));
  return { kind: 'external', cxKm: 0, cyKm: 0, scaleKm: 1, covariate: { atData, mean, scale: sd > 0 ? sd : 1 } };
}

/** The frame of a trend on these coordinates: their mean as the centre, the largest half-extent as the scale. */
export function driftFrame(kind: TrendKind, x: ArrayLike<number>, y: ArrayLike<number>): DriftFrame {
  const n = x.length;
  let sx = 0,
    sy = 0;
  for (let i = 0; i < n; i++) {
    sx += x[i];
    sy += y[i];
  }
  const { x0, x1, y0, y1 } = pointEnvelope(x, y);
  const half = Math.max(x1 - x0, y1 - y0) / 2;
  return { kind, cxKm: n > 0 ? sx / n : 0, cyKm: n > 0 ? sy / n : 0, scaleKm: half > 0 ? half : 1 };
}

/** The drift terms at (x, y) km into out[0..p); an external drift takes the covariate there as `s`. */
export function driftAt(f: DriftFrame, x: number, y: number, out: Float64Array, s = NaN): void {
  out[0] = 1;
  if (f.kind === 'none') return;
  if (f.kind === 'external') {
    out[1] = (s - f.covariate!.mean) / f.covariate!.scale;
    return;
  }
  const u = (x - f.cxKm) / f.scaleKm,
    v = (y - f.cyKm) / f.scaleKm;
  out[1] = u;
  out[2] = v;
  if (f.kind === 'linear') return;
  out[3] = u * u;
  out[4] = u * v;
  out[5] = v * v;
}

/** The drift terms at datum i (coordinates x[i], y[i]; an external drift's covariate from the frame). */
export function driftAtDatum(f: DriftFrame, x: ArrayLike<number>, y: ArrayLike<number>, i: number, out: Float64Array): void {
  driftAt(f, x[i], y[i], out, f.covariate === undefined ? NaN : f.covariate.atData[i]);
}

/**
 * Ordinary least-squares fit of the drift to values z at (x, y): coefficients a (in the frame's monomials) and the
 * residuals z − F·a. Solved by the normal equations FᵀF·a = Fᵀz with a Cholesky factor (p ≤ 6 on centred, scaled
 * coordinates). Returns null when FᵀF is singular (too few points, or points on a line for a linear drift).
 */
export function fitDriftOls(
  f: DriftFrame,
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  z: ArrayLike<number>,
): { coefficients: number[]; residuals: Float64Array; rss: number } | null {
  const p = driftTerms(f.kind);
  const n = x.length;
  if (n <= p) return null;
  const ata = new Float64Array(p * p),
    atz = new Float64Array(p),
    row = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    driftAtDatum(f, x, y, i, row);
    for (let j = 0; j < p; j++) {
      atz[j] += row[j] * z[i];
      for (let k = 0; k <= j; k++) ata[j * p + k] += row[j] * row[k];
    }
  }
  if (!choleskyInPlace(ata, p, p, 1e-12)) return null;
  const a = new Float64Array(p);
  choleskySolve(ata, p, p, atz, a);
  const residuals = new Float64Array(n);
  let rss = 0;
  for (let i = 0; i < n; i++) {
    driftAtDatum(f, x, y, i, row);
    residuals[i] = z[i] - dot(row, a, p);
    rss += residuals[i] * residuals[i];
  }
  return { coefficients: Array.from(a), residuals, rss };
}

/**
 * The drift part of a universal-kriging system whose covariance matrix C = L·Lᵀ is factored: with the drift matrix
 * F (n × p) of the neighbour set, B = C⁻¹F, S = FᵀC⁻¹F (factored) and g = Bᵀz. At a location with covariance
 * vector c₀ and drift f₀, μ = S⁻¹(Bᵀc₀ − f₀); the estimate is c₀ᵀC⁻¹z − μᵀg, the weights λ = C⁻¹c₀ − B·μ, and the
 * kriging variance C(0) − |L⁻¹c₀|² + μᵀ(Bᵀc₀ − f₀) (the Schur complement of the bordered system; Goovaerts 1997
 * eq. 5.25 in covariance form). Buffers are sized once for at most `maxN` points.
 */
export class DriftSystem {
  readonly p: number;
  /** B column-major: B[j·maxN + i]. */
  readonly B: Float64Array;
  private readonly S: Float64Array;
  private readonly g: Float64Array;
  private readonly col: Float64Array;
  private readonly f0: Float64Array;
  /** μ of the last `solveAt` (p entries) and r = Bᵀc₀ − f₀. */
  readonly mu: Float64Array;
  private readonly r: Float64Array;
  private readonly maxN: number;

  constructor(
    readonly frame: DriftFrame,
    maxN: number,
  ) {
    this.p = driftTerms(frame.kind);
    this.maxN = maxN;
    const p = this.p;
    this.B = new Float64Array(p * maxN);
    this.S = new Float64Array(p * p);
    this.g = new Float64Array(p);
    this.col = new Float64Array(maxN);
    this.f0 = new Float64Array(p);
    this.mu = new Float64Array(p);
    this.r = new Float64Array(p);
  }

  /**
   * Builds B, S and g for the points ids[0..n) (coordinates x, y; values z) against the factor L (row stride n).
   * Returns false when S is singular (fewer points than monomials, or points on a line for a linear drift).
   */
  build(L: Float64Array, n: number, x: Float64Array, y: Float64Array, z: Float64Array, ids: Int32Array): boolean {
    const { p, B, S, g, col, maxN } = this;
    const fr = this.f0;
    for (let j = 0; j < p; j++) {
      for (let i = 0; i < n; i++) {
        driftAtDatum(this.frame, x, y, ids[i], fr);
        col[i] = fr[j];
      }
      const bj = B.subarray(j * maxN, j * maxN + n);
      choleskySolve(L, n, n, col, bj);
    }
    for (let j = 0; j < p; j++) {
      let gz = 0;
      for (let i = 0; i < n; i++) gz += B[j * maxN + i] * z[ids[i]];
      g[j] = gz;
    }
    // S[j][k] = F_jᵀ B_k (symmetric): accumulate over the points' monomials.
    S.fill(0);
    for (let i = 0; i < n; i++) {
      driftAtDatum(this.frame, x, y, ids[i], fr);
      for (let j = 0; j < p; j++) for (let k = 0; k <= j; k++) S[j * p + k] += fr[j] * B[k * maxN + i];
    }
    return n >= p && choleskyInPlace(S, p, p, 1e-12) && g.every(Number.isFinite);
  }

  /**
   * Solves for μ at (qx, qy) (an external drift's covariate there: s0) with covariance vector c₀ (n entries);
   * returns [the estimate's correction μᵀg, the variance term μᵀr] into `out`.
   */
  solveAt(c0: Float64Array, n: number, qx: number, qy: number, out: Float64Array, s0 = NaN): void {
    driftAt(this.frame, qx, qy, this.f0, s0);
    this.solveWith(c0, n, this.f0, out);
  }

  /** As `solveAt` with the drift vector f₀ given (e.g. the monomials' mean over a block). */
  solveWith(c0: Float64Array, n: number, f0: Float64Array, out: Float64Array): void {
    const { p, B, r, mu, maxN } = this;
    for (let j = 0; j < p; j++) {
      let s = 0;
      const o = j * maxN;
      for (let i = 0; i < n; i++) s += c0[i] * B[o + i];
      r[j] = s - f0[j];
    }
    choleskySolve(this.S, p, p, r, mu);
    out[0] = dot(mu, this.g, p);
    out[1] = dot(mu, r, p);
  }

  /** λ −= B·μ for the last `solveAt` (λ holds C⁻¹c₀ on entry). */
  subtractDrift(lambda: Float64Array, n: number): void {
    const { p, B, mu, maxN } = this;
    for (let j = 0; j < p; j++) {
      const o = j * maxN,
        m = mu[j];
      for (let i = 0; i < n; i++) lambda[i] -= m * B[o + i];
    }
  }
}
