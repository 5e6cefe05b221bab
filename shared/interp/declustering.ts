import { InputError } from '../errors.ts';
import { localProjectionFor, lonLatToLocalKm } from './projection.ts';
import { pointEnvelope } from './envelope.ts';

/**
 * Cell declustering (Journel 1983, "Nonparametric estimation of spatial distributions", Mathematical Geology 15;
 * Deutsch & Journel 1998, GSLIB 2nd ed., §VI.2.2 program declus; Deutsch 1989, "DECLUS: a Fortran 77 program for
 * determining optimum spatial declustering weights", Computers & Geosciences 15). A grid of square cells of side c
 * is laid over the points; a point in a cell holding nₖ points, with L cells occupied, gets the weight 1/(nₖ·L), so
 * every occupied cell carries the same total weight and points in clusters share theirs. The weights are averaged
 * over `offsets` grid origins shifted along the diagonal by c/offsets each (the origin's arbitrariness averaged out,
 * as in declus) and scaled to mean 1. The cell size is given, or chosen among candidate sizes as the one giving the
 * smallest declustered mean: the rule for data clustered in high values (Deutsch & Journel 1998, §VI.2.2; the
 * preferential sampling of hot spots is the common case for heat-flow sites).
 * Coordinates in km.
 */

/** Declustering weights (mean 1) for square cells of `cellKm`, averaged over `offsets` diagonal origin shifts. */
export function cellDeclusteringWeights(x: ArrayLike<number>, y: ArrayLike<number>, cellKm: number, offsets = 5): Float64Array {
  const n = x.length;
  if (!(cellKm > 0 && Number.isFinite(cellKm))) throw new RangeError(`declustering cell size must be > 0 km, got ${cellKm}`);
  if (!(Number.isInteger(offsets) && offsets >= 1)) throw new RangeError(`declustering offsets must be a positive integer, got ${offsets}`);
  const { x0, y0 } = pointEnvelope(x, y);
  const w = new Float64Array(n);
  const cellOf = new Array<string>(n);
  for (let k = 0; k < offsets; k++) {
    const shift = (cellKm * k) / offsets;
    const counts = new Map<string, number>();
    for (let i = 0; i < n; i++) {
      const key = `${Math.floor((x[i] - x0 + shift) / cellKm)},${Math.floor((y[i] - y0 + shift) / cellKm)}`;
      cellOf[i] = key;
      counts.set(key, (counts.get(key) ?? 0) + 1);
    }
    const occupied = counts.size;
    for (let i = 0; i < n; i++) w[i] += 1 / (counts.get(cellOf[i])! * occupied * offsets);
  }
  // Each origin's weights sum to 1, so their mean does too: scale to mean 1.
  for (let i = 0; i < n; i++) w[i] *= n;
  return w;
}

/** Weighted mean Σwᵢzᵢ / Σwᵢ. */
function weightedMean(z: ArrayLike<number>, w: ArrayLike<number>): number {
  let s = 0,
    sw = 0;
  for (let i = 0; i < z.length; i++) {
    s += w[i] * z[i];
    sw += w[i];
  }
  return s / sw;
}

/** Weighted standard deviation √(Σwᵢ(zᵢ − m)² / Σwᵢ) of the distribution the weights give (no n − 1 correction). */
function weightedSd(z: ArrayLike<number>, w: ArrayLike<number>, m: number): number {
  let s = 0,
    sw = 0;
  for (let i = 0; i < z.length; i++) {
    s += w[i] * (z[i] - m) ** 2;
    sw += w[i];
  }
  return Math.sqrt(s / sw);
}

export interface DeclusteringReport {
  method: string;
  /** The cell side used, km. */
  cellKm: number;
  /** 'given' or 'minimum declustered mean' (over the candidates). */
  selectedBy: 'given' | 'minimum declustered mean';
  offsets: number;
  /** The plain and the declustered mean of the values (value units). */
  naiveMean: number;
  declusteredMean: number;
  /** The plain and the declustered standard deviation of the values' distribution (value units, no n − 1 correction). */
  naiveSd: number;
  declusteredSd: number;
  /** Smallest and largest weight (mean 1). */
  minWeight: number;
  maxWeight: number;
  /** With the automatic choice: each candidate cell size and its declustered mean. */
  candidates?: { cellKm: number; declusteredMean: number }[];
}

