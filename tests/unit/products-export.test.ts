import { describe, expect, it, beforeAll } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inflateSync } from 'node:zlib';
import type { Grid } from '../../shared/grid/grid.ts';
import { colorizeRamp } from '../../shared/grid/colorize.ts';
import { DEPTH, EMBER } from '../../shared/grid/ramps.ts';
import { rampLegend } from '../../shared/grid/colorize.ts';
import { CAUTION } from '../../shared/caution.ts';
import { VERSION } from '../../shared/version.ts';
import { buildProvenance, canonicalJson } from '../../shared/products/provenance.ts';
import { layerStats } from '../../shared/products/stats.ts';
import { cellsInPolygonCsv, geotiffBytes, pngBytes, sha256Hex } from '../../server/io/export.ts';
import { readGeoTiff, writeGeoTiff } from '../../server/io/geotiff.ts';
import { readGridGeoTiff } from '../../server/cli/isotherms.ts';
import { runCli } from '../helpers/cli.ts';
import { InputError } from '../../shared/errors.ts';
import { requireGdal } from '../helpers/gdal.ts';

const dir = mkdtempSync(join(tmpdir(), 'products-export-'));
const provenance = buildProvenance(
  { method: 'depth to the 300 °C isotherm', model: { layers: [] }, inputs: { heatFlow: sha256Hex('x') }, parameters: { isothermsC: [300] } },
  sha256Hex,
);

function grid(width: number, height: number, spec: Partial<Grid> = {}): Grid<Float32Array> {
  const values = new Float32Array(width * height);
  for (let i = 0; i < values.length; i++) values[i] = 40 + (i % width) * 1.5 + Math.floor(i / width) * 0.25;
  return { width, height, values, west: -128.75, north: -37.25, dx: 0.02, dy: 0.015, crs: 'EPSG:4326', units: 'mW/m²', ...spec };
}

/** gdalinfo -json (GDAL, Debian's gdal-bin: the reference reader). */
function gdalinfo(path: string): {
  size: number[];
  geoTransform: number[];
  coordinateSystem: { wkt: string };
  bands: { noDataValue: number; type: string; computedMin?: number; computedMax?: number }[];
  metadata: Record<string, Record<string, string>>;
} {
  requireGdal('gdalinfo');
  return JSON.parse(execFileSync('gdalinfo', ['-json', '-mm', path], { encoding: 'utf8' }));
}

/** tEXt chunks of a PNG (ISO/IEC 15948 §11.3.4.3), and the decoded RGBA of its single IDAT (filter 0 rows). */
function readPng(buf: Uint8Array): { text: Record<string, string>; width: number; height: number; rgba: Uint8Array } {
  const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  const text: Record<string, string> = {};
  let off = 8,
    width = 0,
    height = 0;
  const idat: Uint8Array[] = [];
  while (off < buf.length) {
    const len = dv.getUint32(off);
    const type = String.fromCharCode(...buf.subarray(off + 4, off + 8));
    const data = buf.subarray(off + 8, off + 8 + len);
    if (type === 'IHDR') {
      width = dv.getUint32(off + 8);
      height = dv.getUint32(off + 12);
    }
    if (type === 'tEXt') {
      const z = data.indexOf(0);
      text[Buffer.from(data.subarray(0, z)).toString('latin1')] = Buffer.from(data.subarray(z + 1)).toString('latin1');
    }
    if (type === 'IDAT') idat.push(data);
    off += 12 + len;
  }
  const raw = inflateSync(Buffer.concat(idat));
  const rgba = new Uint8Array(width * height * 4);
  for (let y = 0; y < height; y++) rgba.set(raw.subarray(y * (width * 4 + 1) + 1, (y + 1) * (width * 4 + 1)), y * width * 4);
  return { text, width, height, rgba };
}

