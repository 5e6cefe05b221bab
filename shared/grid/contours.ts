/**
 * Isolines of a continuous grid as open GeoJSON LineStrings in lon/lat (RFC 7946), from d3-contour's marching
 * squares (linear interpolation along cell edges).
 *
 * d3-contour returns, per threshold, the polygons of the region ≥ threshold in index space, where the sample of
 * cell (col, row) sits at (col + 0.5, row + 0.5); values outside the grid and NaN count as below every threshold.
 * So each ring is made of true isoline pieces plus pieces that only trace the grid border or a NoData edge. Every
 * ring segment lies inside one marching square whose corners are four samples; a segment is kept only when all
 * four are inside the grid and finite (a segment that lies exactly on a square's side, where a sample equals the
 * threshold, is checked against both squares). The kept runs of each ring become LineStrings (a ring with no cut
 * stays closed). Coordinates are mapped to the grid CRS once at the end (x = west + ix·dx, y = north − iy·dy) and
 * then to lon/lat by `toLonLat` (needed for a projected grid).
 */
import { contours as d3contours } from 'd3-contour';
import type { Grid } from './grid.ts';

export interface ContourOptions {
  /** Explicit levels; or give `interval` (and optionally `base`, default 0) for levels base + k·interval. */
  levels?: number[];
  interval?: number;
  base?: number;
  /** Units written beside each value (default the grid's units). */
  units?: string;
  /** Grid CRS → [lon, lat]; default identity, which is only right for EPSG:4326. */
  toLonLat?: (x: number, y: number) => [number, number];
  /** Decimal places kept in the output coordinates (default 7, about 1 cm in latitude). */
  decimals?: number;
  /** At most this many levels (default 500): more is an error, not a silent cut. */
  maxLevels?: number;
}

export interface ContourFeature {
  type: 'Feature';
  geometry: { type: 'LineString'; coordinates: [number, number][] };
  properties: { value: number; units: string };
}

export interface ContourCollection {
  type: 'FeatureCollection';
  features: ContourFeature[];
}

/** Index-space lines of one level: arrays of [ix, iy] (sample of cell (c, r) at (c + 0.5, r + 0.5)). */
export type IndexLine = [number, number][];

/** Levels base + k·interval inside [min, max] of the finite values (empty when the grid has none). */
export function contourLevels(values: ArrayLike<number>, interval: number, base = 0, maxLevels = 500): number[] {
  if (!(interval > 0) || !Number.isFinite(interval)) throw new RangeError(`contour interval must be > 0, got ${interval}`);
  let min = Infinity, max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v && v !== Infinity && v !== -Infinity) { if (v < min) min = v; if (v > max) max = v; }
  }
  if (!(max >= min)) return [];
  const k0 = Math.ceil((min - base) / interval - 1e-9), k1 = Math.floor((max - base) / interval + 1e-9);
  if (k1 - k0 + 1 > maxLevels) throw new RangeError(`${k1 - k0 + 1} contour levels at interval ${interval} exceed the limit of ${maxLevels}: use a larger interval`);
  const out: number[] = [];
  // Rounded to 12 significant digits so 0.1-type intervals give clean labels.
  for (let k = k0; k <= k1; k++) out.push(+(base + k * interval).toPrecision(12));
  return out;
}

/** A "nice" interval (1, 2, 2.5 or 5 × 10ⁿ) giving about `target` levels over [min, max]. */
export function niceContourInterval(min: number, max: number, target = 12): number {
  const span = max - min;
  if (!(span > 0) || !Number.isFinite(span)) return 1;
  const raw = span / target;
  const p = 10 ** Math.floor(Math.log10(raw));
  for (const m of [1, 2, 2.5, 5, 10]) if (m * p >= raw) return m * p;
  return 10 * p;
}

/**
 * Isolines of one level in index space: d3-contour's rings with the border and NoData segments removed.
 * `values` is row-major width × height (NaN = no data).
 */
