import { readFile } from 'node:fs/promises';
import type { Grid } from '../shared/grid/grid.ts';
import { gridBbox } from '../shared/grid/grid.ts';
import { encodeRgb, TERRAIN_RGB, type RgbEncoding } from '../shared/grid/terrain-rgb.ts';
import { lngFromTileX, latFromTileY, tileIntersectsBbox } from '../shared/grid/webmercator.ts';
import { encodePng } from './io/png.ts';
import { readGeoTiff, type GeoTiffFile, type GeoTiffLevel } from './io/geotiff.ts';

export const TILE_SIZE = 256;
export const TERRAIN_MIN_ZOOM = 4;
export const TERRAIN_MAX_ZOOM = 13;

/** Reads a lon/lat DEM GeoTIFF (EPSG:4326, metres; band 1) into a Grid through the project's one GeoTIFF reader. */
export async function loadDem(path: string): Promise<Grid<Float32Array>> {
  const r = await readGeoTiff(await readFile(path), { source: path });
  if (r.grid.crs !== 'EPSG:4326') throw new RangeError(`${path}: a terrain DEM must be in EPSG:4326, got ${r.grid.crs}`);
  return { ...r.grid, units: 'm' };
}

/**
 * Fractional column and row (cell centres at integers) of each tile pixel centre against `d`, NaN beyond it
 * (clamped to the edge with `clamp`).
 */
function tileAxes(d: GeoTiffLevel, z: number, x: number, y: number, clamp: boolean, colX: Float64Array, rowY: Float64Array): void {
  const maxC = d.width - 1,
    maxR = d.height - 1;
  for (let i = 0; i < TILE_SIZE; i++) {
    const lng = lngFromTileX(x + (i + 0.5) / TILE_SIZE, z);
    const lat = latFromTileY(y + (i + 0.5) / TILE_SIZE, z);
    const fc = (lng - d.west) / d.dx - 0.5;
    const fr = (d.north - lat) / d.dy - 0.5;
    colX[i] = clamp || (fc >= -0.5 && fc <= maxC + 0.5) ? Math.min(maxC, Math.max(0, fc)) : NaN;
    rowY[i] = clamp || (fr >= -0.5 && fr <= maxR + 0.5) ? Math.min(maxR, Math.max(0, fr)) : NaN;
  }
}

/** The cells a tile's bilinear samples touch: [c0, c1) × [r0, r1) of the level, or null when none. */
function tileWindow(d: GeoTiffLevel, colX: Float64Array, rowY: Float64Array): [number, number, number, number] | null {
  let cMin = Infinity,
    cMax = -Infinity,
    rMin = Infinity,
    rMax = -Infinity;
  for (let i = 0; i < TILE_SIZE; i++) {
    const c = colX[i],
      r = rowY[i];
    if (c === c) {
      if (c < cMin) cMin = c;
      if (c > cMax) cMax = c;
    }
    if (r === r) {
      if (r < rMin) rMin = r;
      if (r > rMax) rMax = r;
    }
  }
  if (!(cMin <= cMax && rMin <= rMax)) return null;
  return [Math.floor(cMin), Math.floor(rMin), Math.min(d.width, Math.floor(cMax) + 2), Math.min(d.height, Math.floor(rMax) + 2)];
}

/**
 * Bilinear samples at the tile's pixel centres from the cells [c0, c0 + ww) × [r0, …) of a level held in `v`
 * (row-major, width ww), encoded into `rgb`. Where a neighbour is no data the nearest cell's value is used.
 */
