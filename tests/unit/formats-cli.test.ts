// Command-line verbs reading points from GeoPackage, zipped Shapefile and projected CSV (files written by GDAL's
// ogr2ogr at test time): the same results as from the GeoJSON they came from.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { readGeoTiff } from '../../server/io/geotiff.ts';
import { runCli } from '../helpers/cli.ts';
import { requireGdal } from '../helpers/gdal.ts';

let dir = '';
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-cli-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const fixture = (name: string) => new URL(`../../fixtures/demo/${name}`, import.meta.url).pathname;

function ogr(args: string[]): void {
  const r = spawnSync('ogr2ogr', args, { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(r.stderr);
}

describe('verbs read GeoPackage, zipped Shapefile and projected CSV points', () => {
  it('interpolate: a GeoPackage in EPSG:32709 and a projected CSV give the grid the GeoJSON gives', async () => {
    requireGdal('ogr2ogr');
    const gpkg = join(dir, 'sites.gpkg');
    ogr(['-f', 'GPKG', '-t_srs', 'EPSG:32709', gpkg, fixture('sites.geojson'), '-nln', 'sites']);
    const csv = join(dir, 'sites.csv');
    ogr(['-f', 'CSV', '-t_srs', 'EPSG:32709', '-lco', 'GEOMETRY=AS_XY', csv, fixture('sites.geojson')]);
    const common = ['--method', 'idw', '--size', '40x30', '--json'];
    const outs = ['ref.tif', 'gpkg.tif', 'csv.tif'].map((n) => join(dir, n));
    expect((await runCli(['interpolate', '--points', fixture('sites.geojson'), '--out', outs[0], ...common])).code).toBe(0);
    const g = await runCli(['interpolate', '--points', gpkg, '--out', outs[1], ...common]);
    expect(g.code).toBe(0);
    expect(g.out).toContain('reprojected from EPSG:32709');
    expect((await runCli(['interpolate', '--points', csv, '--points-crs', 'EPSG:32709', '--out', outs[2], ...common])).code).toBe(0);
    const [ref, a, b] = await Promise.all(outs.map(async (f) => (await readGeoTiff(readFileSync(f))).grid));
    for (const g of [a, b]) for (const k of ['west', 'north', 'dx', 'dy'] as const) expect(g[k]).toBeCloseTo(ref[k], 9);
    for (let i = 0; i < ref.values.length; i++) {
      expect(a.values[i]).toBeCloseTo(ref.values[i], 3);
      expect(b.values[i]).toBeCloseTo(ref.values[i], 3);
    }
  });

  it('heat-in-place --points: a CSV in EPSG:32709 with --points-crs gives the totals the GeoJSON gives', async () => {
    requireGdal('ogr2ogr');
    const csv = join(dir, 'hip-sites.csv');
    ogr(['-f', 'CSV', '-t_srs', 'EPSG:32709', '-lco', 'GEOMETRY=AS_XY', csv, fixture('sites.geojson')]);
    const common = ['--model', fixture('model.json'), '--size', '24x18', '--realizations', '8', '--seed', '3', '--json'];
    const ref = await runCli(['heat-in-place', '--points', fixture('sites.geojson'), ...common]);
    expect(ref.code).toBe(0);
    const noCrs = await runCli(['heat-in-place', '--points', csv, ...common]);
    expect(noCrs.code).toBe(2);
    expect(noCrs.err).toContain('pointsCrs');
    const got = await runCli(['heat-in-place', '--points', csv, '--points-crs', 'EPSG:32709', ...common]);
    expect(got.code).toBe(0);
    const a = JSON.parse(ref.out) as { cells: number; heatInPlaceJ: Record<string, number | null> };
    const b = JSON.parse(got.out) as typeof a;
    expect(b.cells).toBe(a.cells);
    // The sites pass through UTM and back (proj4, exact to ~1e-9°), so the totals agree to rounding.
    for (const k of ['nominal', 'p10', 'p50', 'p90'] as const) expect((b.heatInPlaceJ[k] ?? NaN) / (a.heatInPlaceJ[k] ?? NaN)).toBeCloseTo(1, 6);
  }, 120_000);

  it('isograds: samples from a two-layer GeoPackage need --layer; exit 2 names the file and the layers', async () => {
    requireGdal('ogr2ogr');
    const gpkg = join(dir, 'field.gpkg');
    ogr(['-f', 'GPKG', gpkg, fixture('samples.geojson'), '-nln', 'grade_samples']);
    ogr(['-f', 'GPKG', '-update', gpkg, fixture('faults.geojson'), '-nln', 'fault_traces']);
    const bad = await runCli(['isograds', '--samples', gpkg, '--out', join(dir, 'i.geojson')]);
    expect(bad.code).toBe(2);
    expect(bad.err).toContain('field.gpkg');
    expect(bad.err).toContain('grade_samples');
    const ok = await runCli([
      'isograds',
      '--samples',
      gpkg,
      '--layer',
      'grade_samples',
      '--faults',
      gpkg,
      '--faults-layer',
      'fault_traces',
      '--out',
      join(dir, 'i.geojson'),
      '--json',
    ]);
    const ref = await runCli([
      'isograds',
      '--samples',
      fixture('samples.geojson'),
      '--faults',
      fixture('faults.geojson'),
      '--out',
      join(dir, 'r.geojson'),
      '--json',
    ]);
    expect(ok.code).toBe(ref.code);
    const lines = (p: string) => (JSON.parse(readFileSync(p, 'utf8')) as { features: unknown[] }).features.length;
    expect(lines(join(dir, 'i.geojson'))).toBe(lines(join(dir, 'r.geojson')));
    // Three isograd runs in the process: over a minute on a busy machine; the test asserts no wall time.
  }, 300_000);
});
