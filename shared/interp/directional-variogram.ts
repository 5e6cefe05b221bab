import { NeighbourIndex } from './neighbours.ts';
import { lagClasses, variogramSubset, type EmpiricalLag, type EmpiricalOptions } from './variogram.ts';

/**
 * Directional empirical semivariograms and the variogram map (Matheron's method-of-moments estimator; Isaaks &
 * Srivastava 1989, ch. 7; Deutsch & Journel 1998, GSLIB gamv and varmap; docs/sources.md#directional-variogram).
 *
 * Directions are azimuths in degrees clockwise from north, the convention of `--anisotropy ANGLE_DEG,RATIO`; a
 * direction and its opposite are one class (a semivariogram is symmetric). A pair of points with lag vector h belongs
 * to the class of azimuth θ when the angle between h and the line of θ is at most the angular tolerance and, with a
 * bandwidth, when h lies within that distance (km) of the line. Lag classes are those of the omnidirectional
 * semivariogram (variogram.ts `lagClasses`). Coordinates in km, x east and y north.
 */

export interface DirectionalOptions extends EmpiricalOptions {
  /** Azimuths of the direction classes (degrees clockwise from north). Default 0, 45, 90, 135. */
  azimuthsDeg?: number[];
  /** Half-width of each class in angle (degrees, (0, 90]). Default 90 / the number of directions. */
  toleranceDeg?: number;
  /** Largest distance of a lag vector from the class's line (km); null: no limit (default). */
  bandwidthKm?: number | null;
}

/** The direction classes a request may choose (azimuths, angular tolerance, bandwidth); the rest are defaults. */
export type DirectionChoice = Pick<DirectionalOptions, 'azimuthsDeg' | 'toleranceDeg' | 'bandwidthKm'>;

/** Angle sub-classes each direction class is split into to record where its pairs point. */
export const ANGLE_SUBCLASSES = 8;

/** One lag class of one direction: Matheron's γ̂ with the mean distance, and how its pairs spread in angle. */
export interface DirectionalLag extends EmpiricalLag {
  /**
   * The class's pairs in ANGLE_SUBCLASSES equal sub-classes of its angular window (−tol … +tol about the azimuth):
   * pairs and mean distance (km) per sub-class, and the sub-class's central offset from the azimuth (degrees).
   */
  spread: { offsetDeg: number[]; pairs: number[]; lagKm: number[] };
}

export interface DirectionalVariogram {
  azimuthDeg: number;
  lags: DirectionalLag[];
  /** Pairs in this direction over all lag classes. */
  pairs: number;
}

export interface DirectionalResult {
  directions: DirectionalVariogram[];
  toleranceDeg: number;
  bandwidthKm: number | null;
  lagKm: number;
  maxLagKm: number;
  pointsUsed: number;
}

/** Calls `visit(hx, hy, d²)` once for every unordered pair of points within `radiusKm` (lag h = pᵢ − pⱼ, i > j, km). */
function forEachPair(
  p: { x: ArrayLike<number>; y: ArrayLike<number>; z: ArrayLike<number> },
  radiusKm: number,
  visit: (hx: number, hy: number, d2: number) => void,
): void {
  const index = new NeighbourIndex(p.x, p.y);
  const found: number[] = [];
  for (let i = 0; i < p.x.length; i++) {
    found.length = 0;
    const m = index.within(p.x[i], p.y[i], radiusKm, found);
    for (let t = 0; t < m; t++) {
      const j = found[t];
      if (j <= i) continue;
      visit(p.x[i] - p.x[j], p.y[i] - p.y[j], (p.z[i] - p.z[j]) ** 2);
    }
  }
}

/** Checks the options' ranges (RangeError naming the value). */
function directionSettings(opts: DirectionalOptions): { az: number[]; tol: number; band: number | null } {
  const az = opts.azimuthsDeg ?? [0, 45, 90, 135];
  if (az.length === 0 || az.some((a) => !Number.isFinite(a))) throw new RangeError(`direction azimuths must be finite degrees, got [${az.join(', ')}]`);
  const tol = opts.toleranceDeg ?? 90 / az.length;
  if (!(tol > 0 && tol <= 90)) throw new RangeError(`the angular tolerance must be in (0, 90] degrees, got ${tol}`);
  const band = opts.bandwidthKm ?? null;
  if (band !== null && !(band > 0)) throw new RangeError(`the bandwidth must be > 0 km, got ${band}`);
  return { az, tol, band };
}

/**
 * Directional semivariograms of values z at (x, y) km. Above `maxPoints` (default 4000) the same fixed subset as the
 * omnidirectional semivariogram is used. A lag exactly on a class boundary in angle is in the class; lags with no
 * pairs are left out of each direction's list.
 */
