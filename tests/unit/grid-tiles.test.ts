import { describe, expect, it } from 'vitest';
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { encodePng } from '../../server/io/png.ts';
import { encodeTerrainRgb, decodeTerrainRgb } from '../../shared/grid/terrain-rgb.ts';
import { latFromTileY, lngFromTileX, tileXFromLng, tileYFromLat } from '../../shared/grid/webmercator.ts';
import { cellIndexFromXY, xFromCol, yFromRow, colFromX, rowFromY, sampleBilinear, gridBbox, type Grid } from '../../shared/grid/grid.ts';
import { loadDem, TerrainTiles } from '../../server/terrain.ts';
import { DEMO_TERRAIN } from '../../server/demo.ts';
import { requireGdal } from '../helpers/gdal.ts';

const tmp = () => mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-'));

describe('web mercator tiles', () => {
  it('match the standard tiling: z0 spans ±180°, ±85.0511287798° (EPSG:3857 limit, common practice)', () => {
    expect(lngFromTileX(0, 0)).toBe(-180);
    expect(lngFromTileX(1, 0)).toBe(180);
    expect(latFromTileY(0, 0)).toBeCloseTo(85.0511287798, 9);
    expect(latFromTileY(1, 1)).toBeCloseTo(0, 12);
    expect(tileXFromLng(lngFromTileX(123.4, 9), 9)).toBeCloseTo(123.4, 9);
    expect(tileYFromLat(latFromTileY(313.7, 9), 9)).toBeCloseTo(313.7, 9);
  });
});

describe('terrain RGB encoding', () => {
  it('round-trips to 0.05 m with MapLibre\'s "mapbox" decode (R·6553.6 + G·25.6 + B·0.1 − 10000)', () => {
    const px = new Uint8Array(3);
    for (const h of [-9999.9, -1196.7, 0, 0.05, 313.17, 1998.4, 8848.86]) {
      encodeTerrainRgb(h, px, 0);
      // The decode formula as MapLibre's raster-dem "mapbox" encoding defines it.
      const maplibre = px[0] * 6553.6 + px[1] * 25.6 + px[2] * 0.1 - 10000;
      expect(Math.abs(maplibre - h)).toBeLessThanOrEqual(0.05 + 1e-9);
      expect(decodeTerrainRgb(px[0], px[1], px[2])).toBeCloseTo(maplibre, 9);
    }
  });
});

describe('PNG encoder', () => {
  it('writes files GDAL reads back pixel for pixel (GDAL as the reference decoder)', () => {
    const w = 7,
      h = 5;
    const rgb = new Uint8Array(w * h * 3);
    for (let i = 0; i < rgb.length; i++) rgb[i] = (i * 37) % 256;
    const dir = tmp();
    const file = join(dir, 't.png');
    writeFileSync(file, encodePng(rgb, w, h, 3, { Comment: 'test' }));
    for (const [x, y] of [
      [0, 0],
      [6, 4],
      [3, 2],
    ]) {
      requireGdal('gdallocationinfo');
      const r = spawnSync('gdallocationinfo', ['-valonly', file, String(x), String(y)], { encoding: 'utf8' });
      const bands = r.stdout.trim().split(/\s+/).map(Number);
      const o = (y * w + x) * 3;
      expect(bands).toEqual([rgb[o], rgb[o + 1], rgb[o + 2]]);
    }
  });
});

