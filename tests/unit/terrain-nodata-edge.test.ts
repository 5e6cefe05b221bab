// Terrain tiles where the DEM has no data (the corners of a projected DEM brought to lon/lat): the hillshade must
// not see a cliff down to the encoding's lowest code (−10000 m) where the data end. The tile's pixels are decoded
// by GDAL (the reference PNG reader) and MapLibre's "mapbox" decode formula (R·6553.6 + G·25.6 + B·0.1 − 10000).
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { fillNoDataFromNearest, TerrainTiles } from '../../server/terrain.ts';
import { tileXFromLng, tileYFromLat } from '../../shared/grid/webmercator.ts';
import { requireGdal } from '../helpers/gdal.ts';

describe('no data in a terrain DEM', () => {
  it('takes the nearest cell with data (counted in edge-sharing steps); cells with data keep theirs', () => {
    const N = NaN;
    // Worked by hand, chosen so that each no-data cell has one nearest datum.
    expect([...fillNoDataFromNearest(Float32Array.from([5, N, N, N, N, 9, N]), 7, 1)]).toEqual([5, 5, 5, 9, 9, 9, 9]);
    expect([...fillNoDataFromNearest(Float32Array.from([1, N, N, N, N, 8]), 3, 2)]).toEqual([1, 1, 8, 1, 8, 8]);
    expect([...fillNoDataFromNearest(Float32Array.from([N, N, N, N, 4, N, N, N, N]), 3, 3)]).toEqual([4, 4, 4, 4, 4, 4, 4, 4, 4]);
    expect([...fillNoDataFromNearest(Float32Array.from([N, N]), 2, 1)].every((x) => Number.isNaN(x))).toBe(true);
  });

  it('draws no cliff where the DEM ends: every pixel of a tile over a no-data corner decodes within the data range', () => {
    // A sea floor from −5200 to −4810 m (west to east), 0.01° cells, with its north-west corner triangle missing.
    const width = 40,
      height = 40;
    const values = new Float32Array(width * height);
    for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = c + r < 15 ? NaN : -5200 + 10 * c;
    const dem = { width, height, west: 160, north: 35, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units: 'm', values };
    const tiles = new TerrainTiles(dem);
    const z = 11;
    const png = tiles.tile(z, Math.floor(tileXFromLng(160.02, z)), Math.floor(tileYFromLat(34.98, z)));
    expect(png).not.toBeNull();
    const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-'));
    writeFileSync(join(dir, 't.png'), png!);
    requireGdal('gdal_translate');
    const bands = [1, 2, 3].map((b) => {
      const r = spawnSync('gdal_translate', ['-q', '-b', String(b), '-of', 'XYZ', join(dir, 't.png'), '/vsistdout/'], { encoding: 'utf8', maxBuffer: 1 << 26 });
      return r.stdout
        .trim()
        .split('\n')
        .map((l) => Number(l.split(/\s+/)[2]));
    });
    expect(bands[0].length).toBe(256 * 256);
    const heights = bands[0].map((R, i) => R * 6553.6 + bands[1][i] * 25.6 + bands[2][i] * 0.1 - 10000);
    expect(Math.min(...heights)).toBeGreaterThanOrEqual(-5200 - 0.1);
    expect(Math.max(...heights)).toBeLessThanOrEqual(-4810 + 0.1);
  });
});
