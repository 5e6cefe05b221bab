// GeoPackage in and out, zipped Shapefile in, projected CSV in: GDAL (ogr2ogr/ogrinfo, Debian's gdal-bin) writes the
// test files at test time and reads our exports back; coordinates are compared with the original longitude/latitude.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync, rmSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { writeGeoPackage, readGeoPackage } from '../../server/io/geopackage.ts';
import { readZippedShapefile } from '../../server/io/vector-input.ts';
import { CAUTION } from '../../shared/caution.ts';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { requireGdal } from '../helpers/gdal.ts';

const TOOLS = ['ogr2ogr', 'ogrinfo', 'zip'] as const;
let dir = '';
let t: TestApp;
beforeAll(async () => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-vector-'));
  t = await startTestApp('formats-vector');
});
afterAll(async () => {
  await t.close();
  rmSync(dir, { recursive: true, force: true });
});

function run(cmd: string, args: string[], cwd?: string): { stdout: string; stderr: string } {
  const r = spawnSync(cmd, args, { encoding: 'utf8', cwd });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')}: ${r.stderr}`);
  return { stdout: r.stdout, stderr: r.stderr };
}

/** Invented heat-flow sites in the Orrindel Massif (open ocean), with awkward coordinates. */
const sites = {
  type: 'FeatureCollection',
  features: [
    {
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [-128.444454123, -38.095812987] },
      properties: { id: 'OM-HF-001', heatFlowMWm2: 45, uncertaintyMWm2: 10, quality: 'low' },
    },
    {
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [-128.32589, -37.772537] },
      properties: { id: 'OM-HF-002', heatFlowMWm2: 43.9, uncertaintyMWm2: 6.4, quality: 'medium' },
    },
    {
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [-127.90000001, -37.5] },
      properties: { id: 'OM-HF-003', heatFlowMWm2: 61.25, uncertaintyMWm2: 5, quality: 'high' },
    },
  ],
};
const faults = {
  type: 'FeatureCollection',
  features: [
    {
      type: 'Feature',
      geometry: {
        type: 'LineString',
        coordinates: [
          [-128.4, -38.2],
          [-128.1, -37.9],
          [-127.8, -37.7],
        ],
      },
      properties: { name: 'Vessaly fault', dipDeg: 60 },
    },
  ],
};

function geojsonFile(name: string, v: unknown): string {
  const f = join(dir, name);
  writeFileSync(f, JSON.stringify(v));
  return f;
}

async function upload(
  body: Buffer | Uint8Array | string,
  type: string,
  query: string,
): Promise<{
  status: number;
  json: { id?: string; featureCount?: number; warnings?: string[]; error?: { code: string; message: string; details: unknown[] } };
}> {
  const r = await t.app.request(`/api/datasets?${query}`, {
    method: 'POST',
    headers: { 'content-type': type },
    body: typeof body === 'string' ? body : new Blob([new Uint8Array(body)]),
  });
  return { status: r.status, json: await r.json() };
}

async function storedSites(id: string): Promise<{ features: { geometry: { coordinates: number[] }; properties: Record<string, unknown> }[] }> {
  return JSON.parse((await t.store.getDataset(id))!.body);
}

function expectSameSites(got: { features: { geometry: { coordinates: number[] }; properties: Record<string, unknown> }[] }, tol: number) {
  expect(got.features.length).toBe(3);
  for (const want of sites.features) {
    const f = got.features.find((g) => g.properties.id === want.properties.id)!;
    expect(Math.abs(f.geometry.coordinates[0] - want.geometry.coordinates[0])).toBeLessThan(tol);
    expect(Math.abs(f.geometry.coordinates[1] - want.geometry.coordinates[1])).toBeLessThan(tol);
    expect(f.properties.heatFlowMWm2).toBe(want.properties.heatFlowMWm2);
    expect(f.properties.quality).toBe(want.properties.quality);
  }
}

