/**
 * What the page reads first: GET /api/config (the caution, the demo's data sets, the terrain tile source),
 * GET /api/limits (every limit and the model bounds) and the terrain tiles GET /api/terrain/{z}/{x}/{y}.png.
 */
import type { Hono } from 'hono';
import { CAUTION } from '../../shared/caution.ts';
import { VERSION } from '../../shared/version.ts';
import { DEMO_DATASETS, DEMO_PROJECT_ID } from '../demo.ts';
import { limitsView, type Limits } from '../limits.ts';
import { pngTile, tileAddress } from './png-tiles.ts';
import { TERRAIN_MAX_ZOOM, TERRAIN_MIN_ZOOM, type TerrainTiles } from '../terrain.ts';

export function configRoutes(app: Hono, limits: Limits, terrain: TerrainTiles | null): void {
  app.get('/api/limits', (c) => c.json(limitsView(limits)));

  app.get('/api/config', (c) =>
    c.json({
      version: VERSION,
      caution: CAUTION,
      demo: {
        name: 'Orrindel Massif',
        invented: true,
        projectId: DEMO_PROJECT_ID,
        datasets: Object.fromEntries(DEMO_DATASETS.map((d) => [d.kind, d.id])),
      },
      terrain: terrain
        ? {
            tiles: '/api/terrain/{z}/{x}/{y}.png',
            bounds: terrain.bbox,
            minzoom: TERRAIN_MIN_ZOOM,
            maxzoom: TERRAIN_MAX_ZOOM,
            encoding: 'mapbox',
            tileSize: 256,
          }
        : null,
    }),
  );

  app.get('/api/terrain/:z/:x/:y', (c) => {
    const t = tileAddress(c, 'a terrain tile');
    const zooms = `the terrain or zoom ${TERRAIN_MIN_ZOOM}–${TERRAIN_MAX_ZOOM}`;
    return pngTile(c, terrain?.tile(t.z, t.x, t.y) ?? null, t, 'terrain tile', zooms, 'public, max-age=3600');
  });
}
