/**
 * The project's one raster type: flat row-major values, row 0 at the north (top) edge, NaN = no data.
 * Georeferencing is an axis-aligned affine transform: cell (col, row) covers
 * x ∈ [west + col·dx, west + (col+1)·dx], y ∈ [north − (row+1)·dy, north − row·dy], in the units of `crs`
 * (degrees for EPSG:4326, metres for projected CRSs). Kernels work in index space; callers map to world
 * coordinates once with the converters below.
 */
export interface Grid<V extends Float32Array | Float64Array = Float32Array> {
  width: number;
  height: number;
  values: V;
  /** West edge of column 0 (CRS units). */
  west: number;
  /** North edge of row 0 (CRS units). */
  north: number;
  /** Cell width (CRS units, > 0). */
  dx: number;
  /** Cell height (CRS units, > 0); rows run southwards. */
  dy: number;
  /** 'EPSG:4326', 'EPSG:nnnn' or a proj4 string. Never implicit. */
  crs: string;
  /** Units of the values, e.g. 'mW/m²', 'km', '°C'. */
  units: string;
}

export interface GridSpec {
  width: number;
  height: number;
  west: number;
  north: number;
  dx: number;
  dy: number;
  crs: string;
}

/** The placement fields of a grid (or of anything that extends GridSpec), alone and in GridSpec's order. */
export function gridSpecOf(g: GridSpec): GridSpec {
  return { width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs: g.crs };
}

/** Allocates a NaN-filled Float32 grid. */
export function createGrid(spec: GridSpec, units: string): Grid<Float32Array> {
  checkSpec(spec);
  const values = new Float32Array(spec.width * spec.height).fill(NaN);
  return { ...spec, values, units };
}

export function checkSpec(spec: GridSpec): void {
  if (!(Number.isInteger(spec.width) && spec.width > 0)) throw new RangeError(`grid width must be a positive integer, got ${spec.width}`);
  if (!(Number.isInteger(spec.height) && spec.height > 0)) throw new RangeError(`grid height must be a positive integer, got ${spec.height}`);
  if (!(spec.dx > 0) || !(spec.dy > 0)) throw new RangeError(`grid cell size must be positive, got ${spec.dx} × ${spec.dy}`);
  if (!Number.isFinite(spec.west) || !Number.isFinite(spec.north)) throw new RangeError('grid origin must be finite');
}

/** Bounding box [west, south, east, north] of the grid's outer edges, in CRS units. */
export function gridBbox(g: GridSpec): [number, number, number, number] {
  return [g.west, g.north - g.height * g.dy, g.west + g.width * g.dx, g.north];
}

/** Centre x of column `col` (CRS units). */
export function xFromCol(g: GridSpec, col: number): number {
  return g.west + (col + 0.5) * g.dx;
}

/** Centre y of row `row` (CRS units). */
export function yFromRow(g: GridSpec, row: number): number {
  return g.north - (row + 0.5) * g.dy;
}

/** Fractional column of x (cell centres at integer + 0.5 − 0.5 = integer). */
export function colFromX(g: GridSpec, x: number): number {
  return (x - g.west) / g.dx - 0.5;
}

/** Fractional row of y. */
export function rowFromY(g: GridSpec, y: number): number {
  return (g.north - y) / g.dy - 0.5;
}

/** Index of the cell containing (x, y), or −1 outside the grid. */
export function cellIndexFromXY(g: GridSpec, x: number, y: number): number {
  const col = Math.floor((x - g.west) / g.dx);
  const row = Math.floor((g.north - y) / g.dy);
  if (col < 0 || row < 0 || col >= g.width || row >= g.height) return -1;
  return row * g.width + col;
}

/**
 * Bilinear sample at (x, y) between cell centres; NaN outside the grid. When one of the four cells is no data it is
 * NaN too, unless `partial`: then, if the cell containing (x, y) holds a value, the weights of the cells that hold
 * values are renormalised to sum to 1 (normalised convolution, Knutsson & Westin 1993), so that a point in a filled
 * cell beside an empty one (a fault's far side, the edge of the data) still reads the values around it.
 */
export function sampleBilinear(g: Grid<Float32Array | Float64Array>, x: number, y: number, partial = false): number {
  const fc = colFromX(g, x);
  const fr = rowFromY(g, y);
  if (fc < -0.5 || fr < -0.5 || fc > g.width - 0.5 || fr > g.height - 0.5) return NaN;
  const c0 = Math.max(0, Math.min(g.width - 1, Math.floor(fc)));
  const r0 = Math.max(0, Math.min(g.height - 1, Math.floor(fr)));
  const c1 = Math.min(g.width - 1, c0 + 1);
  const r1 = Math.min(g.height - 1, r0 + 1);
  const tx = Math.max(0, Math.min(1, fc - c0));
  const ty = Math.max(0, Math.min(1, fr - r0));
  const v = g.values;
  const a = v[r0 * g.width + c0],
    b = v[r0 * g.width + c1],
    c = v[r1 * g.width + c0],
    d = v[r1 * g.width + c1];
  const full = (a * (1 - tx) + b * tx) * (1 - ty) + (c * (1 - tx) + d * tx) * ty;
  if (!partial || Number.isFinite(full)) return full;
  const here = cellIndexFromXY(g, x, y);
  if (here < 0 || !Number.isFinite(v[here])) return NaN;
  let sum = 0,
    weight = 0;
  const add = (value: number, w: number) => {
    if (Number.isFinite(value) && w > 0) {
      sum += w * value;
      weight += w;
    }
  };
  add(a, (1 - tx) * (1 - ty));
  add(b, tx * (1 - ty));
  add(c, (1 - tx) * ty);
  add(d, tx * ty);
  return weight > 0 ? sum / weight : v[here];
}

/** Min, max, mean and no-data count of the finite values (NaN skipped). */
export function gridStats(values: ArrayLike<number>): { min: number | null; max: number | null; mean: number | null; noData: number; count: number } {
  let min = Infinity,
    max = -Infinity,
    sum = 0,
    n = 0,
    noData = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (!Number.isFinite(v)) {
      noData++;
      continue;
    }
    if (v < min) min = v;
    if (v > max) max = v;
    sum += v;
    n++;
  }
  return n === 0 ? { min: null, max: null, mean: null, noData, count: 0 } : { min, max, mean: sum / n, noData, count: n };
}
