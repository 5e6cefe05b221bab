import { describe, it, expect, vi, afterEach, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, existsSync, rmSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { runCliJson } from '../helpers/cli.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';

let dir = '';
const bytes = (p: string) => {
  const b = readFileSync(p);
  return b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength);
};
const file = (name: string, body: unknown) => {
  const p = join(dir, name);
  writeFileSync(p, typeof body === 'string' ? body : JSON.stringify(body));
  return p;
};
const site = (id: string, lon: number, lat: number, props: Record<string, unknown>) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [lon, lat] },
  properties: { id, ...props },
});

/** Runs `interpolate` in-process; returns exit code and the parsed JSON line. */
const run = (args: string[]) => runCliJson(['interpolate', ...args]);

const sites: unknown[] = [];
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'interp-cli-'));
  for (let i = 0; i < 8; i++)
    for (let j = 0; j < 8; j++) {
      sites.push(
        site(`s${i}-${j}`, -128 + i * 0.05, -38 + j * 0.05, {
          heatFlowMWm2: 50 + 3 * i + 2 * j + ((i * j) % 3),
          uncertaintyMWm2: 2,
          quality: (i + j) % 2 ? 'high' : 'low',
          depthToBaseKm: i + j,
        }),
      );
    }
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));
afterEach(() => vi.restoreAllMocks());