function renderPixels(
  d: GeoTiffLevel,
  v: ArrayLike<number>,
  c0w: number,
  r0w: number,
  ww: number,
  colX: Float64Array,
  rowY: Float64Array,
  enc: RgbEncoding,
  rgb: Uint8Array,
): void {
  const maxC = d.width - 1,
    maxR = d.height - 1;
  for (let py = 0; py < TILE_SIZE; py++) {
    const fr = rowY[py];
    const r0 = Math.floor(fr),
      r1 = Math.min(maxR, r0 + 1),
      ty = fr - r0;
    const b0 = (r0 - r0w) * ww - c0w,
      b1 = (r1 - r0w) * ww - c0w;
    for (let px = 0; px < TILE_SIZE; px++) {
      const fc = colX[px];
      let h = NaN;
      if (fc === fc && fr === fr) {
        const c0 = Math.floor(fc),
          c1 = Math.min(maxC, c0 + 1),
          tx = fc - c0;
        const a = v[b0 + c0],
          b = v[b0 + c1],
          c = v[b1 + c0],
          e = v[b1 + c1];
        h = (a * (1 - tx) + b * tx) * (1 - ty) + (c * (1 - tx) + e * tx) * ty;
        if (h !== h) h = v[(ty < 0.5 ? b0 : b1) + (tx < 0.5 ? c0 : c1)];
      }
      encodeRgb(enc, h, rgb, (py * TILE_SIZE + px) * 3);
    }
  }
}

/** A least-recently-used map of tiles. */
class TileCache {
  private readonly map = new Map<string, Buffer>();
  constructor(private readonly size: number) {}
  get(key: string): Buffer | undefined {
    const hit = this.map.get(key);
    if (hit) {
      this.map.delete(key);
      this.map.set(key, hit);
    }
    return hit;
  }
  set(key: string, png: Buffer): void {
    this.map.set(key, png);
    if (this.map.size > this.size) this.map.delete(this.map.keys().next().value as string);
  }
}

/**
 * Renders raster-dem tiles (256 px) of any lon/lat grid by bilinear sampling at each pixel centre, in an RGB
 * encoding of shared/grid/terrain-rgb.ts. Where a neighbour is no data the nearest cell's value is used, so no-data
 * never bleeds into its neighbours; beyond the grid, `edge: 'clamp'` repeats the edge (terrain: no seam in the
 * hillshade) and `edge: 'nodata'` writes no data. Tiles are cached, least recently used first out.
 */
export class GridTiles {
  readonly bbox: [number, number, number, number];
  private readonly cache: TileCache;
  private readonly colX = new Float64Array(TILE_SIZE);
  private readonly rowY = new Float64Array(TILE_SIZE);
  private readonly rgb = new Uint8Array(TILE_SIZE * TILE_SIZE * 3);

  constructor(
    private readonly grid: Grid<Float32Array>,
    readonly encoding: RgbEncoding,
    private readonly opts: { edge: 'clamp' | 'nodata'; minZoom?: number; maxZoom?: number; cacheSize?: number } = { edge: 'nodata' },
  ) {
    if (grid.crs !== 'EPSG:4326') throw new RangeError(`map tiles need a lon/lat (EPSG:4326) grid, got ${grid.crs}`);
    this.bbox = gridBbox(grid);
    this.cache = new TileCache(opts.cacheSize ?? 512);
  }

  /** Units of the grid's values. */
  get units(): string {
    return this.grid.units;
  }

  /** The PNG of tile z/x/y, or null when the tile lies outside the grid or the zoom range. */
  tile(z: number, x: number, y: number): Buffer | null {
    const minZ = this.opts.minZoom ?? TERRAIN_MIN_ZOOM,
      maxZ = this.opts.maxZoom ?? TERRAIN_MAX_ZOOM;
    if (!(z >= minZ && z <= maxZ) || x < 0 || y < 0 || x >= 2 ** z || y >= 2 ** z) return null;
    if (!tileIntersectsBbox(z, x, y, this.bbox)) return null;
    const key = `${z}/${x}/${y}`;
    const hit = this.cache.get(key);
    if (hit) return hit;
    const png = this.render(z, x, y);
    this.cache.set(key, png);
    return png;
  }

  private render(z: number, x: number, y: number): Buffer {
    const d = this.grid;
    tileAxes(d, z, x, y, this.opts.edge === 'clamp', this.colX, this.rowY);
    renderPixels(d, d.values, 0, 0, d.width, this.colX, this.rowY, this.encoding, this.rgb);
    return encodePng(this.rgb, TILE_SIZE, TILE_SIZE, 3);
  }
}

/**
 * Raster-dem tiles of a lon/lat GeoTIFF read window by window, so a grid of any size is served without holding it:
 * each tile reads only the cells its pixels sample, from the coarsest level (full resolution or internal overview)
 * whose cells are no larger than the tile's pixels, and renders them exactly as `GridTiles` renders a held grid.
 */
