import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import type { Grid } from '../../shared/grid/grid.ts';
import { encodingForUnits } from '../../shared/grid/terrain-rgb.ts';
import { writeGeoTiffFile, GeoTiffFile, NODATA } from '../../server/io/geotiff.ts';
import { GridTiles, WindowTiles, TILE_SIZE } from '../../server/terrain.ts';
import { requireGdal } from '../helpers/gdal.ts';

// Map tiles of a stored layer are rendered from window reads of its COG (full resolution or an internal overview)
// and must equal the same tile rendered from the pixels GDAL reads (Debian's gdal-bin: `gdal_translate` of the level
// to raw Float32, georeferencing from `gdalinfo -json`), while reading only a small part of the grid.

const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'window-tiles-'));
const path = join(dir, 'layer.tif');
const W = 2300,
  H = 1700;
const west = 150.2,
  north = -30.1,
  dx = 0.004,
  dy = 0.004;

beforeAll(async () => {
  const values = new Float32Array(W * H);
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) values[r * W + c] = 70 + 25 * Math.sin(r / 97) * Math.cos(c / 131) + 0.01 * ((r * 7 + c * 13) % 17);
  }
  // No-data holes: a block and a sprinkle, so the no-data rules of the sampler are exercised too.
  for (let r = 400; r < 520; r++) for (let c = 900; c < 1100; c++) values[r * W + c] = NaN;
  for (let i = 0; i < values.length; i += 997) values[i] = NaN;
  const grid: Grid<Float32Array> = { width: W, height: H, west, north, dx, dy, crs: 'EPSG:4326', units: 'mW/m²', values };
  await writeGeoTiffFile(path, grid, { description: 'window tiles test' });
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** One level of the file as GDAL reads it: `gdal_translate [-ovr N]` to raw little-endian Float32 (ENVI). */
function gdalLevel(level: number): Grid<Float32Array> {
  requireGdal('gdal_translate', 'gdalinfo');
  const out = join(dir, `level${level}.img`);
  execFileSync('gdal_translate', ['-q', '-of', 'ENVI', '-ot', 'Float32', ...(level > 0 ? ['-ovr', String(level - 1)] : []), path, out]);
  const info = JSON.parse(execFileSync('gdalinfo', ['-json', out], { encoding: 'utf8' })) as { size: [number, number]; geoTransform: number[] };
  const raw = readFileSync(out);
  const f = new Float32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
  const values = Float32Array.from(f, (v) => (v === NODATA ? NaN : v));
  const [w, h] = info.size;
  const gt = info.geoTransform;
  return { width: w, height: h, west: gt[0], north: gt[3], dx: gt[1], dy: -gt[5], crs: 'EPSG:4326', units: 'mW/m²', values };
}

/** The tile (x, y) at zoom z holding lon/lat. */
function tileAt(lon: number, lat: number, z: number): [number, number] {
  const n = 2 ** z;
  const x = Math.floor(((lon + 180) / 360) * n);
  const s = Math.sin((lat * Math.PI) / 180);
  const y = Math.floor((0.5 - Math.log((1 + s) / (1 - s)) / (4 * Math.PI)) * n);
  return [x, y];
}

describe('map tiles from COG windows', () => {
  it("the file has the full grid and its overviews, largest first, with GDAL's georeferencing", async () => {
    const f = await GeoTiffFile.open(path);
    try {
      expect(f.levels.map((l) => [l.width, l.height])).toEqual([
        [2300, 1700],
        [1150, 850],
        [575, 425],
        [288, 213],
      ]);
      for (let i = 0; i < f.levels.length; i++) {
        const g = gdalLevel(i);
        expect([f.levels[i].width, f.levels[i].height]).toEqual([g.width, g.height]);
        expect(f.levels[i].dx).toBeCloseTo(g.dx, 12);
        expect(f.levels[i].dy).toBeCloseTo(g.dy, 12);
        expect(f.levels[i].west).toBeCloseTo(g.west, 12);
        expect(f.levels[i].north).toBeCloseTo(g.north, 12);
      }
      // The writer records the band's range (GDAL's STATISTICS_* items): no full read needed for the encoding.
      expect(f.header.statistics).not.toBeNull();
    } finally {
      await f.close();
    }
  });

  for (const z of [13, 10, 7, 5]) {
    it(`zoom ${z}: tiles equal the same tiles rendered from the pixels GDAL reads, each a small window read`, async () => {
      const f = await GeoTiffFile.open(path);
      try {
        const { min } = await f.range();
        const enc = encodingForUnits('mW/m²', min ?? 0);
        const tiles = new WindowTiles(f, enc, { minZoom: 4, maxZoom: 13 });
        const level = tiles.levelFor(z);
        const ref = new GridTiles(gdalLevel(level), enc, { edge: 'nodata', minZoom: 4, maxZoom: 13 });
        // Tiles over the middle of the grid, over the no-data block, and over its south-east corner (partly outside).
        const spots: [number, number][] = [
          [west + 0.5 * W * dx, north - 0.5 * H * dy],
          [west + 1000 * dx, north - 460 * dy],
          [west + W * dx - 0.001, north - H * dy + 0.001],
        ];
        for (const [lon, lat] of spots) {
          const [x, y] = tileAt(lon, lat, z);
          const before = f.cellsRead;
          const ours = await tiles.tile(z, x, y);
          const theirs = ref.tile(z, x, y);
          expect(ours).not.toBeNull();
          expect(Buffer.compare(ours!, theirs!)).toBe(0);
          // At most the cells under 256 × 256 pixels of a level no finer than twice the pixel, plus the bilinear rim.
          const read = f.cellsRead - before;
          expect(read).toBeGreaterThan(0);
          expect(read).toBeLessThanOrEqual((2 * TILE_SIZE + 2) ** 2);
          expect(read).toBeLessThan((W * H) / 4);
        }
        if (z <= 7) expect(level).toBeGreaterThan(0);
        else expect(level).toBe(0);
      } finally {
        await f.close();
      }
    });
  }
});
