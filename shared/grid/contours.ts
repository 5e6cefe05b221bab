/**
 * Isolines of a continuous grid as open GeoJSON LineStrings in lon/lat (RFC 7946), by marching squares with linear
 * interpolation along square sides (the method of d3-contour, which the tests use as the reference), traced as
 * open lines directly: squares with a no-data corner draw nothing, so no line runs along no data or the border.
 * Coordinates are mapped to the grid CRS once at the end (x = west + ix·dx, y = north − iy·dy) and then to lon/lat
 * by `toLonLat` (needed for a projected grid).
 */
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
  let min = Infinity,
    max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v && v !== Infinity && v !== -Infinity) {
      if (v < min) min = v;
      if (v > max) max = v;
    }
  }
  if (!(max >= min)) return [];
  const k0 = Math.ceil((min - base) / interval - 1e-9),
    k1 = Math.floor((max - base) / interval + 1e-9);
  if (k1 - k0 + 1 > maxLevels)
    throw new RangeError(`${k1 - k0 + 1} contour levels at interval ${interval} exceed the limit of ${maxLevels}: use a larger interval`);
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
 * Isolines of one level in index space. Equal to `isolinesIndexLevels(values, width, height, [level])[0]`.
 */
export function isolinesIndex(values: ArrayLike<number>, width: number, height: number, level: number): IndexLine[] {
  return isolinesIndexLevels(values, width, height, [level])[0];
}

// Segment table of marching squares. Corner bits: top-left 8, top-right 4, bottom-right 2, bottom-left 1 (bit set
// = sample ≥ level). Square edges: 0 top, 1 right, 2 bottom, 3 left. Each entry lists edge pairs; the two saddle
// cases (5, 10) are resolved by the square's mean (the "asymptotic" centre value of the four samples).
const SEGMENTS: number[][] = [[], [3, 2], [2, 1], [3, 1], [0, 1], [], [0, 2], [3, 0], [3, 0], [0, 2], [], [0, 1], [3, 1], [2, 1], [3, 2], []];
const SADDLE_5_CENTRE_ABOVE = [3, 0, 2, 1]; // tr and bl joined through the centre: cut off tl and br
const SADDLE_5_CENTRE_BELOW = [3, 2, 0, 1]; // tr and bl isolated
const SADDLE_10_CENTRE_ABOVE = [0, 1, 3, 2]; // tl and br joined: cut off tr and bl
const SADDLE_10_CENTRE_BELOW = [3, 0, 2, 1]; // tl and br isolated

/**
 * Marching-squares segments per level (levels sorted ascending): the crossing points' side ids, two per segment.
 * Side id of the horizontal side from sample (c, r) to (c + 1, r): 2·(r·width + c); of the vertical side from (c, r)
 * to (c, r + 1): 2·(r·width + c) + 1.
 */
function segmentsByLevel(values: ArrayLike<number>, width: number, height: number, sorted: readonly number[]): number[][] {
  const segs: number[][] = sorted.map(() => []);
  const fin = (v: number) => v === v && v !== Infinity && v !== -Infinity;
  for (let r = 0; r + 1 < height; r++) {
    for (let c = 0; c + 1 < width; c++) {
      const i = r * width + c;
      const tl = values[i],
        tr = values[i + 1],
        bl = values[i + width],
        br = values[i + width + 1];
      if (!(fin(tl) && fin(tr) && fin(bl) && fin(br))) continue;
      const lo = Math.min(tl, tr, bl, br),
        hi = Math.max(tl, tr, bl, br);
      // Levels L with lo < L ≤ hi cross this square: first index with sorted[k] > lo.
      let k0 = 0,
        k1 = sorted.length;
      while (k0 < k1) {
        const m = (k0 + k1) >> 1;
        if (sorted[m] > lo) k1 = m;
        else k0 = m + 1;
      }
      if (k0 >= sorted.length || sorted[k0] > hi) continue; // no level crosses this square
      const side = [2 * i, 2 * (i + 1) + 1, 2 * (i + width), 2 * i + 1]; // top, right, bottom, left
      for (let k = k0; k < sorted.length && sorted[k] <= hi; k++) {
        const L = sorted[k];
        const code = (tl >= L ? 8 : 0) | (tr >= L ? 4 : 0) | (br >= L ? 2 : 0) | (bl >= L ? 1 : 0);
        let pairs = SEGMENTS[code];
        if (code === 5 || code === 10) {
          const above = (tl + tr + bl + br) / 4 >= L;
          pairs = code === 5 ? (above ? SADDLE_5_CENTRE_ABOVE : SADDLE_5_CENTRE_BELOW) : above ? SADDLE_10_CENTRE_ABOVE : SADDLE_10_CENTRE_BELOW;
        }
        const out = segs[k];
        for (let p = 0; p < pairs.length; p += 2) out.push(side[pairs[p]], side[pairs[p + 1]]);
      }
    }
  }
  return segs;
}

/** The index-space point where level L crosses a side (linear interpolation between its two samples). */
function sidePoint(values: ArrayLike<number>, width: number, id: number, L: number): [number, number] {
  const cell = id >> 1;
  const r = Math.floor(cell / width),
    c = cell - r * width;
  const v0 = values[cell];
  if ((id & 1) === 0) {
    const v1 = values[cell + 1];
    return [c + 0.5 + (L - v0) / (v1 - v0), r + 0.5];
  }
  const v1 = values[cell + width];
  return [c + 0.5, r + 0.5 + (L - v0) / (v1 - v0)];
}