describe('GeoTIFF export and import', () => {
  it('round-trips values, NoData and georeferencing; gdalinfo reports the size, CRS, origin and NoData', async () => {
    const g = grid(37, 23);
    g.values[5] = NaN;
    const bytes = geotiffBytes(g, 'Surface heat flow (mW/m²)', provenance);
    const path = join(dir, 'hf.tif');
    writeFileSync(path, bytes);
    const info = gdalinfo(path);
    expect(info.size).toEqual([37, 23]);
    expect(info.coordinateSystem.wkt).toMatch(/ID\["EPSG",4326\]\]$/);
    // GDAL geotransform [west, dx, 0, north, 0, −dy] (GDAL data model, affine transform).
    expect(info.geoTransform[0]).toBeCloseTo(-128.75, 9);
    expect(info.geoTransform[3]).toBeCloseTo(-37.25, 9);
    expect(info.geoTransform[1]).toBeCloseTo(0.02, 12);
    expect(info.geoTransform[5]).toBeCloseTo(-0.015, 12);
    expect(info.bands[0].noDataValue).toBe(-9999);
    expect(info.bands[0].type).toBe('Float32');
    expect(info.bands[0].computedMin).toBeCloseTo(40, 4);
    // GDAL metadata items (GDAL GeoTIFF driver: tag 42112).
    expect(info.metadata[''].CAUTION).toBe(CAUTION);
    expect(JSON.parse(info.metadata[''].METADATA).provenance.version).toBe(VERSION);
    const back = await readGridGeoTiff(bytes, 'hf.tif');
    expect(back.grid.width).toBe(37);
    expect(back.grid.west).toBeCloseTo(-128.75, 9);
    expect(back.grid.values[5]).toBeNaN();
    for (let i = 0; i < g.values.length; i++) if (i !== 5) expect(back.grid.values[i]).toBe(g.values[i]);
  });

  it('reads a projected grid by its EPSG code (offline definition) and gdalinfo agrees on the CRS', async () => {
    const g = grid(12, 9, { west: 412000, north: 5862000, dx: 500, dy: 500, crs: 'EPSG:32709' });
    const path = join(dir, 'utm.tif');
    writeFileSync(path, geotiffBytes(g, 'test', provenance));
    expect(gdalinfo(path).coordinateSystem.wkt).toMatch(/ID\["EPSG",32709\]\]$/);
    const back = await readGridGeoTiff(readFileSync(path), path);
    expect(back.grid.crs).toBe('EPSG:32709');
    expect(back.crsDef).toContain('+proj=utm');
    expect(back.grid.north).toBeCloseTo(5862000, 6);
  });

  it('refuses a TIFF with no georeferencing, several bands without --band, and an unknown CRS', async () => {
    requireGdal('gdal_create');
    const plain = join(dir, 'plain.tif');
    execFileSync('gdal_create', ['-of', 'GTiff', '-outsize', '4', '3', '-bands', '1', '-ot', 'Float32', '-burn', '50', plain]);
    await expect(readGridGeoTiff(readFileSync(plain), plain)).rejects.toThrow(/no georeferencing/);
    const multi = join(dir, 'multi.tif');
    execFileSync('gdal_create', [
      '-of',
      'GTiff',
      '-outsize',
      '4',
      '3',
      '-bands',
      '3',
      '-ot',
      'Float32',
      '-burn',
      '50',
      '-a_srs',
      'EPSG:4326',
      '-a_ullr',
      '-128',
      '-37',
      '-127.9',
      '-37.1',
      multi,
    ]);
    await expect(readGridGeoTiff(readFileSync(multi), multi)).rejects.toThrow(/3 bands: choose one with --band/);
    const b2 = await readGridGeoTiff(readFileSync(multi), multi, 2);
    expect(b2.grid.values[0]).toBe(50);
    await expect(readGridGeoTiff(readFileSync(multi), multi, 4)).rejects.toThrow(/out of range/);
    // A code with no offline definition, and a user-defined (non-EPSG) CRS.
    const unknown = new Uint8Array(writeGeoTiff(grid(3, 3, { west: 1000, north: 2000, dx: 10, dy: 10, crs: 'EPSG:9999' })));
    await expect(readGridGeoTiff(unknown, 'u.tif')).rejects.toThrow(/unknown CRS EPSG:9999/);
    const custom = join(dir, 'custom.tif');
    execFileSync('gdal_create', [
      '-of',
      'GTiff',
      '-outsize',
      '4',
      '3',
      '-bands',
      '1',
      '-ot',
      'Float32',
      '-a_srs',
      '+proj=tmerc +lat_0=-38 +lon_0=-128 +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs',
      '-a_ullr',
      '0',
      '3000',
      '4000',
      '0',
      custom,
    ]);
    await expect(readGridGeoTiff(readFileSync(custom), custom)).rejects.toThrow(InputError);
  });
});

