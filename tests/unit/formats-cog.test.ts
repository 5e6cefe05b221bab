import { describe, it, expect, beforeAll, afterAll, vi } from 'vitest';
import { spawnSync } from 'node:child_process';
import { open } from 'node:fs/promises';
import { mkdtempSync, readFileSync, writeFileSync, rmSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { writeGeoTiff, writeGeoTiffFile, readGeoTiff, GeoTiffFile, NODATA } from '../../server/io/geotiff.ts';
import { CAUTION } from '../../shared/caution.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { prng } from '../helpers/prng.ts';
import { requireGdal } from '../helpers/gdal.ts';

const TOOLS = ['gdal_translate', 'gdalinfo'] as const;
let dir = '';
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-cog-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A 1100 × 700 field (three tile columns, two tile rows), with NoData cells and +∞. */
function field(crs = 'EPSG:4326', west = -128.5, north = -37.5, d = 0.01): Grid<Float32Array> {
  const width = 1100,
    height = 700;
  const rnd = prng(19);
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = 60 + 25 * Math.sin(r / 90) * Math.cos(c / 70) + rnd();
  for (let i = 0; i < values.length; i += 37) values[i] = NaN;
  values[5] = Infinity;
  return { width, height, values, west, north, dx: d, dy: d, crs, units: 'mW/m²' };
}

function run(cmd: string, args: string[]): { stdout: string; stderr: string } {
  const r = spawnSync(cmd, args, { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')}: ${r.stderr}`);
  return { stdout: r.stdout, stderr: r.stderr };
}

/** The pixels as GDAL decodes them: gdal_translate to raw little-endian Float32 (ENVI), optionally an overview. */
function gdalPixels(path: string, ovr?: number): Float32Array {
  const out = join(dir, `raw-${Math.random().toString(36).slice(2)}.img`);
  run('gdal_translate', ['-q', '-of', 'ENVI', '-ot', 'Float32', ...(ovr === undefined ? [] : ['-ovr', String(ovr)]), path, out]);
  const b = readFileSync(out);
  return new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
}

/** The IFDs and tile offsets of a classic little-endian TIFF (TIFF 6.0 §2), read here independently of the writer. */
function tiffStructure(buf: Uint8Array): { ifdAt: number[]; offsets: number[][]; counts: number[][] } {
  const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  expect(dv.getUint16(0, true)).toBe(0x4949);
  expect(dv.getUint16(2, true)).toBe(42);
  const ifdAt: number[] = [],
    offsets: number[][] = [],
    counts: number[][] = [];
  for (let at = dv.getUint32(4, true); at !== 0;) {
    ifdAt.push(at);
    const n = dv.getUint16(at, true);
    const arr = (e: number) => {
      const count = dv.getUint32(e + 4, true),
        type = dv.getUint16(e + 2, true);
      const size = type === 3 ? 2 : 4;
      const base = count * size > 4 ? dv.getUint32(e + 8, true) : e + 8;
      return Array.from({ length: count }, (_, i) => (size === 2 ? dv.getUint16(base + 2 * i, true) : dv.getUint32(base + 4 * i, true)));
    };
    for (let k = 0; k < n; k++) {
      const e = at + 2 + 12 * k,
        tag = dv.getUint16(e, true);
      if (tag === 324) offsets.push(arr(e));
      if (tag === 325) counts.push(arr(e));
    }
    at = dv.getUint32(at + 2 + 12 * n, true);
  }
  return { ifdAt, offsets, counts };
}

describe('Cloud-Optimized GeoTIFF writer', () => {
  it('lays out the file as a COG: ghost block, every IFD before any tile, smallest overview first, leaders and trailers', () => {
    const buf = writeGeoTiff(field());
    // GDAL's structural metadata block starts right after the 8-byte header (GDAL COG driver documentation).
    const ghost = new TextDecoder().decode(buf.subarray(8, 8 + 43 + 140));
    expect(ghost).toBe(
      'GDAL_STRUCTURAL_METADATA_SIZE=000140 bytes\nLAYOUT=IFDS_BEFORE_DATA\nBLOCK_ORDER=ROW_MAJOR\nBLOCK_LEADER=SIZE_AS_UINT4\nBLOCK_TRAILER=LAST_4_BYTES_REPEATED\nKNOWN_INCOMPATIBLE_EDITION=NO\n ',
    );
    const s = tiffStructure(buf);
    // 1100 × 700, then halvings while a side exceeds 512: 550 × 350 and 275 × 175 (as gdal_translate -of COG).
    expect(s.ifdAt.length).toBe(3);
    expect(s.offsets.map((o) => o.length)).toEqual([3 * 2, 2 * 1, 1]);
    const firstTile = Math.min(...s.offsets.flat());
    for (const at of s.ifdAt) expect(at).toBeLessThan(firstTile);
    // Smallest overview first: every overview tile lies before every full-resolution tile, each level row-major.
    expect(Math.max(...s.offsets[2])).toBeLessThan(Math.min(...s.offsets[1]));
    expect(Math.max(...s.offsets[1])).toBeLessThan(Math.min(...s.offsets[0]));
    for (const o of s.offsets) for (let i = 1; i < o.length; i++) expect(o[i]).toBeGreaterThan(o[i - 1]);
    const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
    s.offsets.forEach((o, l) =>
      o.forEach((off, t) => {
        const n = s.counts[l][t];
        expect(dv.getUint32(off - 4, true)).toBe(n);
        expect(Array.from(buf.subarray(off + n, off + n + 4))).toEqual(Array.from(buf.subarray(off + n - 4, off + n)));
      }),
    );
  });

  it('gdalinfo: LAYOUT=COG, DEFLATE, predictor 3, 512 tiles, overviews, NoData, CRS, caution, no warnings', () => {
    requireGdal(...TOOLS);
    const f = join(dir, 'geo.tif');
    writeFileSync(f, writeGeoTiff(field(), { description: 'heat flow (mW/m²)', metadata: { provenance: { version: 'x' } } }));
    const { stdout, stderr } = run('gdalinfo', ['-json', f]);
    expect(stderr).toBe('');
    const info = JSON.parse(stdout);
    expect(info.size).toEqual([1100, 700]);
    expect(info.metadata.IMAGE_STRUCTURE).toEqual({ COMPRESSION: 'DEFLATE', INTERLEAVE: 'BAND', LAYOUT: 'COG', PREDICTOR: '3' });
    expect(info.coordinateSystem.wkt).toContain('ID["EPSG",4326]');
    expect(info.geoTransform).toEqual([-128.5, 0.01, 0, -37.5, 0, -0.01]);
    const b = info.bands[0];
    expect(b.block).toEqual([512, 512]);
    expect(b.type).toBe('Float32');
    expect(b.noDataValue).toBe(NODATA);
    expect(b.overviews.map((o: { size: number[] }) => o.size)).toEqual([
      [550, 350],
      [275, 175],
    ]);
    expect(b.description).toBe('heat flow (mW/m²)');
    expect(b.unit).toBe('mW/m²');
    expect(info.metadata[''].CAUTION).toBe(CAUTION);
    expect(JSON.parse(info.metadata[''].METADATA).provenance.version).toBe('x');
    // GDAL's own COG validation also rejects a COG with warnings on open: none on a full read either.
    expect(run('gdalinfo', ['-checksum', f]).stderr).toBe('');
  });

  it('GDAL decodes the same values (NoData for NaN and ±∞) and the overview as the 2 × 2 mean of data cells', () => {
    requireGdal(...TOOLS);
    const g = field();
    const f = join(dir, 'vals.tif');
    writeFileSync(f, writeGeoTiff(g));
    const px = gdalPixels(f);
    for (let i = 0; i < g.values.length; i++) {
      const v = g.values[i];
      if (Number.isFinite(v)) {
        if (px[i] !== v) throw new Error(`cell ${i}: ${px[i]} ≠ ${v}`);
      } else expect(px[i]).toBe(NODATA);
    }
    const ov = gdalPixels(f, 0);
    expect(ov.length).toBe(550 * 350);
    for (const [r, c] of [
      [0, 0],
      [10, 17],
      [349, 549],
      [200, 300],
    ]) {
      const cells = [
        [2 * r, 2 * c],
        [2 * r, 2 * c + 1],
        [2 * r + 1, 2 * c],
        [2 * r + 1, 2 * c + 1],
      ]
        .map(([y, x]) => g.values[y * 1100 + x])
        .filter(Number.isFinite);
      expect(ov[r * 550 + c]).toBeCloseTo(cells.reduce((a, b) => a + b, 0) / cells.length, 4);
    }
  });

  it('projected CRS (EPSG:32709): GeoKeys and origin as GDAL reads them', () => {
    requireGdal(...TOOLS);
    const f = join(dir, 'utm.tif');
    writeFileSync(f, writeGeoTiff(field('EPSG:32709', 500000, 5800000, 2000)));
    const { stdout, stderr } = run('gdalinfo', ['-json', f]);
    expect(stderr).toBe('');
    const info = JSON.parse(stdout);
    expect(info.coordinateSystem.wkt).toContain('ID["EPSG",32709]');
    expect(info.geoTransform).toEqual([500000, 2000, 0, 5800000, 0, -2000]);
  });

  it('class grids: nearest-neighbour overviews hold only the classes', () => {
    requireGdal(...TOOLS);
    const g = field();
    for (let i = 0; i < g.values.length; i++) g.values[i] = Number.isFinite(g.values[i]) ? Math.round(g.values[i] / 20) : NaN;
    const classes = new Set(Array.from(g.values).filter(Number.isFinite));
    const f = join(dir, 'classes.tif');
    writeFileSync(f, writeGeoTiff({ ...g, units: 'class' }, { classes: true }));
    for (const v of gdalPixels(f, 0)) if (v !== NODATA) expect(classes.has(v)).toBe(true);
  });

  it('the file writer (tiles deflated on the zlib thread pool) produces the same bytes as the in-thread encoder; a failed write leaves nothing', async () => {
    const g = field();
    const f = join(dir, 'threads.tif');
    await writeGeoTiffFile(f, g, { description: 'd', threads: 2 });
    expect(Buffer.compare(readFileSync(f), Buffer.from(writeGeoTiff(g, { description: 'd' })))).toBe(0);
    const missing = join(dir, 'no-such-folder', 'x.tif');
    await expect(writeGeoTiffFile(missing, g)).rejects.toThrow();
    expect(existsSync(missing)).toBe(false);
    expect(readdirSync(dir).some((n) => n.endsWith('.partial'))).toBe(false);
  });

  it('a write that fails after some tiles are on disk (disk full) rejects, and leaves neither the file nor its .partial', async () => {
    const g = field();
    const f = join(dir, 'full-disk.tif');
    // Every FileHandle shares one prototype: fail its third write as a full disk would (ENOSPC), after two tiles.
    const probe = await open(join(dir, 'probe'), 'w');
    const proto = Object.getPrototypeOf(probe) as { write: (...a: unknown[]) => Promise<unknown> };
    await probe.close();
    rmSync(join(dir, 'probe'));
    const original = proto.write;
    let calls = 0;
    const spy = vi.spyOn(proto, 'write').mockImplementation(function (this: unknown, ...a: unknown[]) {
      calls++;
      if (calls === 3) return Promise.reject(Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' }));
      return original.apply(this, a);
    });
    try {
      await expect(writeGeoTiffFile(f, g, { description: 'd', threads: 2 })).rejects.toThrow(/ENOSPC/);
      expect(calls).toBeGreaterThanOrEqual(3);
    } finally {
      spy.mockRestore();
    }
    // Let the deflates still in flight come back and try their writes on the closed handle.
    await new Promise((r) => setTimeout(r, 200));
    expect(existsSync(f)).toBe(false);
    expect(readdirSync(dir).filter((n) => n.startsWith('full-disk'))).toEqual([]);
    // The writer still works afterwards.
    await writeGeoTiffFile(f, g, { description: 'd', threads: 2 });
    expect(Buffer.compare(readFileSync(f), Buffer.from(writeGeoTiff(g, { description: 'd' })))).toBe(0);
  });

  it('reads its own COG back (whole and by window) with metadata', async () => {
    const g = field();
    const buf = writeGeoTiff(g, { description: 'heat flow', metadata: { a: 1 } });
    const r = await readGeoTiff(buf);
    expect(r.grid.crs).toBe('EPSG:4326');
    expect(r.grid.units).toBe('mW/m²');
    expect(r.caution).toBe(CAUTION);
    expect(r.description).toBe('heat flow');
    expect(r.metadata).toEqual({ a: 1 });
    for (let i = 0; i < g.values.length; i++) {
      const v = g.values[i];
      if (Number.isFinite(v)) {
        if (r.grid.values[i] !== v) throw new Error(`cell ${i}`);
      } else expect(r.grid.values[i]).toBeNaN();
    }
    const f = join(dir, 'win.tif');
    writeFileSync(f, buf);
    const file = await GeoTiffFile.open(f);
    const w = await file.window(500, 600, 530, 620);
    expect(w.length).toBe(30 * 20);
    expect(w[3 * 30 + 7]).toBe(g.values[603 * 1100 + 507]);
  });
});

describe('GeoTIFF reader: variants GDAL writes', () => {
  const variants: [string, string[]][] = [
    ['striped, uncompressed', ['-co', 'TILED=NO']],
    ['striped, LZW, horizontal predictor, Int16', ['-ot', 'Int16', '-co', 'COMPRESS=LZW', '-co', 'PREDICTOR=2']],
    ['striped, DEFLATE, floating-point predictor', ['-co', 'COMPRESS=DEFLATE', '-co', 'PREDICTOR=3']],
    [
      'tiled 256, LZW, floating-point predictor',
      ['-co', 'TILED=YES', '-co', 'BLOCKXSIZE=256', '-co', 'BLOCKYSIZE=256', '-co', 'COMPRESS=LZW', '-co', 'PREDICTOR=3'],
    ],
    ['tiled 128, PackBits, Float64', ['-ot', 'Float64', '-co', 'TILED=YES', '-co', 'BLOCKXSIZE=128', '-co', 'BLOCKYSIZE=128', '-co', 'COMPRESS=PACKBITS']],
  ];
  for (const [name, args] of variants) {
    it(`${name}: the same values and georeferencing as GDAL reads`, async () => {
      requireGdal(...TOOLS);
      const src = join(dir, 'src.tif');
      writeFileSync(src, writeGeoTiff(field('EPSG:32709', 500000, 5800000, 2000)));
      const f = join(dir, `variant-${name.replace(/\W+/g, '-')}.tif`);
      run('gdal_translate', ['-q', '-of', 'GTiff', ...args, src, f]);
      const ref = gdalPixels(f);
      const r = await readGeoTiff(readFileSync(f), { source: f });
      expect(r.grid.width).toBe(1100);
      expect(r.grid.crs).toBe('EPSG:32709');
      expect([r.grid.west, r.grid.north, r.grid.dx, r.grid.dy]).toEqual([500000, 5800000, 2000, 2000]);
      for (let i = 0; i < ref.length; i++) {
        const want = ref[i] === NODATA ? NaN : ref[i];
        const got = r.grid.values[i];
        if (!(got === want || (Number.isNaN(got) && Number.isNaN(want)))) throw new Error(`cell ${i}: ${got} ≠ ${want}`);
      }
    });
  }

  it('refuses a file that is not a TIFF, naming it', async () => {
    await expect(readGeoTiff(new TextEncoder().encode('not a tiff'), { source: 'upload.tif' })).rejects.toThrow(/upload\.tif is not a readable GeoTIFF/);
  });
});
