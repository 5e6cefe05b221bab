// The column inspector at a point of a run with no heat flow says why: outside the grid, or a cell that sees no site
// because every straight path to one crosses a fault trace, with the faults on the paths to its nearest sites named.
// The faults named are checked with GDAL (Debian's gdal-bin: ogr2ogr projects, SpatiaLite/GEOS decides
// intersections), not with the project's own crossing test (docs/sources.md#fault-barriers).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { startTestApp, type TestApp } from '../helpers/app.ts';

const hasGdal =
  spawnSync('ogr2ogr', ['--version']).status === 0 &&
  spawnSync('ogrinfo', [':memory:', '-dialect', 'SQLite', '-sql', "SELECT ST_Intersects(ST_GeomFromText('POINT(0 0)'), ST_GeomFromText('POINT(0 0)'))"])
    .status === 0;
const read = (p: string) => readFileSync(new URL(`../../fixtures/demo/${p}`, import.meta.url), 'utf8');

interface ErrorBody {
  error: { code: string; message: string; details: { feature?: string; field: string; problem: string }[] };
}

let t: TestApp;
let runId = '';
beforeAll(async () => {
  t = await startTestApp('column-empty');
  const res = await t.post('/api/runs', {
    sites: 'demo-sites',
    faults: 'demo-faults',
    model: 'demo-model',
    interpolation: { method: 'kriging' },
    isothermsC: [300],
    depthsKm: [5],
    grid: { cellKm: 2 },
  });
  expect(res.status).toBe(202);
  runId = ((await res.json()) as { id: string }).id;
  const run = await t.waitEnd<{ status: string; message: string }>(runId);
  expect(run.status, run.message).toBe('done');
}, 600_000);
afterAll(() => t.close());