describe('grid converters', () => {
  const g: Grid = {
    width: 4,
    height: 3,
    values: new Float32Array([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]),
    west: 10,
    north: 50,
    dx: 0.5,
    dy: 0.25,
    crs: 'EPSG:4326',
    units: 'x',
  };
  it('map index ↔ world coordinates by cell centres, rows southwards', () => {
    expect(xFromCol(g, 0)).toBe(10.25);
    expect(yFromRow(g, 0)).toBe(49.875);
    expect(colFromX(g, xFromCol(g, 3))).toBeCloseTo(3, 12);
    expect(rowFromY(g, yFromRow(g, 2))).toBeCloseTo(2, 12);
    expect(cellIndexFromXY(g, 10.01, 49.99)).toBe(0);
    expect(cellIndexFromXY(g, 11.99, 49.26)).toBe(11);
    expect(cellIndexFromXY(g, 9.99, 49.5)).toBe(-1);
    expect(gridBbox(g)).toEqual([10, 49.25, 12, 50]);
  });
  it('samples bilinearly between centres', () => {
    expect(sampleBilinear(g, xFromCol(g, 1), yFromRow(g, 1))).toBe(5);
    expect(sampleBilinear(g, (xFromCol(g, 1) + xFromCol(g, 2)) / 2, (yFromRow(g, 0) + yFromRow(g, 1)) / 2)).toBeCloseTo(3.5, 6);
  });
  it('beside an empty cell, reads the filled cells with their bilinear weights renormalised (normalised convolution)', () => {
    // docs/sources.md#normalised-convolution (Knutsson & Westin 1993).
    // 2 × 2 cells of 1 × 1 with centres (0.5, 1.5) = 10, (1.5, 1.5) = 20, (0.5, 0.5) = empty, (1.5, 0.5) = 40.
    const h: Grid<Float32Array> = {
      width: 2,
      height: 2,
      west: 0,
      north: 2,
      dx: 1,
      dy: 1,
      crs: 'EPSG:4326',
      units: 'mW/m²',
      values: Float32Array.from([10, 20, NaN, 40]),
    };
    // At (1.25, 1.25), in the cell of 20: weights 0.1875 (10), 0.5625 (20), 0.0625 (empty), 0.1875 (40), worked by
    // hand: (0.1875·10 + 0.5625·20 + 0.1875·40) / 0.9375 = 22.
    expect(sampleBilinear(h, 1.25, 1.25)).toBeNaN();
    expect(sampleBilinear(h, 1.25, 1.25, true)).toBeCloseTo(22, 12);
    // Where all four hold values the two readings agree; in the empty cell and outside the grid there is none.
    expect(sampleBilinear(h, 1.5, 1.5, true)).toBe(20);
    expect(sampleBilinear(h, 0.75, 0.75, true)).toBeNaN();
    expect(sampleBilinear(h, 2.5, 1.5, true)).toBeNaN();
  });
  it("beside an empty cell, reads as GDAL's bilinear warp does with a NoData value (gdalwarp -r bilinear, GDAL 3.6)", () => {
    // docs/sources.md#normalised-convolution: the same 2 × 2 grid as an ASCII grid with NODATA_value −9999, warped by
    // GDAL to one pixel of 0.001 centred on each point (so the kernel is GDAL's plain bilinear one), read back.
    requireGdal('gdalwarp', 'gdallocationinfo');
    const h: Grid<Float32Array> = { width: 2, height: 2, west: 0, north: 2, dx: 1, dy: 1, crs: '', units: '', values: Float32Array.from([10, 20, NaN, 40]) };
    const dir = tmp();
    try {
      const src = join(dir, 'g.asc');
      writeFileSync(src, 'ncols 2\nnrows 2\nxllcorner 0\nyllcorner 0\ncellsize 1\nNODATA_value -9999\n10 20\n-9999 40\n');
      const points = [
        [1.25, 1.25],
        [0.75, 0.75],
        [1.5, 1.5],
        [1.1, 1.9],
        [0.6, 1.4],
        [1.9, 0.6],
        [0.3, 1.7],
        [1.4, 0.8],
        [0.95, 1.05],
        [1.05, 0.95],
        [1.2, 0.3],
        [0.9, 0.2],
      ];
      let noData = 0;
      for (const [x, y] of points) {
        const out = join(dir, 'p.tif');
        const e = 0.0005;
        const te = [x - e, y - e, x + e, y + e].map(String);
        execFileSync('gdalwarp', ['-q', '-overwrite', '-r', 'bilinear', '-te', ...te, '-ts', '1', '1', '-dstnodata', '-9999', '-ot', 'Float64', src, out]);
        const gdal = Number(execFileSync('gdallocationinfo', ['-valonly', out, '0', '0'], { encoding: 'utf8' }).trim());
        const ours = sampleBilinear(h, x, y, true);
        if (gdal === -9999) {
          noData++;
          expect(ours, `(${x}, ${y})`).toBeNaN();
        } else expect(Math.abs(ours - gdal), `(${x}, ${y}): ours ${ours}, GDAL ${gdal}`).toBeLessThan(1e-9);
      }
      // GDAL gives NoData at the two points in the empty cell, (0.75, 0.75) and (0.9, 0.2), and only there.
      expect(noData).toBe(2);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('terrain tiles', () => {
  it('encode the DEM: a tile pixel decodes to the DEM value at that place within the bilinear error', async () => {
    const dem = await loadDem(DEMO_TERRAIN);
    const tiles = new TerrainTiles(dem);
    // Zoom 12: pixels (~30 m) much smaller than DEM cells (~500 m), so the pixel value is the DEM's bilinear value.
    const z = 12;
    const lng = -127.9,
      lat = -37.95;
    const tx = tileXFromLng(lng, z),
      ty = tileYFromLat(lat, z);
    const png = tiles.tile(z, Math.floor(tx), Math.floor(ty));
    expect(png).not.toBeNull();
    const dir = tmp();
    const file = join(dir, 'tile.png');
    writeFileSync(file, png!);
    const px = Math.floor((tx % 1) * 256),
      py = Math.floor((ty % 1) * 256);
    requireGdal('gdallocationinfo');
    const r = spawnSync('gdallocationinfo', ['-valonly', file, String(px), String(py)], { encoding: 'utf8' });
    const [R, G, B] = r.stdout.trim().split(/\s+/).map(Number);
    const pxLng = lngFromTileX(Math.floor(tx) + (px + 0.5) / 256, z),
      pxLat = latFromTileY(Math.floor(ty) + (py + 0.5) / 256, z);
    expect(decodeTerrainRgb(R, G, B)).toBeCloseTo(sampleBilinear(dem, pxLng, pxLat), 0);
    expect(tiles.tile(3, 0, 0)).toBeNull(); // below the zoom range
    expect(tiles.tile(12, 0, 0)).toBeNull(); // far outside the DEM
  });
});

import { encodingForUnits, encodeRgb, decodeRgb, maplibreEncoding, TERRAIN_RGB } from '../../shared/grid/terrain-rgb.ts';
import { GridTiles } from '../../server/terrain.ts';

describe('scalar-layer tile encodings', () => {
  it('keep the precision each quantity needs and reserve code 0 for no data (DESIGN.md §7 precision hints)', () => {
    const px = new Uint8Array(3);
    for (const [units, step, values] of [
      ['km', 0.001, [0.5, 6.767, 59.999]],
      ['mW/m²', 0.01, [35.12, 130.07]],
      ['°C', 0.01, [12, 1200.5]],
    ] as const) {
      const enc = encodingForUnits(units, values[0]);
      expect(enc.step).toBe(step);
      for (const v of values) {
        encodeRgb(enc, v, px, 0);
        expect(Math.abs(decodeRgb(enc, px[0], px[1], px[2]) - v)).toBeLessThanOrEqual(step / 2 + 1e-9);
        // MapLibre's custom decoding (its DEMData unpack): R·redFactor + G·greenFactor + B·blueFactor − baseShift.
        const m = maplibreEncoding(enc);
        expect(px[0] * m.redFactor + px[1] * m.greenFactor + px[2] * m.blueFactor - m.baseShift).toBeCloseTo(decodeRgb(enc, px[0], px[1], px[2]), 6);
      }
      encodeRgb(enc, NaN, px, 0);
      expect([...px]).toEqual([0, 0, 0]);
      expect(decodeRgb(enc, 0, 0, 0)).toBeNaN();
    }
  });

  it('write the terrain encoding as MapLibre\'s own "mapbox" preset (6553.6, 25.6, 0.1, baseShift 10000; maplibre-gl DEMData)', () => {
    const m = maplibreEncoding(TERRAIN_RGB);
    expect(m.redFactor).toBeCloseTo(6553.6, 9);
    expect(m.greenFactor).toBeCloseTo(25.6, 9);
    expect(m.blueFactor).toBeCloseTo(0.1, 12);
    expect(m.baseShift).toBe(10000);
  });

  it('render no data as code 0 and never blend it into neighbours', () => {
    // A 4 × 4 lon/lat grid with one no-data cell; a tile at zoom 13 inside it.
    const values = new Float32Array(16).fill(10);
    values[5] = NaN;
    const g = { width: 4, height: 4, values, west: -128.04, north: -37.96, dx: 0.02, dy: 0.02, crs: 'EPSG:4326', units: 'km' };
    const tiles = new GridTiles(g, encodingForUnits('km', 10), { edge: 'nodata', minZoom: 4, maxZoom: 13 });
    const dir = tmp();
    const z = 10;
    const tx = Math.floor(tileXFromLng(-128.0, z)),
      ty = Math.floor(tileYFromLat(-38.0, z));
    const png = tiles.tile(z, tx, ty)!;
    const file = join(dir, 'g.png');
    writeFileSync(file, png);
    // Decode every pixel with GDAL: values are exactly 10 or no data, nothing in between.
    requireGdal('gdal_translate');
    const r = spawnSync('gdal_translate', ['-q', '-of', 'AAIGrid', '-b', '3', file, join(dir, 'b.asc')], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    const blue = readFileSync(join(dir, 'b.asc'), 'utf8').split('\n').slice(6).join(' ').trim().split(/\s+/).map(Number);
    const enc = encodingForUnits('km', 10);
    const codes = new Set(blue);
    const ten = Math.round((10 - enc.baseShift) / enc.step) & 0xff;
    for (const c of codes) expect([0, ten]).toContain(c);
    expect(codes.has(0)).toBe(true);
    expect(codes.has(ten)).toBe(true);
  });
});
