import { InputError } from '../errors.ts';
import { directionalVariograms, variogramMap, type DirectionalLag, type DirectionalOptions, type VariogramMap } from './directional-variogram.ts';
import { VARIOGRAM_MODELS, correlation, fitVariogram, modelCode, nelderMead, type VariogramModelName } from './variogram.ts';

/**
 * Geometric anisotropy estimated from directional semivariograms (Isaaks & Srivastava 1989, ch. 16; Goovaerts 1997,
 * §4.2.2; docs/sources.md#geometric-anisotropy). One model — nugget, partial sill, major range a, major-axis azimuth φ
 * (degrees clockwise from north, as `--anisotropy ANGLE_DEG,RATIO`) and minor/major range ratio r — is fitted to
 * every direction's empirical semivariances at once by Cressie's (1985) weighted least squares, the weights of the
 * omnidirectional fit: Σ N·(γ̂/γ − 1)² over all directions and lag classes. The model is evaluated at each class's
 * mean lag stretched by the root-mean-square factor √((u·h)² + (w·h)²/r²) / |h| of its pairs' lag vectors h (u the
 * major, w the minor axis), i.e. at the "major-axis-equivalent" distance the kriging measures (variogram.ts
 * anisotropyMatrix), so pairs spread over a direction class's angular tolerance are not all treated as lying on its
 * centre line. The model's range along azimuth θ is a·r / √(r²·cos²(θ − φ) + sin²(θ − φ)).
 */

/** Fewer pairs than this in a direction and its semivariogram says too little to fit (rule of thumb, from memory: Journel & Huijbregts 1978, 30 pairs a lag). */
export const MIN_PAIRS_PER_DIRECTION = 30;

/** The smallest minor/major ratio the fit may reach. */
const MIN_RATIO = 0.02;

export interface DirectionFit {
  azimuthDeg: number;
  pairs: number;
  /** The fitted anisotropic model's range along this azimuth (km). */
  rangeKm: number;
  /** The range of the same model shape fitted to this direction alone (km); null when it has under 2 lag classes. */
  separateRangeKm: number | null;
  /** This direction's part of the weighted residual. */
  weightedResidual: number;
  lags: { lagKm: number; gamma: number; pairs: number }[];
}

export interface AnisotropyFit {
  model: VariogramModelName;
  nugget: number;
  partialSill: number;
  majorRangeKm: number;
  minorRangeKm: number;
  /** Azimuth of the major axis, degrees clockwise from north, in [0, 180). */
  angleDeg: number;
  /** Minor/major range ratio, (0, 1]. */
  ratio: number;
  /** Cressie's criterion at the fit (all directions). */
  weightedResidual: number;
  /** The same criterion for the best isotropic model (ratio 1) on the same directional semivariances. */
  isotropicWeightedResidual: number;
  /** When the fit stopped at a bound (the major range at 10 × the largest lag, or the ratio at its floor), why; else null. */
  limit: string | null;
  directions: DirectionFit[];
}

export interface AnisotropyEstimate extends AnisotropyFit {
  toleranceDeg: number;
  bandwidthKm: number | null;
  lagKm: number;
  maxLagKm: number;
  pointsUsed: number;
  map: VariogramMap;
}

interface Params {
  nugget: number;
  partialSill: number;
  rangeKm: number;
  phi: number;
  ratio: number;
}

/**
 * Cressie's criterion of one direction's lags under the model. A class's model semivariance is the model averaged
 * over its pairs, grouped by angle sub-class: Σ n·γ(h·√(cos²(β − φ) + sin²(β − φ)/r²)) / N, β the sub-class's
 * azimuth and h its mean distance (the distance the kriging measures after its anisotropy map).
 */
