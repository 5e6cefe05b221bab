import { describe, it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { writeGeoTiff, readGeoTiff } from '../../server/io/geotiff.ts';
import { CAUTION } from '../../shared/caution.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { requireGdal } from '../helpers/gdal.ts';

function grid(crs: string, west: number, north: number, dx: number, dy: number): Grid<Float32Array> {
  const values = new Float32Array(7 * 5).map((_, i) => 40 + i * 0.5);
  values[3] = NaN;
  return { width: 7, height: 5, values, west, north, dx, dy, crs, units: 'mW/m²' };
}

describe('GeoTIFF codec', () => {
  it('round trip keeps values, NoData, georeferencing, caution and provenance', async () => {
    const g = grid('EPSG:4326', -128.5, -37.5, 0.025, 0.02);
    const buf = writeGeoTiff(g, { description: 'heat flow (mW/m²)', metadata: { tool: 'subtherm', inputSha256: { points: 'ab'.repeat(32) } } });
    const r = await readGeoTiff(buf);
    expect(r.grid.width).toBe(7);
    expect(r.grid.height).toBe(5);
    expect(r.grid.west).toBeCloseTo(-128.5, 12);
    expect(r.grid.north).toBeCloseTo(-37.5, 12);
    expect(r.grid.dx).toBeCloseTo(0.025, 12);
    expect(r.grid.dy).toBeCloseTo(0.02, 12);
    expect(r.grid.crs).toBe('EPSG:4326');
    expect(r.grid.units).toBe('mW/m²');
    expect(Number.isNaN(r.grid.values[3])).toBe(true);
    for (let i = 0; i < g.values.length; i++) if (i !== 3) expect(r.grid.values[i]).toBe(g.values[i]);
    expect(r.caution).toBe(CAUTION);
    expect(r.description).toBe('heat flow (mW/m²)');
    expect((r.metadata.inputSha256 as { points: string }).points).toBe('ab'.repeat(32));
  });

  it('projected CRS round trip (EPSG:32709)', async () => {
    const r = await readGeoTiff(writeGeoTiff(grid('EPSG:32709', 500000, 5800000, 2000, 2000)));
    expect(r.grid.crs).toBe('EPSG:32709');
    expect(r.grid.west).toBe(500000);
    expect(r.grid.north).toBe(5800000);
  });

  it('gdalinfo reads size, CRS, origin, pixel size and NoData (GDAL as the reference reader)', () => {
    requireGdal('gdalinfo');
    const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'interp-tif-'));
    try {
      const f = join(dir, 'g.tif');
      writeFileSync(f, Buffer.from(writeGeoTiff(grid('EPSG:4326', -128.5, -37.5, 0.025, 0.02), { description: 'test', metadata: { a: 1 } })));
      const info = JSON.parse(spawnSync('gdalinfo', ['-json', f], { encoding: 'utf8' }).stdout);
      expect(info.size).toEqual([7, 5]);
      expect(info.coordinateSystem.wkt).toContain('ID["EPSG",4326]');
      expect(info.geoTransform[0]).toBeCloseTo(-128.5, 12);
      expect(info.geoTransform[3]).toBeCloseTo(-37.5, 12);
      expect(info.geoTransform[1]).toBeCloseTo(0.025, 12);
      expect(info.geoTransform[5]).toBeCloseTo(-0.02, 12);
      expect(info.bands[0].noDataValue).toBe(-9999);
      expect(info.bands[0].type).toBe('Float32');
      expect(JSON.stringify(info.metadata)).toContain('Screening estimates only');
      // GDAL reads the file without a warning or an error.
      expect(spawnSync('gdalinfo', ['-json', f], { encoding: 'utf8' }).stderr).toBe('');
      const f2 = join(dir, 'p.tif');
      writeFileSync(f2, Buffer.from(writeGeoTiff(grid('EPSG:32709', 500000, 5800000, 2000, 2000))));
      const info2 = JSON.parse(spawnSync('gdalinfo', ['-json', f2], { encoding: 'utf8' }).stdout);
      expect(info2.coordinateSystem.wkt).toContain('ID["EPSG",32709]');
      expect(info2.geoTransform[0]).toBe(500000);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('a Float32 band whose GDAL NoData is not a Float32 number (-3.4e38) reads NoData cells as missing, as GDAL does', async () => {
    // GDAL compares NoData after converting it to the band's type (common practice: GDAL raster data model, "NoData").
    requireGdal('gdal_translate', 'gdalinfo'); // gdal_edit.py ships with them (gdal-bin)
    const dir = mkdtempSync(join(tmpdir(), 'subtherm-nodata-'));
    try {
      const asc = join(dir, 'g.asc');
      writeFileSync(asc, 'ncols 3\nnrows 2\nxllcorner 10\nyllcorner -40\ncellsize 0.5\nNODATA_value -3.4e38\n1.5 -3.4e38 2.5\n-3.4e38 4 5\n');
      const tif = join(dir, 'g.tif');
      const t = spawnSync('gdal_translate', ['-q', '-ot', 'Float32', '-a_srs', 'EPSG:4326', asc, tif], { encoding: 'utf8' });
      expect(t.status, t.stderr).toBe(0);
      // gdal_translate writes the Float32-rounded NoData; gdal_edit.py writes the double -3.4e38 as other tools do.
      const e = spawnSync('gdal_edit.py', ['-a_nodata', '-3.4e38', tif], { encoding: 'utf8' });
      expect(e.status, e.stderr).toBe(0);
      // GDAL's own reading: the two NoData cells are left out of its statistics (4 of 6 valid, minimum 1.5).
      const info = spawnSync('gdalinfo', ['-json', '-stats', tif], { encoding: 'utf8' });
      const band = JSON.parse(info.stdout).bands[0] as { noDataValue: number; minimum: number; metadata: { ''?: Record<string, string> } };
      expect(band.noDataValue).toBe(-3.4e38);
      expect(band.minimum).toBe(1.5);
      expect(Number(band.metadata['']?.STATISTICS_VALID_PERCENT)).toBeCloseTo(66.67, 2);
      const r = await readGeoTiff(readFileSync(tif));
      expect(Array.from(r.grid.values).map((v) => (Number.isNaN(v) ? null : v))).toEqual([1.5, null, 2.5, null, 4, 5]);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