describe('PNG, CSV and provenance', () => {
  it('colours through the ramp, leaves NoData transparent and carries legend, caution and provenance', () => {
    const g = grid(8, 5);
    g.values[3] = NaN;
    const legend = rampLegend(EMBER, 'mW/m²', 40, 51.5);
    const png = readPng(pngBytes(g, legend, EMBER, provenance, 'Surface heat flow'));
    expect(png.width).toBe(8);
    expect(png.rgba[3 * 4 + 3]).toBe(0);
    // Cell 0 holds the minimum: the ramp's first colour #1f1846 (shared/grid/ramps.ts).
    expect([...png.rgba.subarray(0, 4)]).toEqual([0x1f, 0x18, 0x46, 255]);
    expect(png.text.Caution).toBe(CAUTION);
    expect(png.text.Legend).toContain('mW/m');
    expect(png.text.Legend).toContain('#f4ecc2');
    expect(JSON.parse(png.text.LegendJSON)).toEqual(legend);
    expect(JSON.parse(png.text.Provenance).contentHash).toBe(provenance.contentHash);
    const px = colorizeRamp(Float32Array.from([0, 10, NaN]), DEPTH, 0, 10);
    expect([...px.subarray(4, 8)]).toEqual([0x15, 0x0f, 0x24, 255]);
    expect(px[11]).toBe(0);
  });

  it('lists the cells inside a polygon with a leading caution comment', () => {
    const g = grid(10, 10, { west: 0, north: 10, dx: 1, dy: 1 });
    const d = grid(10, 10, { west: 0, north: 10, dx: 1, dy: 1, units: 'km' });
    d.values[3 * 10 + 3] = NaN;
    const csv = cellsInPolygonCsv(
      [
        { header: 'heat-flow (mW/m²)', grid: g },
        { header: 'depth-300C (km)', grid: d },
      ],
      {
        type: 'Polygon',
        coordinates: [
          [
            [2, 2],
            [5, 2],
            [5, 8],
            [2, 8],
            [2, 2],
          ],
        ],
      },
      provenance,
    );
    const lines = csv.trim().split('\n');
    expect(lines[0]).toBe(`# caution: ${CAUTION}`);
    expect(lines[1].startsWith('# provenance: {')).toBe(true);
    expect(lines[2]).toBe('longitude,latitude,row,col,heat-flow (mW/m²),depth-300C (km)');
    // Centres x = c + 0.5 in [2, 5): columns 2..4; y = 9.5 − r in [2, 8): rows 2..7 → 18 cells.
    expect(lines.length - 3).toBe(18);
    const hole = lines.find((l) => l.split(',')[2] === '3' && l.split(',')[3] === '3')!;
    expect(hole.endsWith(',')).toBe(true); // NoData is an empty field
  });

  it('hashes canonical JSON independently of key order', () => {
    expect(canonicalJson({ b: 1, a: [1, { d: 2, c: undefined }] })).toBe('{"a":[1,{"d":2}],"b":1}');
    const p1 = buildProvenance({ method: 'm', model: null, inputs: { a: '1', b: '2' }, parameters: { x: 1, y: 2 } }, sha256Hex);
    const p2 = buildProvenance({ method: 'm', model: null, inputs: { b: '2', a: '1' }, parameters: { y: 2, x: 1 } }, sha256Hex);
    expect(p1.contentHash).toBe(p2.contentHash);
    // SHA-256 of "abc" (FIPS 180-4, appendix B.1 example).
    expect(sha256Hex('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });

  it('computes the type-7 median by selection', () => {
    // Hyndman & Fan type 7 median of 1..4 is 2.5; NaN is no data.
    expect(layerStats([4, NaN, 1, 3, 2])).toEqual({ min: 1, max: 4, median: 2.5, noData: 1 });
    expect(layerStats([5, 1, 9])).toEqual({ min: 1, max: 9, median: 5, noData: 0 });
  });
});

describe('the isotherms verb', () => {
  let hfPath = '';
  beforeAll(() => {
    // A 30 × 20 heat-flow grid over the demo region: 45–100 mW/m², and one cell too cold for the model (20 mW/m²).
    const g = grid(30, 20);
    for (let i = 0; i < g.values.length; i++) g.values[i] = 45 + (i % 30) * 1.9;
    g.values[31] = 20;
    hfPath = join(dir, 'in.tif');
    writeFileSync(hfPath, new Uint8Array(writeGeoTiff(g)));
  });
  const run = (args: string[]) => runCli(['isotherms', ...args]);

  const model = new URL('../../fixtures/demo/model.json', import.meta.url).pathname;

  it('writes the named files and flags the inconsistent cell with a warning, succeeding (exit 0: a finding, not bad input)', async () => {
    const outDir = join(dir, 'out');
    const r = await run([
      '--heat-flow',
      hfPath,
      '--model',
      model,
      '--isotherms',
      '300,500',
      '--depths-km',
      '3,5',
      '--facies-depth-km',
      '5',
      '--realizations',
      '20',
      '--seed',
      '4',
      '--out-dir',
      outDir,
      '--json',
    ]);
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out);
    expect(s.inconsistent.heatFlowExhausted).toBe(1);
    expect(s.inconsistent.inconsistent).toBe(1); // melt onset is not counted among the contradictions
    expect(r.err).toContain('inconsistent');
    for (const f of [
      'depth-300C.tif',
      'depth-300C.contours.geojson',
      'temperature-5km.tif',
      'temperature-5km.contours.geojson',
      'facies-5km.tif',
      'base-heat-flow.tif',
      'solidus-depth.tif',
      'melt-onset.tif',
      'inconsistent.tif',
      'depth-300C.p10.tif',
      'depth-300C.p50.tif',
      'depth-300C.p90.tif',
      'depth-300C.reached.tif',
      'summary.json',
    ]) {
      expect(existsSync(join(outDir, f))).toBe(true);
    }
    const flag = await readGeoTiff(readFileSync(join(outDir, 'inconsistent.tif')).buffer);
    expect(flag.grid.values[31]).toBe(1);
    expect(flag.caution).toBe(CAUTION);
    const d = s.products['depth-300C'];
    expect(d.min).toBeGreaterThan(3);
    expect(d.max).toBeLessThan(30);
    expect(s.products['depth-300C.p10'].median).toBeLessThanOrEqual(s.products['depth-300C.p90'].median);
  });

  it('exits 2 with a clear message for a file without georeferencing', async () => {
    const plain = join(dir, 'plain2.tif');
    execFileSync('gdal_create', ['-of', 'GTiff', '-outsize', '4', '3', '-bands', '1', '-ot', 'Float32', plain]);
    const r = await run(['--heat-flow', plain, '--model', model, '--isotherms', '300', '--out-dir', join(dir, 'bad'), '--json']);
    expect(r.code).toBe(2);
    expect(JSON.parse(r.out).error.message).toMatch(/no georeferencing/);
  });
});
