import { NeighbourIndex } from './neighbours.ts';
import { pointEnvelope } from './envelope.ts';

/**
 * Semivariogram models, the empirical semivariogram and its weighted-least-squares fit.
 * Models (practical-range convention, DESIGN.md §3; range a km, nugget c0, partial sill c, γ(0) = 0):
 *   exponential γ = c0 + c(1 − e^(−3h/a)); Gaussian γ = c0 + c(1 − e^(−3h²/a²));
 *   spherical γ = c0 + c(1.5h/a − 0.5h³/a³) for h ≤ a, c0 + c beyond.
 * Fit: Cressie (1985) weighted least squares, minimizing Σ N(h)·(γ̂(h)/γ(h) − 1)², i.e. weights N(h)/γ(h)² on
 * the squared residuals, with the model in the denominator updated at every step (Nelder & Mead 1965 simplex).
 */

export const VARIOGRAM_MODELS = ['spherical', 'exponential', 'gaussian'] as const;
export type VariogramModelName = (typeof VARIOGRAM_MODELS)[number];

export interface VariogramModel {
  model: VariogramModelName;
  /** Nugget c0 (value units²). */
  nugget: number;
  /** Partial sill c (value units²); the total sill is nugget + partialSill. */
  partialSill: number;
  /** Practical range a (km). */
  rangeKm: number;
}

/** Numeric code of a model for the kernels' switch (no string compare per cell). */
export function modelCode(m: VariogramModelName): number {
  return m === 'spherical' ? 0 : m === 'exponential' ? 1 : 2;
}

/** The correlogram part ρ(h) = 1 − (γ(h) − c0)/c for h > 0 of model `code` at distance h km, range a km. */
export function correlation(code: number, a: number, h: number): number {
  if (code === 1) return Math.exp((-3 * h) / a);
  if (code === 2) return Math.exp((-3 * h * h) / (a * a));
  if (h >= a) return 0;
  const r = h / a;
  return 1 - 1.5 * r + 0.5 * r * r * r;
}

/** Semivariance γ(h) of a model at lag h km (γ(0) = 0; value units²). */
export function semivariance(m: VariogramModel, h: number): number {
  if (!(h > 0)) return 0;
  return m.nugget + m.partialSill * (1 - correlation(modelCode(m.model), m.rangeKm, h));
}

/** Covariance C(h) = sill − γ(h) (bounded models); C(0) = nugget + partial sill. */
export function covariance(m: VariogramModel, h: number): number {
  if (!(h > 0)) return m.nugget + m.partialSill;
  return m.partialSill * correlation(modelCode(m.model), m.rangeKm, h);
}

/** Checks a model's parameters (finite, nugget ≥ 0, partial sill > 0, range > 0); throws RangeError. */
export function checkVariogram(m: VariogramModel): void {
  if (!(VARIOGRAM_MODELS as readonly string[]).includes(m.model)) throw new RangeError(`unknown variogram model ${String(m.model)}`);
  if (!(m.nugget >= 0 && Number.isFinite(m.nugget))) throw new RangeError(`nugget must be ≥ 0, got ${m.nugget}`);
  if (!(m.partialSill > 0 && Number.isFinite(m.partialSill))) throw new RangeError(`partial sill must be > 0, got ${m.partialSill}`);
  if (!(m.rangeKm > 0 && Number.isFinite(m.rangeKm))) throw new RangeError(`range must be > 0 km, got ${m.rangeKm}`);
}

/** Geometric anisotropy: major axis azimuth (degrees clockwise from north) and minor/major range ratio (0, 1]. */
export interface Anisotropy {
  angleDeg: number;
  ratio: number;
}

/**
 * The linear map that makes a geometrically anisotropic variogram isotropic (Isaaks & Srivastava 1989, ch. 16):
 * rotate the major axis onto the first coordinate, then stretch the minor axis by 1/ratio. Distances measured
 * after the map are "major-axis-equivalent" km. Returns [m00, m01, m10, m11].
 */
export function anisotropyMatrix(a: Anisotropy | null | undefined): [number, number, number, number] {
  if (a === null || a === undefined) return [1, 0, 0, 1];
  if (!(a.ratio > 0 && a.ratio <= 1)) throw new RangeError(`anisotropy ratio must be in (0, 1], got ${a.ratio}`);
  if (!Number.isFinite(a.angleDeg)) throw new RangeError('anisotropy angle must be finite');
  const t = (a.angleDeg * Math.PI) / 180;
  // Unit vector of the major axis in (east, north): (sin t, cos t); minor axis: (cos t, −sin t).
  const s = Math.sin(t),
    c = Math.cos(t);
  return [s, c, c / a.ratio, -s / a.ratio];
}

/** Applies `anisotropyMatrix` to coordinate arrays (into new arrays). */
export function transformCoords(m: [number, number, number, number], x: ArrayLike<number>, y: ArrayLike<number>): { x: Float64Array; y: Float64Array } {
  const n = x.length;
  const ox = new Float64Array(n),
    oy = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    ox[i] = m[0] * x[i] + m[1] * y[i];
    oy[i] = m[2] * x[i] + m[3] * y[i];
  }
  return { x: ox, y: oy };
}