export function directionalVariograms(x: ArrayLike<number>, y: ArrayLike<number>, z: ArrayLike<number>, opts: DirectionalOptions = {}): DirectionalResult {
  const { az, tol, band } = directionSettings(opts);
  const p = variogramSubset(x, y, z, opts.maxPoints ?? 4000);
  const { lagKm, maxLagKm, nLags } = lagClasses(p.x, p.y, opts);
  const D = az.length;
  const ux = az.map((a) => Math.sin((a * Math.PI) / 180)),
    uy = az.map((a) => Math.cos((a * Math.PI) / 180));
  const cosTol = tol >= 90 ? -1 : Math.cos((tol * Math.PI) / 180);
  // Per direction and lag class: Σ(zi − zj)², Σh, count; per angle sub-class: count, Σh.
  const W = 3 + 2 * ANGLE_SUBCLASSES;
  const acc = new Float64Array(D * nLags * W);
  const az0 = az.map((a) => (a * Math.PI) / 180),
    tolRad = (tol * Math.PI) / 180;
  forEachPair(p, maxLagKm, (hx, hy, d2) => {
    const h = Math.sqrt(hx * hx + hy * hy);
    if (!(h > 0) || h > maxLagKm) return;
    const b = Math.min(nLags - 1, Math.floor(h / lagKm));
    for (let k = 0; k < D; k++) {
      const along = hx * ux[k] + hy * uy[k];
      if (Math.abs(along) < cosTol * h) continue;
      if (band !== null && Math.abs(hx * uy[k] - hy * ux[k]) > band) continue;
      const o = (k * nLags + b) * W;
      acc[o] += d2;
      acc[o + 1] += h;
      acc[o + 2]++;
      // The pair's offset from the azimuth's line, in (−90°, 90°], then its sub-class of the window.
      let off = Math.atan2(hx, hy) - az0[k];
      off -= Math.PI * Math.round(off / Math.PI);
      const sub = Math.min(ANGLE_SUBCLASSES - 1, Math.max(0, Math.floor(((off + tolRad) / (2 * tolRad)) * ANGLE_SUBCLASSES)));
      acc[o + 3 + 2 * sub]++;
      acc[o + 4 + 2 * sub] += h;
    }
  });
  const directions: DirectionalVariogram[] = az.map((a, k) => {
    const lags: DirectionalLag[] = [];
    let pairs = 0;
    for (let b = 0; b < nLags; b++) {
      const o = (k * nLags + b) * W;
      const c = acc[o + 2];
      if (c === 0) continue;
      pairs += c;
      const spread: DirectionalLag['spread'] = { offsetDeg: [], pairs: [], lagKm: [] };
      for (let t = 0; t < ANGLE_SUBCLASSES; t++) {
        const m = acc[o + 3 + 2 * t];
        if (m === 0) continue;
        spread.offsetDeg.push(-tol + ((t + 0.5) * 2 * tol) / ANGLE_SUBCLASSES);
        spread.pairs.push(m);
        spread.lagKm.push(acc[o + 4 + 2 * t] / m);
      }
      lags.push({ lagKm: acc[o + 1] / c, gamma: acc[o] / (2 * c), pairs: c, spread });
    }
    return { azimuthDeg: a, lags, pairs };
  });
  return { directions, toleranceDeg: tol, bandwidthKm: band, lagKm, maxLagKm, pointsUsed: p.x.length };
}

/** γ̂ on a square grid of lag vectors (cells of `cellKm`, centres −cutoff, −cutoff + cell, …, +cutoff in x and y). */
export interface VariogramMap {
  cutoffKm: number;
  cellKm: number;
  /** Cells per side (odd: the centre cell holds lags near zero). */
  size: number;
  /** Row-major, row 0 at the largest northward lag, column 0 at the largest westward lag; null where no pair falls. */
  gamma: (number | null)[];
  /** Ordered pairs per cell (each pair counts at h and at −h, so the map is symmetric through its centre). */
  pairs: number[];
  pointsUsed: number;
}

/**
 * The variogram map: for every ordered pair of distinct points, the lag vector h = pᵢ − pⱼ (km) falls in the cell of
 * a square grid centred on zero lag, and each cell holds Matheron's γ̂ of its pairs (Isaaks & Srivastava 1989, ch. 7;
 * GSLIB varmap). The grid's centres run from −cutoff to +cutoff in steps of `cellKm` (size = ⌊2·cutoff/cell⌋ + 1);
 * cells reach half a cell beyond; a lag exactly on an inner cell edge goes to the cell east (or south) of that edge,
 * and the grid's outer edges are closed.
 */
export function variogramMap(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  z: ArrayLike<number>,
  opts: { cutoffKm: number; cellKm: number; maxPoints?: number },
): VariogramMap {
  const { cutoffKm, cellKm } = opts;
  if (!(cutoffKm > 0) || !(cellKm > 0)) throw new RangeError(`the map's cutoff and cell must be > 0 km, got ${cutoffKm}, ${cellKm}`);
  const size = Math.floor((2 * cutoffKm) / cellKm + 1e-10) + 1;
  if (size > 401) throw new RangeError(`the variogram map would have ${size} × ${size} cells, above 401 × 401: use a larger cell`);
  const p = variogramSubset(x, y, z, opts.maxPoints ?? 4000);
  const lo = -cutoffKm - cellKm / 2,
    hi = lo + size * cellKm;
  const sum = new Float64Array(size * size),
    cnt = new Float64Array(size * size);
  const reach = Math.SQRT2 * Math.max(Math.abs(lo), Math.abs(hi));
  const cellOf = (hx: number, hy: number): number => {
    if (hx < lo || hx > hi || hy < lo || hy > hi) return -1;
    const col = Math.min(size - 1, Math.floor((hx - lo) / cellKm));
    const row = Math.min(size - 1, Math.floor((hi - hy) / cellKm));
    return row * size + col;
  };
  forEachPair(p, reach, (hx, hy, d2) => {
    for (const c of [cellOf(hx, hy), cellOf(-hx, -hy)]) {
      if (c < 0) continue;
      sum[c] += d2;
      cnt[c]++;
    }
  });
  return {
    cutoffKm,
    cellKm,
    size,
    gamma: Array.from(sum, (s, c) => (cnt[c] > 0 ? s / (2 * cnt[c]) : null)),
    pairs: Array.from(cnt),
    pointsUsed: p.x.length,
  };
}