/**
 * Declustering weights of points (x, y km; values z) and the report. `cellKm` given: that cell; otherwise 24
 * candidate sizes spaced evenly from 1/50 to 1/2 of the points' larger extent (the range declus is usually run over:
 * from about the data spacing to a few cells across the area), the smallest declustered mean winning (ties: the
 * smaller cell).
 */
export function decluster(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  z: ArrayLike<number>,
  opts: { cellKm?: number; offsets?: number } = {},
): { weights: Float64Array; report: DeclusteringReport } {
  const n = z.length;
  if (n < 2) throw new InputError(`declustering needs at least 2 points, got ${n}`, [{ field: 'points', problem: 'expected ≥ 2 points' }], 'too_few_points');
  const offsets = opts.offsets ?? 5;
  const ones = new Float64Array(n).fill(1);
  const naiveMean = weightedMean(z, ones);
  let best: { cellKm: number; weights: Float64Array; mean: number } | null = null;
  let candidates: DeclusteringReport['candidates'];
  if (opts.cellKm !== undefined) {
    if (!(opts.cellKm > 0 && Number.isFinite(opts.cellKm)))
      throw new InputError(`declustering cell size must be > 0 km, got ${opts.cellKm}`, [{ field: 'declusterCellKm', problem: 'expected > 0' }], 'bad_option');
    const weights = cellDeclusteringWeights(x, y, opts.cellKm, offsets);
    best = { cellKm: opts.cellKm, weights, mean: weightedMean(z, weights) };
  } else {
    const { x0, x1, y0, y1 } = pointEnvelope(x, y);
    const extent = Math.max(x1 - x0, y1 - y0);
    if (!(extent > 0))
      throw new InputError('declustering needs points at more than one place', [{ field: 'points', problem: 'all points coincide' }], 'too_few_points');
    candidates = [];
    const count = 24,
      lo = extent / 50,
      hi = extent / 2;
    for (let k = 0; k < count; k++) {
      const c = lo + ((hi - lo) * k) / (count - 1);
      const weights = cellDeclusteringWeights(x, y, c, offsets);
      const mean = weightedMean(z, weights);
      candidates.push({ cellKm: c, declusteredMean: mean });
      if (best === null || mean < best.mean) best = { cellKm: c, weights, mean };
    }
  }
  const b = best!;
  let minW = Infinity,
    maxW = -Infinity;
  for (let i = 0; i < n; i++) {
    minW = Math.min(minW, b.weights[i]);
    maxW = Math.max(maxW, b.weights[i]);
  }
  const report: DeclusteringReport = {
    method: 'cell declustering (Journel 1983; Deutsch & Journel 1998, GSLIB declus), weights averaged over origin offsets, mean 1',
    cellKm: b.cellKm,
    selectedBy: opts.cellKm !== undefined ? 'given' : 'minimum declustered mean',
    offsets,
    naiveMean,
    declusteredMean: b.mean,
    naiveSd: weightedSd(z, ones, naiveMean),
    declusteredSd: weightedSd(z, b.weights, b.mean),
    minWeight: minW,
    maxWeight: maxW,
  };
  if (candidates !== undefined) report.candidates = candidates;
  return { weights: b.weights, report };
}

/**
 * Declustering of points given in lon/lat degrees (distances in the local transverse Mercator km of projection.ts):
 * 'none' → null; 'auto' → the cell of the minimum declustered mean; { cellKm } → that cell.
 */
export function declusterLonLat(
  points: { lon: ArrayLike<number>; lat: ArrayLike<number>; values: ArrayLike<number> },
  d: 'none' | 'auto' | { cellKm: number },
): { weights: Float64Array; report: DeclusteringReport } | null {
  if (d === 'none') return null;
  const n = points.lon.length;
  const x = new Float64Array(n),
    y = new Float64Array(n);
  lonLatToLocalKm(localProjectionFor(points.lon, points.lat), points.lon, points.lat, x, y);
  return decluster(x, y, points.values, d === 'auto' ? {} : { cellKm: d.cellKm });
}