export interface EmpiricalLag {
  /** Mean pair distance in the lag (km). */
  lagKm: number;
  /** γ̂ = Σ(zi − zj)² / (2 N(h)) (value units², Matheron's estimator). */
  gamma: number;
  pairs: number;
}

export interface EmpiricalOptions {
  /** Lag width (km). Default: maxLagKm / 15. */
  lagKm?: number;
  /** Largest lag (km). Default: half the diagonal of the points' envelope (common practice). */
  maxLagKm?: number;
  /** Above this many points, a seeded random subset of this size is used (pairs grow as N²). Default 4000. */
  maxPoints?: number;
}

/**
 * The points an empirical semivariogram is computed from: all of them up to `maxPoints`, above it a fixed subset of
 * that size (a partial Fisher–Yates shuffle driven by a fixed-seed xorshift32, Marsaglia 2003: the same every run).
 */
export function variogramSubset(
  xAll: ArrayLike<number>,
  yAll: ArrayLike<number>,
  zAll: ArrayLike<number>,
  maxPoints: number,
): { x: ArrayLike<number>; y: ArrayLike<number>; z: ArrayLike<number> } {
  if (xAll.length <= maxPoints) return { x: xAll, y: yAll, z: zAll };
  const idx = Int32Array.from({ length: xAll.length }, (_, i) => i);
  let s = 0x9e3779b9 | 0;
  for (let i = 0; i < maxPoints; i++) {
    s ^= s << 13;
    s ^= s >>> 17;
    s ^= s << 5;
    const j = i + ((s >>> 0) % (xAll.length - i));
    const t = idx[i];
    idx[i] = idx[j];
    idx[j] = t;
  }
  const sub = idx.subarray(0, maxPoints);
  return { x: Float64Array.from(sub, (i) => xAll[i]), y: Float64Array.from(sub, (i) => yAll[i]), z: Float64Array.from(sub, (i) => zAll[i]) };
}

/**
 * The lag classes of an empirical semivariogram: width `lagKm` up to `maxLagKm` (default half the diagonal of the
 * points' envelope, common practice; width default maxLag / 15); class k holds lags in [k·lag, (k + 1)·lag), the last
 * one closed at maxLag.
 */
export function lagClasses(x: ArrayLike<number>, y: ArrayLike<number>, opts: EmpiricalOptions): { lagKm: number; maxLagKm: number; nLags: number } {
  const { x0, x1, y0, y1 } = pointEnvelope(x, y);
  const maxLagKm = opts.maxLagKm ?? Math.hypot(x1 - x0, y1 - y0) / 2;
  const lagKm = opts.lagKm ?? maxLagKm / 15;
  if (!(maxLagKm > 0) || !(lagKm > 0)) throw new RangeError(`lag width and maximum lag must be > 0 km, got ${lagKm}, ${maxLagKm}`);
  return { lagKm, maxLagKm, nLags: Math.max(1, Math.ceil(maxLagKm / lagKm - 1e-12)) };
}

/**
 * Empirical semivariogram by Matheron's method-of-moments estimator, lags of width `lagKm` up to `maxLagKm`
 * (pairs found with a radius search, so the cost follows the pairs within maxLag, not N²). Coordinates in km
 * (already transformed for anisotropy if any). Lags with no pairs are left out.
 */
export function empiricalVariogram(
  xAll: ArrayLike<number>,
  yAll: ArrayLike<number>,
  zAll: ArrayLike<number>,
  opts: EmpiricalOptions = {},
): { lags: EmpiricalLag[]; lagKm: number; maxLagKm: number; pointsUsed: number } {
  const { x, y, z } = variogramSubset(xAll, yAll, zAll, opts.maxPoints ?? 4000);
  const n = x.length;
  const { lagKm, maxLagKm, nLags } = lagClasses(x, y, opts);
  const sumG = new Float64Array(nLags),
    sumH = new Float64Array(nLags),
    cnt = new Float64Array(nLags);
  const index = new NeighbourIndex(x, y);
  const found: number[] = [];
  for (let i = 0; i < n; i++) {
    found.length = 0;
    const m = index.within(x[i], y[i], maxLagKm, found);
    for (let t = 0; t < m; t++) {
      const j = found[t];
      if (j <= i) continue;
      const h = Math.sqrt((x[i] - x[j]) ** 2 + (y[i] - y[j]) ** 2);
      if (!(h > 0) || h > maxLagKm) continue;
      const b = Math.min(nLags - 1, Math.floor(h / lagKm));
      const d = z[i] - z[j];
      sumG[b] += d * d;
      sumH[b] += h;
      cnt[b]++;
    }
  }
  const lags: EmpiricalLag[] = [];
  for (let b = 0; b < nLags; b++) if (cnt[b] > 0) lags.push({ lagKm: sumH[b] / cnt[b], gamma: sumG[b] / (2 * cnt[b]), pairs: cnt[b] });
  return { lags, lagKm, maxLagKm, pointsUsed: n };
}