function directionObjective(code: number, p: Params, azimuthDeg: number, lags: DirectionalLag[]): number {
  let s = 0;
  const r2 = 1 / (p.ratio * p.ratio);
  for (const l of lags) {
    const sp = l.spread;
    let g = 0;
    for (let t = 0; t < sp.pairs.length; t++) {
      const beta = ((azimuthDeg + sp.offsetDeg[t]) * Math.PI) / 180 - p.phi;
      const h = sp.lagKm[t] * Math.sqrt(Math.cos(beta) ** 2 + Math.sin(beta) ** 2 * r2);
      g += sp.pairs[t] * (p.nugget + p.partialSill * (1 - correlation(code, p.rangeKm, h)));
    }
    g /= l.pairs;
    if (!(g > 0)) return Infinity;
    s += (l.pairs * (l.gamma - g) ** 2) / (g * g);
  }
  return s;
}

/** Fits one model shape to all directions; starts from each direction's own fit. */
function fitShape(model: VariogramModelName, dirs: { azimuthDeg: number; lags: DirectionalLag[] }[], maxLagKm: number): AnisotropyFit {
  const code = modelCode(model);
  const all = dirs.flatMap((d) => d.lags);
  const iso = fitVariogram(model, all, { maxRangeKm: 10 * maxLagKm });
  const maxRange = 10 * Math.max(...all.map((l) => l.lagKm));
  const unpack = (q: number[]): Params => {
    const rangeKm = Math.min(q[1] * q[1] + 1e-9, maxRange);
    // Both axes within the cap (a ratio above 1 makes the second axis the longer one), the ratio within its bounds.
    const ratio = Math.min(1 / MIN_RATIO, maxRange / rangeKm, Math.max(MIN_RATIO, Math.exp(q[4])));
    return { partialSill: q[0] * q[0] + 1e-300, rangeKm, nugget: q[2] * q[2], phi: q[3], ratio };
  };
  const f = (q: number[]) => dirs.reduce((s, d) => s + directionObjective(code, unpack(q), d.azimuthDeg, d.lags), 0);
  const separate = dirs.map((d) => (d.lags.length >= 2 ? fitVariogram(model, d.lags, { maxRangeKm: 10 * maxLagKm }).rangeKm : null));
  const known = separate.map((r, k) => ({ r, k })).filter((e): e is { r: number; k: number } => e.r !== null);
  const longest = known.reduce((a, b) => (b.r > a.r ? b : a), known[0]);
  const shortest = known.reduce((a, b) => (b.r < a.r ? b : a), known[0]);
  const starts: [number, number][] = [[dirs[longest.k].azimuthDeg, Math.max(0.05, Math.min(1, shortest.r / longest.r))]];
  for (const d of dirs) starts.push([d.azimuthDeg, 0.5]);
  let best: { p: number[]; v: number } | null = null;
  for (const [az, r] of starts) {
    const q0 = [Math.sqrt(iso.partialSill), Math.sqrt(iso.rangeKm), Math.sqrt(iso.nugget + 0.01 * iso.partialSill), (az * Math.PI) / 180, Math.log(r)];
    let res = nelderMead(f, q0, 800);
    res = nelderMead(f, res.p, 800);
    if (best === null || res.v < best.v) best = res;
  }
  const p = unpack(best!.p);
  // Written with the longer axis as the major: r > 1 means the fitted "major" axis is the shorter one.
  const swap = p.ratio > 1;
  const ratio = swap ? 1 / p.ratio : p.ratio;
  const majorRangeKm = swap ? p.rangeKm * p.ratio : p.rangeKm;
  let angleDeg = (((p.phi * 180) / Math.PI + (swap ? 90 : 0)) % 180) + 180;
  angleDeg %= 180;
  const final: Params = { ...p, phi: (angleDeg * Math.PI) / 180, ratio, rangeKm: majorRangeKm };
  const isoResidual = dirs.reduce((s, d) => s + directionObjective(code, { ...iso, phi: 0, ratio: 1 }, d.azimuthDeg, d.lags), 0);
  return {
    model,
    nugget: p.nugget,
    partialSill: p.partialSill,
    majorRangeKm,
    minorRangeKm: majorRangeKm * ratio,
    angleDeg,
    ratio,
    weightedResidual: best!.v,
    isotropicWeightedResidual: isoResidual,
    limit: fitLimit(majorRangeKm, ratio, maxRange),
    directions: dirs.map((d, k) => {
      const t = ((d.azimuthDeg - angleDeg) * Math.PI) / 180;
      return {
        azimuthDeg: d.azimuthDeg,
        pairs: d.lags.reduce((s, l) => s + l.pairs, 0),
        rangeKm: (majorRangeKm * ratio) / Math.sqrt(ratio * ratio * Math.cos(t) ** 2 + Math.sin(t) ** 2),
        separateRangeKm: separate[k],
        weightedResidual: directionObjective(code, final, d.azimuthDeg, d.lags),
        lags: d.lags.map((l) => ({ lagKm: l.lagKm, gamma: l.gamma, pairs: l.pairs })),
      };
    }),
  };
}