/** The nearest 8 sites of (lon, lat) in the run's local projection and the faults each straight path meets, by GDAL. */
function gdalFaultsOnPaths(lon: number, lat: number): Map<string, number> {
  const sites = (JSON.parse(read('sites.geojson')) as { features: { geometry: { coordinates: number[] } }[] }).features.map((f) => f.geometry.coordinates);
  const lons = sites.map((s) => s[0]),
    lats = sites.map((s) => s[1]);
  // The run's local frame: transverse Mercator centred on the sites' lon/lat envelope (shared/interp/projection.ts).
  const lon0 = (Math.min(...lons) + Math.max(...lons)) / 2,
    lat0 = (Math.min(...lats) + Math.max(...lats)) / 2;
  const srs = `+proj=tmerc +lat_0=${lat0} +lon_0=${lon0} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=km +no_defs`;
  const paths = sites.map((s, i) => ({
    type: 'Feature',
    properties: { site: i },
    geometry: { type: 'LineString', coordinates: [[lon, lat], s] },
  }));
  const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'column-empty-'));
  try {
    const db = join(dir, 'check.sqlite');
    writeFileSync(join(dir, 'paths.geojson'), JSON.stringify({ type: 'FeatureCollection', features: paths }));
    writeFileSync(join(dir, 'faults.geojson'), read('faults.geojson'));
    for (const args of [
      ['-f', 'SQLite', '-dsco', 'SPATIALITE=YES', '-t_srs', srs, db, join(dir, 'paths.geojson'), '-nln', 'paths'],
      ['-update', '-t_srs', srs, db, join(dir, 'faults.geojson'), '-nln', 'faults'],
    ]) {
      const p = spawnSync('ogr2ogr', args, { encoding: 'utf8' });
      expect(p.status, p.stderr).toBe(0);
    }
    // The 8 shortest paths (projected lengths), and for each the faults it meets.
    const sql =
      'SELECT n.site AS site, f.name AS fault FROM (SELECT site, geometry FROM paths ORDER BY ST_Length(geometry) LIMIT 8) n JOIN faults f ON ST_Intersects(n.geometry, f.geometry)';
    const out = spawnSync('ogrinfo', ['-ro', '-q', '-dialect', 'SQLite', '-sql', sql, db], { encoding: 'utf8', maxBuffer: 1 << 26 });
    expect(out.status, out.stderr).toBe(0);
    const counts = new Map<string, number>();
    const blocked = new Set<string>();
    for (const m of out.stdout.matchAll(/site \(Integer\) = (\d+)\s+fault \(String\) = ([^\n]+)/g)) {
      counts.set(m[2].trim(), (counts.get(m[2].trim()) ?? 0) + 1);
      blocked.add(m[1]);
    }
    expect(blocked.size, 'every one of the 8 nearest paths meets a fault').toBe(8);
    return counts;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

describe('POST /api/column at a point with no heat flow', () => {
  it('in a cell that sees no site: says so and names the faults on the paths to its nearest sites, as GDAL finds them', async () => {
    if (!hasGdal) throw new Error('GDAL (ogr2ogr, ogrinfo with the SQLite dialect) is missing: apt-get install -y gdal-bin (bash .ci/run does)');
    const run = (await (await t.app.request(`/api/runs/${runId}`)).json()) as { summary: { interpolation: { emptyCells: { noDataAcrossFaults: number } } } };
    expect(run.summary.interpolation.emptyCells.noDataAcrossFaults).toBeGreaterThan(0);
    const grid = (await t.store.getRunGrid(runId, 'heatFlow'))!;
    const { width, height, west, north, dx, dy } = grid.meta;
    // An empty cell whose eight neighbours are empty too, so the click is inside the layer's area, not on its edge.
    let cell = -1;
    for (let r = 1; r < height - 1 && cell < 0; r++)
      for (let c = 1; c < width - 1 && cell < 0; c++) {
        let all = true;
        for (let dr = -1; dr <= 1; dr++) for (let dc = -1; dc <= 1; dc++) all &&= Number.isNaN(grid.values[(r + dr) * width + c + dc]);
        if (all) cell = r * width + c;
      }
    expect(cell).toBeGreaterThanOrEqual(0);
    const lon = west + ((cell % width) + 0.5) * dx,
      lat = north - (Math.floor(cell / width) + 0.5) * dy;
    const res = await t.post('/api/column', { runId, lon, lat });
    expect(res.status).toBe(422);
    const e = ((await res.json()) as ErrorBody).error;
    expect(e.code).toBe('no_data_here');
    expect(e.message).toContain('the cell sees no heat-flow site, since every straight path from it to a site crosses a fault trace');
    // the clicked point is printed to 1e-5° (about a metre), not with a double's fourteen decimals
    expect(e.message).toMatch(/^no heat-flow value at -?\d+(\.\d{1,5})?, -?\d+(\.\d{1,5})?: /);
    expect(e.message).toContain(`at ${Math.round(lon * 1e5) / 1e5}, `);
    expect(e.details[0]).toEqual({ field: 'lon,lat', problem: 'no heat-flow site visible across faults (the no-data-across-faults layer)' });
    const named = new Map(e.details.slice(1).map((d) => [d.feature!, Number(/crosses (\d+) of/.exec(d.problem)![1])]));
    expect(named.size).toBeGreaterThan(0);
    expect(named).toEqual(gdalFaultsOnPaths(lon, lat));
    for (const name of named.keys()) expect(e.message).toContain(name);
  }, 300_000);

  it('in a filled cell beside an empty one: a column from the filled cells around the point (renormalised bilinear weights)', async () => {
    const grid = (await t.store.getRunGrid(runId, 'heatFlow'))!;
    const { width, height, west, north, dx, dy } = grid.meta;
    const v = grid.values;
    // A filled cell whose eastern neighbour is empty while the rest of its 2 × 2 block to the north-east is filled.
    let found: { r: number; c: number } | null = null;
    for (let r = 1; r < height && !found; r++)
      for (let c = 0; c < width - 1 && !found; c++)
        if (
          Number.isFinite(v[r * width + c]) &&
          Number.isNaN(v[r * width + c + 1]) &&
          Number.isFinite(v[(r - 1) * width + c]) &&
          Number.isFinite(v[(r - 1) * width + c + 1])
        )
          found = { r, c };
    expect(found).not.toBeNull();
    const { r, c } = found!;
    // A quarter cell east and north of the filled cell's centre: bilinear weights 0.5625 (the cell), 0.1875 (east,
    // empty), 0.1875 (north), 0.0625 (north-east); the empty one's weight is dropped and the rest renormalised.
    const lon = west + (c + 0.75) * dx,
      lat = north - (r + 0.25) * dy;
    const here = v[r * width + c],
      northV = v[(r - 1) * width + c],
      northEast = v[(r - 1) * width + c + 1];
    const expected = (0.5625 * here + 0.1875 * northV + 0.0625 * northEast) / (0.5625 + 0.1875 + 0.0625);
    const res = await t.post('/api/column', { runId, lon, lat });
    expect(res.status, await res.clone().text()).toBe(200);
    const body = (await res.json()) as { surfaceHeatFlowMWm2: number; isothermDepthsKm: Record<string, unknown> };
    // Float32 grid values; the answer is rounded to 1e-6.
    expect(Math.abs(body.surfaceHeatFlowMWm2 - expected)).toBeLessThan(2e-6);
    // In the empty cell itself there is still no value.
    const empty = await t.post('/api/column', { runId, lon: west + (c + 1.5) * dx, lat: north - (r + 0.5) * dy });
    expect(empty.status).toBe(422);
  });

  it('outside the run grid: says so, with the grid bounds', async () => {
    const res = await t.post('/api/column', { runId, lon: 10, lat: 10 });
    expect(res.status).toBe(422);
    const e = ((await res.json()) as ErrorBody).error;
    expect(e.code).toBe('no_data_here');
    expect(e.message).toMatch(/^no heat-flow value at 10, 10: the point is outside the run's grid \(W -?\d/);
    expect(e.details).toEqual([{ field: 'lon,lat', problem: 'outside the run grid' }]);
  });
});