/** Cressie (1985) criterion Σ N(h)·(γ̂(h)/γ(h) − 1)² (equivalent to weights N(h)/γ(h)² on squared residuals). */
export function cressieObjective(m: VariogramModel, lags: EmpiricalLag[]): number {
  let s = 0;
  for (const l of lags) {
    const g = semivariance(m, l.lagKm);
    if (!(g > 0)) return Infinity;
    const r = l.gamma - g;
    s += (l.pairs * r * r) / (g * g);
  }
  return s;
}

/**
 * Fits `model` to an empirical semivariogram by Cressie's weighted least squares. Positivity is built in by
 * fitting square roots of the nugget, partial sill and range; several starts (range ×½, ×1, ×2 of a first guess)
 * and a restarted Nelder–Mead simplex guard against a poor local minimum. `fixNugget` holds the nugget.
 */
export function fitVariogram(
  model: VariogramModelName,
  lags: EmpiricalLag[],
  opts: { fixNugget?: number; maxRangeKm?: number } = {},
): VariogramModel & { objective: number } {
  if (lags.length < 2) throw new RangeError('fitting a variogram needs at least two non-empty lags');
  const maxLag = Math.max(...lags.map((l) => l.lagKm));
  const maxRange = opts.maxRangeKm ?? 10 * maxLag;
  const gmax = Math.max(...lags.map((l) => l.gamma));
  const tail = lags.slice(Math.floor((2 * lags.length) / 3));
  const sill0 = Math.max(tail.reduce((s, l) => s + l.gamma, 0) / tail.length, 1e-12 * gmax, Number.MIN_VALUE);
  const g1 = lags[0].gamma,
    g2 = lags[1].gamma;
  let nug0 = g1 - ((g2 - g1) * lags[0].lagKm) / (lags[1].lagKm - lags[0].lagKm);
  nug0 = Math.min(Math.max(0, nug0), 0.9 * sill0);
  const hit = lags.find((l) => l.gamma >= 0.95 * sill0);
  const range0 = hit?.lagKm ?? maxLag / 2;
  const fixed = opts.fixNugget;
  const unpack = (p: number[]): VariogramModel => ({
    model,
    nugget: fixed ?? p[2] * p[2],
    partialSill: p[0] * p[0] + 1e-300,
    rangeKm: Math.min(p[1] * p[1] + 1e-9 * maxLag, maxRange),
  });
  const f = (p: number[]) => cressieObjective(unpack(p), lags);
  let best: { p: number[]; v: number } | null = null;
  for (const rf of [0.5, 1, 2]) {
    const start = [Math.sqrt(Math.max(sill0 - (fixed ?? nug0), 1e-6 * sill0)), Math.sqrt(range0 * rf)];
    if (fixed === undefined) start.push(Math.sqrt(nug0 + 0.01 * sill0));
    let r = nelderMead(f, start, 600);
    r = nelderMead(f, r.p, 600);
    if (best === null || r.v < best.v) best = r;
  }
  const m = unpack(best!.p);
  return { ...m, objective: best!.v };
}

/** Nelder & Mead (1965) downhill simplex, standard coefficients (1, 2, ½, ½). */
export function nelderMead(f: (p: number[]) => number, x0: number[], maxIter: number): { p: number[]; v: number } {
  const n = x0.length;
  const pts: number[][] = [x0.slice()];
  for (let i = 0; i < n; i++) {
    const p = x0.slice();
    p[i] = p[i] !== 0 ? p[i] * 1.25 : 0.00025;
    pts.push(p);
  }
  let vals = pts.map(f);
  for (let it = 0; it < maxIter; it++) {
    const order = vals.map((_, i) => i).sort((a, b) => vals[a] - vals[b]);
    const sp = order.map((i) => pts[i]);
    vals = order.map((i) => vals[i]);
    for (let i = 0; i <= n; i++) pts[i] = sp[i];
    if (Math.abs(vals[n] - vals[0]) <= 1e-12 * (Math.abs(vals[0]) + 1e-300)) break;
    const c = new Array<number>(n).fill(0);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) c[j] += pts[i][j] / n;
    const at = (t: number) => c.map((cj, j) => cj + t * (pts[n][j] - cj));
    const xr = at(-1),
      fr = f(xr);
    if (fr < vals[0]) {
      const xe = at(-2),
        fe = f(xe);
      if (fe < fr) {
        pts[n] = xe;
        vals[n] = fe;
      } else {
        pts[n] = xr;
        vals[n] = fr;
      }
    } else if (fr < vals[n - 1]) {
      pts[n] = xr;
      vals[n] = fr;
    } else {
      const xc = fr < vals[n] ? at(-0.5) : at(0.5);
      const fc = f(xc);
      if (fc < Math.min(fr, vals[n])) {
        pts[n] = xc;
        vals[n] = fc;
      } else {
        for (let i = 1; i <= n; i++) {
          pts[i] = pts[i].map((v, j) => pts[0][j] + 0.5 * (v - pts[0][j]));
          vals[i] = f(pts[i]);
        }
      }
    }
  }
  let bi = 0;
  for (let i = 1; i <= n; i++) if (vals[i] < vals[bi]) bi = i;
  return { p: pts[bi], v: vals[bi] };
}