export function isolinesIndex(values: ArrayLike<number>, width: number, height: number, level: number, generator = d3contours().size([width, height])): IndexLine[] {
  const mp = generator.contour(values as number[], level);
  const out: IndexLine[] = [];
  const push = (line: IndexLine) => {
    for (let i = 1; i < line.length; i++) if (line[i][0] !== line[0][0] || line[i][1] !== line[0][1]) { out.push(line); return; }
  };
  const finiteAt = (c: number, r: number) => {
    if (c < 0 || r < 0 || c >= width || r >= height) return false;
    const v = values[r * width + c];
    return v === v && v !== Infinity && v !== -Infinity;
  };
  // The marching square holding a segment: corners (c, r), (c+1, r), (c, r+1), (c+1, r+1), c = ⌊mx − 0.5⌋.
  // A midpoint exactly on a square's side belongs to both neighbours; both must be clean.
  const squareOk = (mx: number, my: number) => {
    const fx = mx - 0.5, fy = my - 0.5;
    const c = Math.floor(fx), r = Math.floor(fy);
    const c0 = fx === c ? c - 1 : c, r0 = fy === r ? r - 1 : r;
    for (let rr = r0; rr <= r + 1; rr++) for (let cc = c0; cc <= c + 1; cc++) if (!finiteAt(cc, rr)) return false;
    return true;
  };
  for (const polygon of mp.coordinates) {
    for (const ring of polygon) {
      const n = ring.length - 1; // closed: ring[n] equals ring[0]
      if (n < 2) continue;
      const good = new Uint8Array(n);
      let nGood = 0;
      for (let i = 0; i < n; i++) {
        const a = ring[i], b = ring[i + 1];
        // Zero-length (a sample equal to the level collapses two ends onto it): neutral, never a cut.
        if ((a[0] === b[0] && a[1] === b[1]) || squareOk((a[0] + b[0]) / 2, (a[1] + b[1]) / 2)) { good[i] = 1; nGood++; }
      }
      if (nGood === 0) continue;
      if (nGood === n) {
        push(ring.map((p) => [p[0], p[1]] as [number, number]));
        continue;
      }
      // Start just after a cut segment so no run wraps around the ring's start.
      let s = 0;
      while (good[s]) s++;
      let line: IndexLine | null = null;
      for (let k = 1; k <= n; k++) {
        const i = (s + k) % n;
        if (good[i]) {
          if (line === null) line = [[ring[i][0], ring[i][1]]];
          line.push([ring[i + 1][0], ring[i + 1][1]]);
        } else if (line !== null) {
          push(line);
          line = null;
        }
      }
      if (line !== null) push(line);
    }
  }
  return out;
}

/**
 * Contours of a grid as a GeoJSON FeatureCollection of LineStrings with `value` and `units` properties.
 * Levels come from `levels`, or every `interval` (from `base`) within the data range.
 */
export function contourGrid(grid: Grid<Float32Array | Float64Array>, opts: ContourOptions): ContourCollection {
  const levels = opts.levels ?? (opts.interval !== undefined ? contourLevels(grid.values, opts.interval, opts.base ?? 0, opts.maxLevels ?? 500) : null);
  if (levels === null) throw new RangeError('contourGrid needs levels or an interval');
  if (levels.length > (opts.maxLevels ?? 500)) throw new RangeError(`${levels.length} contour levels exceed the limit of ${opts.maxLevels ?? 500}`);
  const units = opts.units ?? grid.units;
  const f = 10 ** (opts.decimals ?? 7);
  const round = (v: number) => Math.round(v * f) / f;
  const toLonLat = opts.toLonLat;
  if (toLonLat === undefined && !/^EPSG:4326$/i.test(grid.crs)) throw new RangeError(`contours of a ${grid.crs} grid need a toLonLat converter`);
  const gen = d3contours().size([grid.width, grid.height]);
  const features: ContourFeature[] = [];
  for (const level of levels) {
    for (const line of isolinesIndex(grid.values, grid.width, grid.height, level, gen)) {
      const coords: [number, number][] = [];
      for (const [ix, iy] of line) {
        const x = grid.west + ix * grid.dx, y = grid.north - iy * grid.dy;
        const p = toLonLat === undefined ? [x, y] : toLonLat(x, y);
        const q: [number, number] = [round(p[0]), round(p[1])];
        const last = coords[coords.length - 1];
        if (last === undefined || last[0] !== q[0] || last[1] !== q[1]) coords.push(q);
      }
      if (coords.length >= 2) features.push({ type: 'Feature', geometry: { type: 'LineString', coordinates: coords }, properties: { value: level, units } });
    }
  }
  return { type: 'FeatureCollection', features };
}