/**
 * Joins one level's segments (side ids, two per segment) into polylines through their shared side crossings: open
 * chains first, from an end whose side crossing has no second segment; then the closed loops.
 */
function joinSegments(s: readonly number[], point: (id: number) => [number, number]): IndexLine[] {
  // Each side crossing joins at most two segments (its two squares): link the two ends that share it. The ends are
  // sorted by crossing (key id·m + end, exact in a double for any grid that fits in memory) and equal neighbours paired.
  const m = s.length;
  const partner = new Int32Array(m).fill(-1);
  const keys = new Float64Array(m);
  for (let j = 0; j < m; j++) keys[j] = s[j] * m + j;
  keys.sort();
  for (let k = 0; k + 1 < m; k++) {
    const ia = Math.floor(keys[k] / m),
      ib = Math.floor(keys[k + 1] / m);
    if (ia !== ib) continue;
    const ja = keys[k] - ia * m,
      jb = keys[k + 1] - ib * m;
    partner[ja] = jb;
    partner[jb] = ja;
    k++;
  }
  const used = new Uint8Array(m >> 1);
  const lines: IndexLine[] = [];
  const trace = (j0: number, startEnd: number) => {
    // Walk from segment j0, entering at its end `startEnd` (0 or 1), until the chain ends or closes.
    const ids: number[] = [];
    let j = j0,
      e = startEnd;
    ids.push(s[2 * j + e]);
    for (;;) {
      used[j] = 1;
      const exit = s[2 * j + (1 - e)];
      ids.push(exit);
      const n = partner[2 * j + (1 - e)];
      if (n < 0) break;
      const nj = n >> 1;
      if (used[nj]) break;
      j = nj;
      e = n & 1;
    }
    const line: IndexLine = [];
    for (const id of ids) {
      const p = point(id);
      const last = line[line.length - 1];
      if (last === undefined || last[0] !== p[0] || last[1] !== p[1]) line.push(p);
    }
    if (line.length >= 2) lines.push(line);
  };
  for (let j = 0; j < s.length; j++) {
    if (used[j >> 1] || partner[j] >= 0) continue;
    trace(j >> 1, j & 1);
  }
  for (let j = 0; j < used.length; j++) if (!used[j]) trace(j, 0);
  return lines;
}

/**
 * Isolines of several levels in one pass (marching squares with linear interpolation along square sides, the
 * method d3-contour uses; here written to give open lines directly). Each square is the one between four cell
 * centres (col, row) … (col + 1, row + 1), whose samples sit at index coordinates (col + 0.5, row + 0.5); a square
 * with a NaN or infinite corner draws nothing, so no line ever runs along no data or the grid border. Each square
 * is visited once, and only the levels within its corners' range are traced: the cost is cells + segments, not
 * cells × levels. Pieces are joined into polylines through their shared side crossings; a chain that meets itself
 * is closed (first point = last). A sample exactly equal to a level counts as above it (≥), as in d3-contour.
 * Returns one list of index-space lines per level, in the order of `levels`.
 */
export function isolinesIndexLevels(values: ArrayLike<number>, width: number, height: number, levels: readonly number[]): IndexLine[][] {
  const result: IndexLine[][] = new Array<IndexLine[]>(levels.length);
  eachLevelLines(values, width, height, levels, (li, lines) => (result[li] = lines));
  return result;
}

/**
 * isolinesIndexLevels level by level: `each(li, lines)` gets the lines of levels[li] (in ascending order of level)
 * as soon as they are joined, and each level's segments are let go once joined, so a caller that converts the lines
 * at once never holds more than one level's index-space lines.
 */
function eachLevelLines(
  values: ArrayLike<number>,
  width: number,
  height: number,
  levels: readonly number[],
  each: (li: number, lines: IndexLine[]) => void,
): void {
  const order = levels.map((_, i) => i).sort((i, j) => levels[i] - levels[j]);
  const sorted = order.map((i) => levels[i]);
  const segs = segmentsByLevel(values, width, height, sorted);
  for (let k = 0; k < sorted.length; k++) {
    const L = sorted[k];
    const lines = joinSegments(segs[k], (id) => sidePoint(values, width, id, L));
    segs[k] = [];
    each(order[k], lines);
  }
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
  // Each level's index-space lines become features as soon as they are joined (a continental grid's lines of every
  // level at once would double its contours' memory); the features keep the order of `levels`.
  const perLevel: ContourFeature[][] = levels.map(() => []);
  eachLevelLines(grid.values, grid.width, grid.height, levels, (li, lines) => {
    const level = levels[li],
      features = perLevel[li];
    for (const line of lines) {
      const coords: [number, number][] = [];
      for (const [ix, iy] of line) {
        const x = grid.west + ix * grid.dx,
          y = grid.north - iy * grid.dy;
        const p = toLonLat === undefined ? [x, y] : toLonLat(x, y);
        const q: [number, number] = [round(p[0]), round(p[1])];
        const last = coords[coords.length - 1];
        if (last === undefined || last[0] !== q[0] || last[1] !== q[1]) coords.push(q);
      }
      if (coords.length >= 2) features.push({ type: 'Feature', geometry: { type: 'LineString', coordinates: coords }, properties: { value: level, units } });
    }
  });
  const features: ContourFeature[] = [];
  for (const f of perLevel) for (const x of f) features.push(x);
  return { type: 'FeatureCollection', features };
}
