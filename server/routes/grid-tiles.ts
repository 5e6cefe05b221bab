import { Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { encodingForUnits, maplibreEncoding } from '../../shared/grid/terrain-rgb.ts';
import { WindowTiles } from '../terrain.ts';
import { pngTile, tileAddress } from './png-tiles.ts';
import type { GeoTiffFile } from '../io/geotiff.ts';

/** Zoom range of run-layer tiles: whole regions at 4, about 20 m pixels at 13. */
const MIN_ZOOM = 4;
const MAX_ZOOM = 13;

export interface GridTileDeps {
  /**
   * The stored GeoTIFF (COG) of one run layer opened for window reads, or null when the run or layer does not exist.
   * Tiles read only the cells they sample, so no layer is ever held whole.
   */
  openLayerFile(runId: string, layer: string): Promise<GeoTiffFile | null>;
  /** The operator's public base URL (no trailing slash); null keeps tile URLs relative to the page. */
  publicBaseUrl?: string | null;
}

/** Tiles of a run layer and the open file they read, kept for the `maxLayers` most recently used layers. */
function layerTileCache(deps: GridTileDeps, maxLayers: number): (runId: string, layer: string) => Promise<{ tiles: WindowTiles; units: string }> {
  const cache = new Map<string, { tiles: WindowTiles; file: GeoTiffFile }>();
  const opening = new Map<string, Promise<GeoTiffFile | null>>();

  async function tilesFor(runId: string, layer: string): Promise<{ tiles: WindowTiles; units: string }> {
    // Names come from the URL: a strict alphabet keeps them out of any path or query.
    if (!/^[A-Za-z0-9_.-]{1,100}$/.test(runId) || !/^[A-Za-z0-9_.-]{1,100}$/.test(layer)) {
      throw new InputError('bad run or layer name', [{ field: 'path', problem: 'letters, digits, _ . - only' }], 'bad_request');
    }
    const key = `${runId}/${layer}`;
    const hit = cache.get(key);
    if (hit) {
      cache.delete(key);
      cache.set(key, hit);
      return { tiles: hit.tiles, units: hit.tiles.units };
    }
    // One open per layer even when its first tiles are asked for together.
    let pending = opening.get(key);
    if (!pending) {
      pending = deps.openLayerFile(runId, layer).finally(() => opening.delete(key));
      opening.set(key, pending);
    }
    const file = await pending;
    const again = cache.get(key);
    if (again) return { tiles: again.tiles, units: again.tiles.units };
    if (!file) throw new InputError(`no raster layer "${layer}" in run "${runId}"`, [{ field: 'layer', problem: 'not found' }], 'not_found');
    const crs = file.header.spec.crs;
    if (crs !== 'EPSG:4326') {
      await file.close();
      throw new InputError(
        `layer "${layer}" is on a projected grid (${crs}); map tiles need a lon/lat grid`,
        [{ field: 'layer', problem: 'download it as GeoTIFF instead' }],
        'projected_layer',
      );
    }
    const { min } = await file.range();
    const tiles = new WindowTiles(file, encodingForUnits(file.header.units, min ?? 0), { minZoom: MIN_ZOOM, maxZoom: MAX_ZOOM, cacheSize: 256 });
    cache.set(key, { tiles, file });
    if (cache.size > maxLayers) {
      const oldest = cache.keys().next().value as string;
      void cache
        .get(oldest)!
        .file.close()
        .catch(() => undefined);
      cache.delete(oldest);
    }
    return { tiles, units: tiles.units };
  }
  return tilesFor;
}

/**
 * Raster-dem tiles of a run's scalar layers, so the map colours them on the GPU (color-relief) and a change of
 * ramp or range needs no new tiles. Routes (mounted under /api):
 *   GET /runs/:id/tiles/:layer.json           → { tiles, bounds, minzoom, maxzoom, encoding: 'custom', redFactor,
 *                                                greenFactor, blueFactor, baseShift, noDataValue, noDataBelow,
 *                                                units, step }
 *   GET /runs/:id/tiles/:layer/:z/:x/:y.png   → a 256-px tile
 * The encoding fields go to a MapLibre raster-dem source as they are (MapLibre subtracts baseShift). Code 0
 * decodes to `noDataValue`, one step below the layer's minimum: no data; every real value is above `noDataBelow`.
 */
export function gridTileRoutes(deps: GridTileDeps, opts: { cacheLayers?: number } = {}): Hono {
  const app = new Hono();
  const tilesFor = layerTileCache(deps, opts.cacheLayers ?? 16);

  app.get('/runs/:id/tiles/:file', async (c) => {
    const m = /^(.+)\.json$/.exec(c.req.param('file'));
    if (!m) throw new InputError('expected /api/runs/:id/tiles/:layer.json', [{ field: 'path', problem: c.req.param('file') }], 'not_found');
    const { tiles, units } = await tilesFor(c.req.param('id'), m[1]);
    // Absolute only from the operator's public base URL; otherwise relative to the page (never the Host header).
    const origin = deps.publicBaseUrl ?? '';
    return c.json({
      tiles: [`${origin}/api/runs/${encodeURIComponent(c.req.param('id'))}/tiles/${encodeURIComponent(m[1])}/{z}/{x}/{y}.png`],
      bounds: tiles.bbox,
      minzoom: MIN_ZOOM,
      maxzoom: MAX_ZOOM,
      tileSize: 256,
      ...maplibreEncoding(tiles.encoding),
      noDataValue: tiles.encoding.baseShift,
      noDataBelow: tiles.encoding.baseShift + tiles.encoding.step / 2,
      step: tiles.encoding.step,
      units,
    });
  });

  app.get('/runs/:id/tiles/:layer/:z/:x/:y', async (c) => {
    const { id, layer } = c.req.param();
    const t = tileAddress(c, 'a tile');
    const { tiles } = await tilesFor(id, layer);
    const png = await tiles.tile(t.z, t.x, t.y);
    return pngTile(c, png, t, `layer "${layer}" tile`, `the layer or zoom ${MIN_ZOOM}–${MAX_ZOOM}`, 'public, max-age=86400, immutable');
  });

  return app;
}