/** Why a fit sits at a bound, or null. */
function fitLimit(majorRangeKm: number, ratio: number, maxRange: number): string | null {
  const why: string[] = [];
  if (majorRangeKm >= maxRange * (1 - 1e-9))
    why.push(`the major range reached its limit (${maxRange.toFixed(0)} km, 10 × the largest lag): no sill along the major axis (a trend?)`);
  if (ratio <= MIN_RATIO * (1 + 1e-9)) why.push(`the ratio reached its floor (${MIN_RATIO})`);
  return why.length > 0 ? `the anisotropy fit stopped at a bound: ${why.join('; ')}; treat the angle and ratio with care` : null;
}

export interface AnisotropyOptions extends DirectionalOptions {
  /** The model shape, or 'auto': the one of the three with the smallest weighted residual. */
  model?: VariogramModelName | 'auto';
  /** Fewest pairs a direction may have (default MIN_PAIRS_PER_DIRECTION). */
  minPairs?: number;
  /** Cells per side of the variogram map (odd; default 21). */
  mapCells?: number;
}

/**
 * Directional semivariograms of z at (x, y) km, the variogram map (cutoff the largest lag, 21 cells a side by
 * default) and the fitted geometric anisotropy. A direction with fewer than `minPairs` pairs or fewer than three
 * non-empty lag classes is an InputError naming it, its azimuth class and its count.
 */
export function estimateAnisotropy(x: ArrayLike<number>, y: ArrayLike<number>, z: ArrayLike<number>, opts: AnisotropyOptions = {}): AnisotropyEstimate {
  const dv = directionalVariograms(x, y, z, opts);
  const minPairs = opts.minPairs ?? MIN_PAIRS_PER_DIRECTION;
  for (const d of dv.directions) {
    const classes = d.lags.length;
    if (d.pairs < minPairs || classes < 3)
      throw new InputError(
        `anisotropy cannot be estimated: direction ${d.azimuthDeg}° (± ${dv.toleranceDeg}°) has ${d.pairs} pair(s) in ${classes} lag class(es) within ${dv.maxLagKm.toPrecision(4)} km; at least ${minPairs} pairs in 3 classes are needed`,
        [{ field: 'anisotropy', problem: 'give ANGLE_DEG,RATIO or none, or use more points, a larger maximum lag or a wider lag' }],
        'degenerate_variogram',
      );
  }
  const models = opts.model === undefined || opts.model === 'auto' ? [...VARIOGRAM_MODELS] : [opts.model];
  let fit: AnisotropyFit | null = null;
  for (const m of models) {
    const f = fitShape(m, dv.directions, dv.maxLagKm);
    if (fit === null || f.weightedResidual < fit.weightedResidual) fit = f;
  }
  const cells = opts.mapCells ?? 21;
  const map = variogramMap(x, y, z, { cutoffKm: dv.maxLagKm, cellKm: (2 * dv.maxLagKm) / (cells - 1), maxPoints: opts.maxPoints });
  return { ...fit!, toleranceDeg: dv.toleranceDeg, bandwidthKm: dv.bandwidthKm, lagKm: dv.lagKm, maxLagKm: dv.maxLagKm, pointsUsed: dv.pointsUsed, map };
}
