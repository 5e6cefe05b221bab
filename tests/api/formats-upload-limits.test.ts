// Uploads: every format and parameter in /api/openapi.json, the size limit (413 with a clear message and nothing
// stored), and points in a CRS on another datum reprojected as GDAL does (`gdaltransform`, Debian's gdal-bin).
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { requireGdal } from '../helpers/gdal.ts';

const LIMIT = 20_000;
let t: TestApp;
beforeAll(async () => {
  t = await startTestApp('formats-upload-limits', { limits: { maxBodyBytes: LIMIT } });
});
afterAll(async () => {
  await t.close();
});

async function newProject(): Promise<{ id: string; editToken: string }> {
  const r = await t.post('/api/projects', { title: 'Upload checks' });
  expect(r.status).toBe(201);
  return (await r.json()) as { id: string; editToken: string };
}

describe('upload formats in the OpenAPI description', () => {
  it('both upload routes list GeoJSON, CSV, GeoPackage and zipped Shapefile bodies and the crs, layer and filename parameters', async () => {
    const doc = (await (await t.app.request('/api/openapi.json')).json()) as {
      paths: Record<string, Record<string, { parameters?: { name: string; in: string }[]; requestBody?: { content: Record<string, unknown> } }>>;
    };
    for (const path of ['/api/projects/{id}/datasets', '/api/datasets']) {
      const post = doc.paths[path].post;
      const types = Object.keys(post.requestBody!.content);
      for (const type of ['application/geo+json', 'text/csv', 'application/geopackage+sqlite3', 'application/zip']) expect(types).toContain(type);
      const query = post.parameters!.filter((p) => p.in === 'query').map((p) => p.name);
      for (const name of ['kind', 'crs', 'layer', 'filename']) expect(query).toContain(name);
    }
  });
});

describe('uploads over the size limit', () => {
  for (const c of [
    { name: 'GeoPackage', type: 'application/geopackage+sqlite3' },
    { name: 'zipped Shapefile', type: 'application/zip' },
    { name: 'CSV', type: 'text/csv' },
  ]) {
    it(`a ${c.name} larger than the limit gets 413 naming the limit, and the project holds nothing`, async () => {
      const p = await newProject();
      const body = c.type === 'text/csv' ? 'longitude,latitude,heatFlowMWm2\n' + '-128.5,-38.2,61.5\n'.repeat(2000) : new Uint8Array(LIMIT + 5000).fill(7);
      const r = await t.app.request(`/api/projects/${p.id}/datasets?kind=sites&filename=big`, {
        method: 'POST',
        headers: { 'content-type': c.type, authorization: `Bearer ${p.editToken}` },
        body,
      });
      expect(r.status).toBe(413);
      const j = (await r.json()) as { error: { code: string; message: string } };
      expect(j.error.code).toBe('body_too_large');
      expect(j.error.message).toContain(String(LIMIT));
      const list = (await (await t.app.request(`/api/projects/${p.id}/datasets`)).json()) as { datasets: unknown[]; storage: { bytes: number } };
      expect(list.datasets).toEqual([]);
      expect(list.storage.bytes).toBe(0);
    });
  }
});

describe('points in a CRS on another datum', () => {
  // CH1903+ / LV95 is on the Bessel 1841 ellipsoid with a 3-parameter datum shift to WGS 84 in the offline EPSG
  // definitions. The reference is GDAL's own transform of the same x,y (PROJ's choice of operation); the tolerance
  // for other datums is 5 m.
  for (const c of [
    {
      crs: 'EPSG:2056',
      xy: [
        [2_600_000, 1_200_000],
        [2_651_234.5, 1_152_345.6],
        [2_552_345.6, 1_248_765.4],
      ],
    },
  ]) {
    it(`a CSV of x,y in ${c.crs} lands within 5 m of gdaltransform's longitude/latitude`, async () => {
      requireGdal('gdaltransform');
      const csv = 'id,x,y,heatFlowMWm2\n' + c.xy.map(([x, y], i) => `D${i},${x},${y},${60 + i}`).join('\n') + '\n';
      const r = await t.app.request(`/api/datasets?kind=sites&crs=${c.crs}&filename=points.csv`, {
        method: 'POST',
        headers: { 'content-type': 'text/csv' },
        body: csv,
      });
      expect(r.status).toBe(201);
      const { id } = (await r.json()) as { id: string };
      const stored = JSON.parse((await t.store.getDataset(id))!.body) as { features: { geometry: { coordinates: number[] } }[] };
      const g = spawnSync('gdaltransform', ['-s_srs', c.crs, '-t_srs', 'EPSG:4326', '-output_xy'], {
        input: c.xy.map((p) => p.join(' ')).join('\n') + '\n',
        encoding: 'utf8',
      });
      expect(g.status).toBe(0);
      const ref = g.stdout
        .trim()
        .split('\n')
        .map((l) => l.trim().split(/\s+/).map(Number));
      expect(ref).toHaveLength(c.xy.length);
      for (let i = 0; i < c.xy.length; i++) {
        const [lon, lat] = stored.features[i].geometry.coordinates;
        const [rlon, rlat] = ref[i];
        // Local metres per degree on the sphere of the mean radius (6371.0088 km): ample for a few metres.
        const mDeg = (Math.PI / 180) * 6_371_008.8;
        const d = Math.hypot((lon - rlon) * mDeg * Math.cos((rlat * Math.PI) / 180), (lat - rlat) * mDeg);
        expect(d).toBeLessThan(5);
      }
    });
  }
});