export class WindowTiles {
  readonly bbox: [number, number, number, number];
  private readonly cache: TileCache;

  constructor(
    private readonly file: GeoTiffFile,
    readonly encoding: RgbEncoding,
    private readonly opts: { minZoom: number; maxZoom: number; cacheSize?: number },
  ) {
    const h = file.header;
    if (h.spec.crs !== 'EPSG:4326') throw new RangeError(`map tiles need a lon/lat (EPSG:4326) grid, got ${h.spec.crs}`);
    this.bbox = gridBbox(h.spec);
    this.cache = new TileCache(opts.cacheSize ?? 256);
  }

  get units(): string {
    return this.file.header.units;
  }

  /** The level a tile at zoom z samples: the coarsest whose cell is at most the tile's pixel width (degrees). */
  levelFor(z: number): number {
    const pixelDeg = 360 / (TILE_SIZE * 2 ** z);
    let best = 0;
    this.file.levels.forEach((l, i) => {
      if (l.dx <= pixelDeg) best = i;
    });
    return best;
  }

  /** The PNG of tile z/x/y, or null when the tile lies outside the grid or the zoom range. */
  async tile(z: number, x: number, y: number): Promise<Buffer | null> {
    if (!(z >= this.opts.minZoom && z <= this.opts.maxZoom) || x < 0 || y < 0 || x >= 2 ** z || y >= 2 ** z) return null;
    if (!tileIntersectsBbox(z, x, y, this.bbox)) return null;
    const key = `${z}/${x}/${y}`;
    const hit = this.cache.get(key);
    if (hit) return hit;
    const level = this.file.levels[this.levelFor(z)];
    // Buffers per call: tiles of one layer may render concurrently while a window read is awaited.
    const colX = new Float64Array(TILE_SIZE),
      rowY = new Float64Array(TILE_SIZE);
    tileAxes(level, z, x, y, false, colX, rowY);
    const win = tileWindow(level, colX, rowY);
    const rgb = new Uint8Array(TILE_SIZE * TILE_SIZE * 3);
    if (win === null) renderPixels(level, [], 0, 0, 0, colX, rowY, this.encoding, rgb);
    else {
      const [c0, r0, c1, r1] = win;
      const values = await this.file.window(c0, r0, c1, r1, this.levelFor(z));
      renderPixels(level, values, c0, r0, c1 - c0, colX, rowY, this.encoding, rgb);
    }
    const png = encodePng(rgb, TILE_SIZE, TILE_SIZE, 3);
    this.cache.set(key, png);
    return png;
  }
}

/**
 * A copy of `values` (row-major, `width` columns) where each no-data cell takes the value of the nearest cell with
 * data, nearest in steps between edge-sharing cells (a breadth-first search from every cell with data at once).
 * Cells that have data keep it. All no data stays no data.
 */
export function fillNoDataFromNearest(values: Float32Array, width: number, height: number): Float32Array {
  const n = width * height;
  const out = Float32Array.from(values.subarray(0, n));
  const queue = new Int32Array(n);
  let head = 0,
    tail = 0;
  for (let i = 0; i < out.length; i++) if (out[i] === out[i]) queue[tail++] = i;
  while (head < tail) {
    const i = queue[head++];
    const c = i % width;
    for (const j of [c > 0 ? i - 1 : -1, c < width - 1 ? i + 1 : -1, i - width, i + width]) {
      if (j < 0 || j >= n || out[j] === out[j]) continue;
      out[j] = out[i];
      queue[tail++] = j;
    }
  }
  return out;
}

/**
 * Terrain tiles: the DEM in MapLibre's `mapbox` encoding, edges clamped. Its no-data cells (e.g. the corners of a
 * projected DEM brought to lon/lat) take the nearest cell's elevation, so the hillshade runs flat (undrawn) beyond
 * the data instead of drawing a cliff down to the encoding's lowest code where the DEM ends.
 */
export class TerrainTiles extends GridTiles {
  constructor(dem: Grid<Float32Array>) {
    super({ ...dem, values: fillNoDataFromNearest(dem.values, dem.width, dem.height) }, TERRAIN_RGB, { edge: 'clamp' });
  }
}
