import { readFile } from 'node:fs/promises';
import type { Grid } from '../shared/grid/grid.ts';
import { gridBbox } from '../shared/grid/grid.ts';
import { encodeRgb, TERRAIN_RGB, type RgbEncoding } from '../shared/grid/terrain-rgb.ts';
import { lngFromTileX, latFromTileY, tileIntersectsBbox } from '../shared/grid/webmercator.ts';
import { encodePng } from './io/png.ts';
import { readGeoTiff } from './io/geotiff.ts';

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
 * Renders raster-dem tiles (256 px) of any lon/lat grid by bilinear sampling at each pixel centre, in an RGB
 * encoding of shared/grid/terrain-rgb.ts. Where a neighbour is no data the nearest cell's value is used, so no-data
 * never bleeds into its neighbours; beyond the grid, `edge: 'clamp'` repeats the edge (terrain: no seam in the
 * hillshade) and `edge: 'nodata'` writes no data. Tiles are cached, least recently used first out.
 */
export class GridTiles {
  readonly bbox: [number, number, number, number];
  private readonly cache = new Map<string, Buffer>();
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
  }

  /** Units of the grid's values. */
  get units(): string {
    return this.grid.units;
  }

  /** The PNG of tile z/x/y, or null when the tile lies outside the grid or the zoom range. */
  tile(z: number, x: number, y: number): Buffer | null {
    const minZ = this.opts.minZoom ?? TERRAIN_MIN_ZOOM, maxZ = this.opts.maxZoom ?? TERRAIN_MAX_ZOOM;
    if (!(z >= minZ && z <= maxZ) || x < 0 || y < 0 || x >= 2 ** z || y >= 2 ** z) return null;
    if (!tileIntersectsBbox(z, x, y, this.bbox)) return null;
    const key = `${z}/${x}/${y}`;
    const hit = this.cache.get(key);
    if (hit) {
      this.cache.delete(key);
      this.cache.set(key, hit);
      return hit;
    }
    const png = this.render(z, x, y);
    this.cache.set(key, png);
    if (this.cache.size > (this.opts.cacheSize ?? 512)) this.cache.delete(this.cache.keys().next().value as string);
    return png;
  }

  private render(z: number, x: number, y: number): Buffer {
    const d = this.grid;
    const maxC = d.width - 1, maxR = d.height - 1;
    const clamp = this.opts.edge === 'clamp';
    // Fractional grid column/row of each pixel centre, computed once per tile axis (NaN = beyond the grid).
    for (let i = 0; i < TILE_SIZE; i++) {
      const lng = lngFromTileX(x + (i + 0.5) / TILE_SIZE, z);
      const lat = latFromTileY(y + (i + 0.5) / TILE_SIZE, z);
      const fc = (lng - d.west) / d.dx - 0.5;
      const fr = (d.north - lat) / d.dy - 0.5;
      this.colX[i] = clamp || (fc >= -0.5 && fc <= maxC + 0.5) ? Math.min(maxC, Math.max(0, fc)) : NaN;
      this.rowY[i] = clamp || (fr >= -0.5 && fr <= maxR + 0.5) ? Math.min(maxR, Math.max(0, fr)) : NaN;
    }
    const v = d.values;
    const enc = this.encoding;
    for (let py = 0; py < TILE_SIZE; py++) {
      const fr = this.rowY[py];
      const r0 = Math.floor(fr), r1 = Math.min(maxR, r0 + 1), ty = fr - r0;
      for (let px = 0; px < TILE_SIZE; px++) {
        const fc = this.colX[px];
        let h = NaN;
        if (fc === fc && fr === fr) {
          const c0 = Math.floor(fc), c1 = Math.min(maxC, c0 + 1), tx = fc - c0;
          const a = v[r0 * d.width + c0], b = v[r0 * d.width + c1], c = v[r1 * d.width + c0], e = v[r1 * d.width + c1];
          h = (a * (1 - tx) + b * tx) * (1 - ty) + (c * (1 - tx) + e * tx) * ty;
          if (h !== h) h = v[(ty < 0.5 ? r0 : r1) * d.width + (tx < 0.5 ? c0 : c1)];
        }
        encodeRgb(enc, h, this.rgb, (py * TILE_SIZE + px) * 3);
      }
    }
    return encodePng(this.rgb, TILE_SIZE, TILE_SIZE, 3);
  }
}

/** Terrain tiles: the DEM in MapLibre's `mapbox` encoding, edges clamped. */
export class TerrainTiles extends GridTiles {
  constructor(dem: Grid<Float32Array>) {
    super(dem, TERRAIN_RGB, { edge: 'clamp' });
  }
}