describe('subtherm interpolate', () => {
  it('kriging to a GeoTIFF pair: summary, variogram, cross-validation, files', async () => {
    const pts = file('p.geojson', { type: 'FeatureCollection', features: sites });
    const out = join(dir, 'hf.tif');
    const { code, json } = await run(['--points', pts, '--method', 'kriging', '--cell-km', '1', '--out', out, '--variogram', 'exponential:0,40,30']);
    expect(code).toBe(0);
    expect(json.grid.nx).toBeGreaterThan(30);
    expect(json.grid.noData).toBe(0);
    expect(json.variogram).toMatchObject({ model: 'exponential', nugget: 0, partialSill: 40, rangeKm: 30, source: 'fixed' });
    expect(json.crossValidation.n).toBe(64);
    expect(json.files).toEqual([out, join(dir, 'hf.sd.tif')]);
    expect(existsSync(join(dir, 'hf.sd.tif'))).toBe(true);
    const r = await readGeoTiff(bytes(out));
    expect(r.grid.width).toBe(json.grid.nx);
    expect(r.metadata.method).toBe('kriging');
    expect(r.caution).toContain('Screening estimates only');
  });

  it('--trend: universal kriging recorded in the JSON and the GeoTIFF metadata; auto lists every drift; a bad value exits 2', async () => {
    // The sites' values are 50 + 3i + 2j plus a small periodic part: a plane the linear drift takes up exactly.
    const pts = file('p-trend.geojson', { type: 'FeatureCollection', features: sites });
    const out = join(dir, 'hf-trend.tif');
    const lin = await run(['--points', pts, '--method', 'kriging', '--cell-km', '2', '--trend', 'linear', '--out', out]);
    expect(lin.code).toBe(0);
    expect(lin.json.variogram.trend).toMatchObject({ kind: 'linear', selectedBy: 'given' });
    expect(lin.json.variogram.trend.ols.explainedVarianceFraction).toBeGreaterThan(0.9);
    const r = await readGeoTiff(bytes(out));
    expect(r.metadata.trend).toMatchObject({ kind: 'linear', selectedBy: 'given' });
    const auto = await run(['--points', pts, '--method', 'kriging', '--cell-km', '2', '--trend', 'auto', '--sd', 'none']);
    expect(auto.code).toBe(0);
    const t = auto.json.variogram.trend;
    expect(t.selectedBy).toBe('cross-validation');
    expect(t.candidates.map((c: { kind: string }) => c.kind)).toEqual(['none', 'linear', 'quadratic']);
    const best = Math.min(...t.candidates.map((c: { cvRmse: number }) => c.cvRmse));
    expect(auto.json.crossValidation.rmse).toBe(best);
    expect(t.kind).not.toBe('none');
    const bad = await run(['--points', pts, '--method', 'kriging', '--trend', 'cubic']);
    expect(bad.code).toBe(2);
    // Every accepted form is listed (the drift-grid forms included).
    expect(bad.json.error.message).toContain('--trend must be one of none|linear|quadratic|auto|drift:G.tif|auto:drift:G.tif');
    expect(bad.json.error.message).toContain('got "cubic"');
    expect(bad.json.error.details[0]).toMatchObject({ field: 'trend', problem: 'expected none|linear|quadratic|auto|drift:G.tif|auto:drift:G.tif' });
  });

  it('--at predicts at target points only, exact at a data point', async () => {
    const pts = file('p2.geojson', { type: 'FeatureCollection', features: sites });
    const at = file('t.geojson', { type: 'FeatureCollection', features: [site('on-site', -128, -38, {}), site('between', -127.975, -37.975, {})] });
    const { code, json } = await run(['--points', pts, '--method', 'kriging', '--at', at, '--variogram', 'spherical:0,40,30']);
    expect(code).toBe(0);
    expect(json.predictions[0].id).toBe('on-site');
    expect(json.predictions[0].value).toBeCloseTo(50, 8);
    expect(json.predictions[1].sd).toBeGreaterThan(0);
    expect(json.grid).toBeUndefined();
  });

  it('any numeric field: features missing it are an error naming them, or skipped with --skip-missing', async () => {
    const feats = [...sites.slice(0, 20), site('no-depth', -127.9, -37.9, { heatFlowMWm2: 60 })];
    const pts = file('p3.geojson', { type: 'FeatureCollection', features: feats });
    const bad = await run(['--points', pts, '--field', 'depthToBaseKm', '--method', 'idw', '--size', '20x20']);
    expect(bad.code).toBe(2);
    expect(bad.json.error.message).toContain('no-depth');
    const ok = await run(['--points', pts, '--field', 'depthToBaseKm', '--method', 'idw', '--size', '20x20', '--skip-missing']);
    expect(ok.code).toBe(0);
    expect(ok.json.warnings.join(' ')).toContain('no-depth');
  });

  it('bad input exits 2 with a clear message, never a NaN grid', async () => {
    const two = file('two.geojson', { type: 'FeatureCollection', features: sites.slice(0, 2) });
    expect((await run(['--points', two, '--method', 'kriging'])).json.error.code).toBe('too_few_points');
    const flat = file('flat.geojson', {
      type: 'FeatureCollection',
      features: (sites as { properties: object }[]).slice(0, 10).map((s) => ({ ...s, properties: { ...s.properties, heatFlowMWm2: 60 } })),
    });
    const f = await run(['--points', flat, '--method', 'kriging']);
    expect(f.code).toBe(2);
    expect(f.json.error.code).toBe('degenerate_variogram');
    const pts = file('p4.geojson', { type: 'FeatureCollection', features: sites });
    const big = await run(['--points', pts, '--method', 'idw', '--size', '6000x5000']);
    expect(big.code).toBe(2);
    expect(big.json.error.code).toBe('grid_too_large');
    const csv = file('nan.csv', 'id,lon,lat,heatFlowMWm2\na,-128,-38,60\nb,-128.1,-38,NaN\nc,-128,-38.1,61\n');
    const n = await run(['--points', csv, '--method', 'idw']);
    expect(n.code).toBe(2);
    expect(JSON.stringify(n.json.error.details)).toContain('heatFlowMWm2');
    const out = file('range.csv', 'id,lon,lat,depthKm\na,-128,-38,6\nb,-200,-38,5\nc,-128,-38.1,4\n');
    expect((await run(['--points', out, '--field', 'depthKm', '--method', 'idw'])).code).toBe(2);
    expect((await run(['--points', pts, '--method', 'kriging', '--variogram', 'exponential:0,-1,10'])).json.error.code).toBe('bad_option');
  });

  it('projected CSV input (--points-crs) and projected output grid (--crs)', async () => {
    const csv = file(
      'utm.csv',
      'id,x,y,heatFlowMWm2\n' +
        Array.from({ length: 30 }, (_, i) => `u${i},${500000 + (i % 6) * 3000},${5800000 + Math.floor(i / 6) * 3000},${50 + i}`).join('\n'),
    );
    const out = join(dir, 'utm.tif');
    const { code, json } = await run(['--points', csv, '--points-crs', 'EPSG:32709', '--crs', 'EPSG:32709', '--method', 'idw', '--cell-km', '1', '--out', out]);
    expect(code).toBe(0);
    expect(json.grid.crs).toBe('EPSG:32709');
    expect(json.grid.bbox[0]).toBeGreaterThan(499000);
    expect(json.grid.bbox[0]).toBeLessThan(500000);
    const r = await readGeoTiff(bytes(out));
    expect(r.grid.crs).toBe('EPSG:32709');
    // 1 km on the ground near the central meridian is k0 × 1000 m in UTM, k0 = 0.9996 (Snyder 1987, §8).
    expect(Math.abs(r.grid.dx - 999.6)).toBeLessThan(0.01);
    // Within a few km of the central meridian the ground cell size does not vary: no warning about it.
    expect(json.warnings.join(' ')).not.toMatch(/on the ground/);
  });

  it('reports the ground cell size with its range, and warns, where the projection makes it vary', async () => {
    const pts = file('p3857.geojson', { type: 'FeatureCollection', features: sites });
    const { code, json } = await run(['--points', pts, '--method', 'idw', '--crs', 'EPSG:3857', '--cell-km', '20', '--bbox=-130,-46,-126,-30']);
    expect(code).toBe(0);
    const [lo, hi] = json.grid.groundCellKmRange as [number, number];
    // Web Mercator's scale is 1/cos φ (Snyder 1987 §7; y = ln tan(π/4 + φ/2) on the sphere): the grid's centre in y
    // is at φc with ψ(φc) the mean of ψ(30°) and ψ(46°), where a cell is 20 km; at 46° S it is 20·cos 46°/cos φc on
    // the ground and at 30° S 20·cos 30°/cos φc (sphere against ellipsoid, and corner cells half a cell inside the
    // box: under 0.5 %).
    const DEG = Math.PI / 180;
    const psi = (d: number) => Math.log(Math.tan(Math.PI / 4 + (d * DEG) / 2));
    const phiC = 2 * Math.atan(Math.exp((psi(30) + psi(46)) / 2)) - Math.PI / 2;
    expect(Math.abs(lo - (20 * Math.cos(46 * DEG)) / Math.cos(phiC)) / lo).toBeLessThan(0.005);
    expect(Math.abs(hi - (20 * Math.cos(30 * DEG)) / Math.cos(phiC)) / hi).toBeLessThan(0.005);
    expect(json.warnings.join(' ')).toMatch(/km at the centre, \d+\.\d{3}–\d+\.\d{3} km over the grid/);
  });

  it('--region and --max-distance-km mask cells as no data', async () => {
    const pts = file('p5.geojson', { type: 'FeatureCollection', features: sites });
    const region = file('r.geojson', {
      type: 'FeatureCollection',
      features: [
        {
          type: 'Feature',
          geometry: {
            type: 'Polygon',
            coordinates: [
              [
                [-128, -38],
                [-127.8, -38],
                [-127.8, -37.8],
                [-128, -37.8],
                [-128, -38],
              ],
            ],
          },
          properties: { id: 'r' },
        },
      ],
    });
    const a = await run(['--points', pts, '--method', 'idw', '--size', '40x40', '--region', region]);
    expect(a.json.error).toBeUndefined();
    expect(a.code).toBe(0);
    expect(a.json.grid.noData).toBeGreaterThan(0);
    expect(a.json.grid.noData).toBeLessThan(1600);
    const b = await run(['--points', pts, '--method', 'idw', '--size', '40x40', '--bbox=-128.5,-38.5,-127.4,-37.4', '--max-distance-km', '5']);
    expect(b.json.grid.noData).toBeGreaterThan(0);
  });
});