describe('GeoPackage out', () => {
  it('ogrinfo opens it with no warnings; GeoJSON → GeoPackage → GeoJSON (ogr2ogr) keeps properties and coordinates', () => {
    requireGdal(...TOOLS);
    const f = join(dir, 'out.gpkg');
    writeFileSync(
      f,
      writeGeoPackage(
        [
          { name: 'sites', title: 'Heat-flow sites', collection: sites as never },
          { name: 'faults', collection: faults as never },
        ],
        { PROVENANCE: '{"version":"t"}' },
      ),
    );
    const info = run('ogrinfo', ['-ro', '-al', '-so', f]);
    expect(info.stderr).toBe('');
    expect(info.stdout).toContain('Layer name: sites');
    expect(info.stdout).toContain('Layer name: faults');
    expect(info.stdout).toContain('Geometry: Point');
    expect(info.stdout).toContain('Geometry: Line String');
    expect(info.stdout).toContain('ID["EPSG",4326]');
    expect(info.stdout).toContain(CAUTION);
    const back = join(dir, 'back.geojson');
    run('ogr2ogr', ['-f', 'GeoJSON', '-lco', 'COORDINATE_PRECISION=15', back, f, 'sites']);
    const g = JSON.parse(readFileSync(back, 'utf8'));
    expectSameSites(g, 1e-12);
    expect(g.features[0].properties.uncertaintyMWm2).toBe(10);
    // The caution and provenance sit in the GeoPackage metadata extension as GDAL metadata (ogrinfo -mdd reads them).
    const md = run('ogrinfo', ['-ro', '-so', '-mdd', 'all', f, 'sites']).stdout;
    expect(md).toContain(CAUTION);
  });

  it("a run's vector results as one GeoPackage: one table per GeoJSON layer, ogrinfo with no warnings, the same features", async () => {
    requireGdal(...TOOLS);
    const res = await t.post('/api/runs', { sites: 'demo-sites', faults: 'demo-faults', model: 'demo-model', grid: { cellKm: 8 } });
    const runId = ((await res.json()) as { id: string }).id;
    const finished = await t.waitEnd(runId);
    expect(finished.status).toBe('done');
    const vector = finished.layers.filter((l) => l.formats.includes('geojson'));
    expect(vector.length).toBeGreaterThan(1);
    const r = await t.app.request(`/api/runs/${runId}/vectors.gpkg`);
    expect(r.status).toBe(200);
    expect(r.headers.get('content-type')).toBe('application/geopackage+sqlite3');
    const f = join(dir, 'run.gpkg');
    writeFileSync(f, new Uint8Array(await r.arrayBuffer()));
    const info = run('ogrinfo', ['-ro', '-al', '-so', f]);
    expect(info.stderr).toBe('');
    for (const l of vector) {
      const gj = (await (await t.app.request(`/api/runs/${runId}/layers/${l.name}.geojson`)).json()) as { features: unknown[] };
      const table = l.name.replace(/[^A-Za-z0-9_]/g, '_');
      expect(info.stdout).toContain(`Layer name: ${table}`);
      const count = /Feature Count: (\d+)/.exec(info.stdout.slice(info.stdout.indexOf(`Layer name: ${table}\n`)))![1];
      expect(Number(count)).toBe(gj.features.length);
    }
  });

  it('reads its own GeoPackage back with the same properties and coordinates', async () => {
    const r = await readGeoPackage(writeGeoPackage([{ name: 'faults', collection: faults as never }]));
    expect(r.layer).toBe('faults');
    expect(r.collection.features[0]).toEqual(faults.features[0]);
  });
});

describe('GeoPackage, Shapefile and projected CSV in (upload route)', () => {
  it('a GeoPackage in UTM 9S (EPSG:32709) comes back in WGS 84 within 1e-9°', async () => {
    requireGdal(...TOOLS);
    const f = join(dir, 'utm.gpkg');
    run('ogr2ogr', ['-f', 'GPKG', '-t_srs', 'EPSG:32709', f, geojsonFile('sites.geojson', sites), '-nln', 'sites']);
    const r = await upload(readFileSync(f), 'application/geopackage+sqlite3', 'kind=sites&filename=utm.gpkg');
    expect(r.status).toBe(201);
    expect(r.json.featureCount).toBe(3);
    expect(r.json.warnings!.join(' ')).toContain('reprojected from EPSG:32709');
    expectSameSites(await storedSites(r.json.id!), 1e-9);
  });

  it('several layers: the layer is chosen by name; without it a 422 lists them', async () => {
    requireGdal(...TOOLS);
    const f = join(dir, 'two.gpkg');
    run('ogr2ogr', ['-f', 'GPKG', f, geojsonFile('s.geojson', sites), '-nln', 'heat_sites']);
    run('ogr2ogr', ['-f', 'GPKG', '-update', f, geojsonFile('f.geojson', faults), '-nln', 'fault_traces']);
    const bad = await upload(readFileSync(f), 'application/geopackage+sqlite3', 'kind=sites&filename=two.gpkg');
    expect(bad.status).toBe(422);
    expect(bad.json.error!.code).toBe('choose_layer');
    expect(bad.json.error!.message).toContain('two.gpkg');
    expect(JSON.stringify(bad.json.error!.details)).toContain('fault_traces');
    const ok = await upload(readFileSync(f), 'application/geopackage+sqlite3', 'kind=faults&filename=two.gpkg&layer=fault_traces');
    expect(ok.status).toBe(201);
    const wrongKind = await upload(readFileSync(f), 'application/geopackage+sqlite3', 'kind=sites&filename=two.gpkg&layer=fault_traces');
    expect(wrongKind.status).toBe(422);
    expect(wrongKind.json.error!.message).toContain('two.gpkg, layer "fault_traces"');
  });

  it('bad GeoPackages: corrupt, no CRS, unknown layer → 4xx JSON naming file and layer; nothing stored', async () => {
    requireGdal(...TOOLS);
    const before = (await t.store.listDatasets()).length;
    const corrupt = await upload(
      new TextEncoder().encode('SQLite format 3\0 but not really'.repeat(40)),
      'application/geopackage+sqlite3',
      'kind=sites&filename=broken.gpkg',
    );
    expect(corrupt.status).toBe(422);
    expect(corrupt.json.error!.message).toContain('broken.gpkg');
    // A CSV source has no CRS: GDAL writes the layer with the undefined geographic SRS (srs_id 0).
    const csv = join(dir, 'nocrs.csv');
    writeFileSync(csv, 'lon,lat,heatFlowMWm2\n-128.1,-37.2,50\n');
    const nocrs = join(dir, 'nocrs.gpkg');
    run('ogr2ogr', ['-f', 'GPKG', nocrs, csv, '-oo', 'X_POSSIBLE_NAMES=lon', '-oo', 'Y_POSSIBLE_NAMES=lat', '-nln', 'pts']);
    const r = await upload(readFileSync(nocrs), 'application/geopackage+sqlite3', 'kind=sites&filename=nocrs.gpkg');
    expect(r.status).toBe(422);
    expect(r.json.error!.code).toBe('no_crs');
    expect(r.json.error!.message).toContain('nocrs.gpkg, layer "pts"');
    const unknown = await upload(readFileSync(nocrs), 'application/geopackage+sqlite3', 'kind=sites&filename=nocrs.gpkg&layer=nope');
    expect(unknown.json.error!.code).toBe('unknown_layer');
    expect((await t.store.listDatasets()).length).toBe(before);
  });

  it('a zipped Shapefile with its .prj (EPSG:32709) → sites within 1e-9°; without .prj → 422 no_crs', async () => {
    requireGdal(...TOOLS);
    const shpDir = join(dir, 'shp');
    mkdirSync(shpDir, { recursive: true });
    run('ogr2ogr', ['-f', 'ESRI Shapefile', '-t_srs', 'EPSG:32709', join(shpDir, 'sites.shp'), geojsonFile('s2.geojson', sites)]);
    run('zip', ['-q', 'sites.zip', 'sites.shp', 'sites.shx', 'sites.dbf', 'sites.prj'], shpDir);
    run('zip', ['-q', 'noprj.zip', 'sites.shp', 'sites.shx', 'sites.dbf'], shpDir);
    const r = await upload(readFileSync(join(shpDir, 'sites.zip')), 'application/zip', 'kind=sites&filename=sites.zip');
    expect([200, 201]).toContain(r.status); // 200: the same content as an earlier upload (stored once)
    // dBASE cuts field names to 10 characters (heatFlowMWm2 → heatFlowMW); the reader restores the project's names.
    expectSameSites(await storedSites(r.json.id!), 1e-9);
    const direct = await readZippedShapefile(readFileSync(join(shpDir, 'sites.zip')));
    expect(direct.layer).toBe('sites');
    const noprj = await upload(readFileSync(join(shpDir, 'noprj.zip')), 'application/zip', 'kind=sites&filename=noprj.zip');
    expect(noprj.status).toBe(422);
    expect(noprj.json.error!.code).toBe('no_crs');
    expect(noprj.json.error!.message).toContain('noprj.zip, layer "sites"');
    const notzip = await upload(new TextEncoder().encode('not a zip'), 'application/zip', 'kind=sites&filename=x.zip');
    expect(notzip.status).toBe(422);
    expect(notzip.json.error!.message).toContain('x.zip');
  });

  it('projected CSV (x,y in EPSG:32709, written by ogr2ogr) with crs=EPSG:32709 → the same lon/lat within 1e-9°', async () => {
    requireGdal(...TOOLS);
    const csv = join(dir, 'utm.csv');
    run('ogr2ogr', ['-f', 'CSV', '-t_srs', 'EPSG:32709', '-lco', 'GEOMETRY=AS_XY', csv, geojsonFile('s3.geojson', sites)]);
    const text = readFileSync(csv, 'utf8');
    expect(text.split('\n')[0]).toMatch(/^X,Y,/);
    const r = await upload(text, 'text/csv', 'kind=sites&crs=EPSG:32709');
    expect([200, 201]).toContain(r.status);
    expectSameSites(await storedSites(r.json.id!), 1e-9);
    const missing = await upload(text, 'text/csv', 'kind=sites');
    expect(missing.status).toBe(400);
    expect(missing.json.error!.message).toContain('crs=EPSG:nnnn');
    const looks = await upload(text.replace(/^X,Y,/, 'longitude,latitude,'), 'text/csv', 'kind=sites');
    expect(looks.json.error!.code).toBe('looks_projected');
    expect(looks.json.error!.message).toContain('look projected');
  });
});
