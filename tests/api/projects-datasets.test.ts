// Projects own their data sets: named uploads into a project (edit token), de-duplicated by content, renamed,
// detached (content kept while referred to), a storage quota, the demo as one project among others, and runs that
// name their data sets and belong to their project (no fallback to the demo's data).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import geodesic from 'geographiclib-geodesic';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { bboxGapKm } from '../../server/routes/runs.ts';

let t: TestApp;
let app: TestApp['app'];
let pid: string;
let token: string;

// Invented heat-flow sites in open ocean in the northern hemisphere (about 30° N, 150° W), far from the demo.
const SITES_CSV = [
  'longitude,latitude,id,heatFlowMWm2',
  '-150.2,30.1,a1,62',
  '-150.0,30.3,a2,71',
  '-149.8,30.0,a3,66',
  '-150.1,29.8,a4,58',
  '-149.9,30.2,a5,75',
  '-150.3,30.0,a6,60',
].join('\n');

const auth = () => ({ authorization: `Bearer ${token}` });
const upload = (kind: string, body: string, type: string, extra = '', headers: Record<string, string> = auth()) =>
  app.request(`/api/projects/${pid}/datasets?kind=${kind}${extra}`, { method: 'POST', headers: { 'content-type': type, ...headers }, body });
const list = async () =>
  (await (await app.request(`/api/projects/${pid}/datasets`)).json()) as {
    datasets: { id: string; kind: string; name: string; featureCount: number; bbox: number[]; uploadedAt: string }[];
    storage: { bytes: number; limitBytes: number };
  };

beforeAll(async () => {
  t = await startTestApp('projects');
  app = t.app;
  const res = await t.post('/api/projects', { title: 'North Pacific survey' });
  expect(res.status).toBe(201);
  ({ id: pid, editToken: token } = (await res.json()) as { id: string; editToken: string });
});
afterAll(() => t.close());

describe('a project owns named data sets', () => {
  it('starts empty', async () => {
    const l = await list();
    expect(l.datasets).toEqual([]);
    expect(l.storage.bytes).toBe(0);
    expect((await (await app.request(`/api/projects/${pid}/runs`)).json()) as unknown).toEqual({ id: pid, runs: [] });
  });

  it('refuses an upload without the edit token or with a wrong one, storing nothing', async () => {
    expect((await upload('sites', SITES_CSV, 'text/csv', '', {})).status).toBe(401);
    expect((await upload('sites', SITES_CSV, 'text/csv', '', { authorization: 'Bearer wrong' })).status).toBe(403);
    expect((await list()).datasets).toHaveLength(0);
  });

  it('lists an uploaded CSV with its kind, name, feature count, bounding box and upload time', async () => {
    const res = await upload('sites', SITES_CSV, 'text/csv', '&name=Survey%20sites');
    expect(res.status).toBe(201);
    const d = (await res.json()) as { id: string; name: string; featureCount: number; bbox: number[]; deduplicated: boolean };
    expect(d).toMatchObject({ name: 'Survey sites', featureCount: 6, deduplicated: false });
    // The extent of the six rows above, read off the CSV by hand.
    expect(d.bbox).toEqual([-150.3, 29.8, -149.8, 30.3]);
    const l = await list();
    expect(l.datasets.map((x) => [x.kind, x.name, x.featureCount])).toEqual([['sites', 'Survey sites', 6]]);
    expect(Date.parse(l.datasets[0].uploadedAt)).toBeGreaterThan(Date.parse('2020-01-01'));
    expect(l.storage.bytes).toBeGreaterThan(0);
    // The content itself, by id, and the download under the project (named file).
    expect((await app.request(`/api/datasets/${d.id}`)).status).toBe(200);
    const dl = await app.request(`/api/projects/${pid}/datasets/${d.id}`);
    expect(dl.headers.get('content-disposition')).toContain('Survey-sites.geojson');
  });

  it('de-duplicates the same content uploaded again, even as GeoJSON instead of CSV', async () => {
    const fc = {
      type: 'FeatureCollection',
      features: SITES_CSV.split('\n')
        .slice(1)
        .map((line) => {
          const [lon, lat, id, q] = line.split(',');
          return { type: 'Feature', geometry: { type: 'Point', coordinates: [Number(lon), Number(lat)] }, properties: { id, heatFlowMWm2: Number(q) } };
        }),
    };
    const res = await upload('sites', JSON.stringify(fc), 'application/geo+json');
    expect(res.status).toBe(200);
    expect(((await res.json()) as { deduplicated: boolean }).deduplicated).toBe(true);
    expect((await list()).datasets).toHaveLength(1);
  });

  it('no longer lists data sets globally', async () => {
    const res = await app.request('/api/datasets');
    expect(res.status).toBe(410);
    expect(((await res.json()) as { error: { message: string } }).error.message).toContain('/api/projects/{id}/datasets');
  });

  it('renames a data set (edit token required; a name used by another data set is refused)', async () => {
    const [d] = (await list()).datasets;
    const patch = (body: unknown, headers: Record<string, string> = auth()) =>
      app.request(`/api/projects/${pid}/datasets/${d.id}`, {
        method: 'PATCH',
        headers: { 'content-type': 'application/json', ...headers },
        body: JSON.stringify(body),
      });
    expect((await patch({ name: 'x' }, {})).status).toBe(401);
    expect((await patch({ name: '' })).status).toBe(422);
    const ok = await patch({ name: 'Leg 1 heat flow' });
    expect(ok.status).toBe(200);
    expect((await list()).datasets[0].name).toBe('Leg 1 heat flow');
    const other = (await (await upload('sites', SITES_CSV.replace('62', '63'), 'text/csv', '&name=Leg%202')).json()) as { id: string };
    expect((await patch({ name: 'Leg 2' })).status).toBe(409);
    const del = await app.request(`/api/projects/${pid}/datasets/${other.id}`, { method: 'DELETE', headers: auth() });
    expect(await del.json()).toEqual({ id: other.id, detached: true, contentKept: false });
    expect((await app.request(`/api/datasets/${other.id}`)).status).toBe(404);
  });

  it('stores a model under an editable name; its own name is not part of the content', async () => {
    const model = {
      name: 'Some other region crustal model',
      surfaceTemperatureC: 10,
      layers: [
        { name: 'upper crust', bottomKm: 15, conductivityWmK: 3, heatProductionUWm3: 1.5, densityKgM3: 2700 },
        { name: 'lower crust', bottomKm: 35, conductivityWmK: 2.5, heatProductionUWm3: 0.4, densityKgM3: 2900 },
      ],
    };
    const res = await upload('model', JSON.stringify(model), 'application/json');
    expect(res.status).toBe(201);
    const d = (await res.json()) as { id: string; name: string };
    expect(d.name).toBe('Some other region crustal model');
    const stored = (await (await app.request(`/api/datasets/${d.id}`)).json()) as Record<string, unknown>;
    expect(stored.name).toBeUndefined();
    await app.request(`/api/projects/${pid}/datasets/${d.id}`, {
      method: 'PATCH',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify({ name: 'Pacific crust' }),
    });
    const dl = (await (await app.request(`/api/projects/${pid}/datasets/${d.id}`)).json()) as Record<string, unknown>;
    expect(dl.name).toBe('Pacific crust');
  });

  it('holds the demo as one project among others, with named data sets', async () => {
    const cfg = (await (await app.request('/api/config')).json()) as { demo: { projectId: string } };
    const res = await app.request(`/api/projects/${cfg.demo.projectId}/datasets`);
    const l = (await res.json()) as { datasets: { id: string; kind: string; name: string }[] };
    expect(l.datasets.map((d) => d.kind).sort()).toEqual(['faults', 'model', 'regions', 'samples', 'sites', 'wells']);
    for (const d of l.datasets) expect(d.name).not.toMatch(/^ds_|^demo-/);
    // The demo is read-only: no one holds its edit token.
    const put = await app.request(`/api/projects/${cfg.demo.projectId}/datasets?kind=sites`, {
      method: 'POST',
      headers: { 'content-type': 'text/csv', ...auth() },
      body: SITES_CSV,
    });
    expect(put.status).toBe(403);
  });
});

describe('runs name their data sets and belong to their project', () => {
  it('stops a run missing what it needs with a message saying what to add', async () => {
    const res = await app.request(`/api/projects/${pid}/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify({ realizations: 0 }),
    });
    expect(res.status).toBe(422);
    const e = (await res.json()) as { error: { code: string; message: string; details: { field: string }[] } };
    expect(e.error.code).toBe('run_needs_input');
    expect(e.error.details.map((d) => d.field)).toEqual(['sites', 'model']);
    expect(e.error.message).toContain('add heat-flow sites');
    expect(e.error.message).toContain('add a thermal model');
  });

  it("refuses a data set the project does not hold (the demo's samples are not a fallback)", async () => {
    const [sites] = (await list()).datasets.filter((d) => d.kind === 'sites');
    const model = (await list()).datasets.find((d) => d.kind === 'model')!;
    const res = await app.request(`/api/projects/${pid}/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify({ sites: sites.id, samples: 'demo-samples', model: model.id }),
    });
    expect(res.status).toBe(422);
    expect(((await res.json()) as { error: { code: string } }).error.code).toBe('dataset_not_in_project');
  });

  it('warns before starting when the data sets lie far apart', async () => {
    // The demo's faults uploaded into this project under another name.
    const faults = await app.request('/api/datasets/demo-faults');
    const up = await upload('faults', await faults.text(), 'application/geo+json', '&name=Old%20faults');
    expect(up.status).toBe(201);
    const f = (await up.json()) as { id: string };
    const l = await list();
    const sites = l.datasets.find((d) => d.kind === 'sites')!;
    const model = l.datasets.find((d) => d.kind === 'model')!;
    const res = await t.post(`/api/projects/${pid}/runs/check`, { sites: sites.id, faults: f.id, model: model.id });
    const body = (await res.json()) as { warnings: string[] };
    expect(body.warnings).toHaveLength(1);
    expect(body.warnings[0]).toMatch(/faults "Old faults" lie [\d,]+ km from the sites "Leg 1 heat flow"/);
    const km = Number(/lie ([\d,]+) km/.exec(body.warnings[0])![1].replace(/,/g, ''));
    expect(km).toBeGreaterThan(5000);
    await app.request(`/api/projects/${pid}/datasets/${f.id}`, { method: 'DELETE', headers: auth() });
  });

  it("runs with the project's own data only and lists the run under the project", async () => {
    const l = await list();
    const sites = l.datasets.find((d) => d.kind === 'sites')!;
    const model = l.datasets.find((d) => d.kind === 'model')!;
    const res = await app.request(`/api/projects/${pid}/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify({ sites: sites.id, model: model.id, interpolation: { method: 'idw' }, grid: { cellKm: 5 } }),
    });
    expect(res.status).toBe(202);
    const sub = (await res.json()) as { id: string; warnings: string[] };
    expect(sub.warnings).toEqual([]);
    const run = await t.waitEnd<{ status: string; request: Record<string, unknown>; summary: { provenance: { inputs: Record<string, string> } } }>(sub.id);
    expect(run.status).toBe('done');
    expect(JSON.stringify(run.request)).not.toContain('demo-');
    const runs = (await (await app.request(`/api/projects/${pid}/runs`)).json()) as { runs: { id: string }[] };
    expect(runs.runs.map((r) => r.id)).toEqual([sub.id]);
    // The model's provenance carries the project's name for it, not the name it was uploaded with.
    const tif = await app.request(`/api/runs/${sub.id}/layers/heat-flow.tif`);
    const text = Buffer.from(await tif.arrayBuffer()).toString('latin1');
    expect(text).toContain('Pacific crust');
    expect(text).not.toContain('Some other region');
    // A data set a run used keeps its content after it is detached.
    const del = await app.request(`/api/projects/${pid}/datasets/${sites.id}`, { method: 'DELETE', headers: auth() });
    expect(((await del.json()) as { contentKept: boolean }).contentKept).toBe(true);
    expect((await app.request(`/api/datasets/${sites.id}`)).status).toBe(200);
  }, 60_000);

  it('enforces the per-project storage quota with a 413 naming the limit, attaching nothing', async () => {
    const small = await startTestApp('quota', { limits: { maxProjectStorageBytes: 600 } });
    try {
      const p = (await (await small.post('/api/projects', { title: 'small' })).json()) as { id: string; editToken: string };
      const res = await small.app.request(`/api/projects/${p.id}/datasets?kind=sites`, {
        method: 'POST',
        headers: { 'content-type': 'text/csv', authorization: `Bearer ${p.editToken}` },
        body: SITES_CSV,
      });
      expect(res.status).toBe(413);
      const e = (await res.json()) as { error: { code: string; message: string } };
      expect(e.error.code).toBe('project_quota_exceeded');
      expect(e.error.message).toContain('600 bytes');
      const l = (await (await small.app.request(`/api/projects/${p.id}/datasets`)).json()) as { datasets: unknown[] };
      expect(l.datasets).toEqual([]);
    } finally {
      await small.close();
    }
  });
});

describe('the distance between data sets', () => {
  it('matches the geodesic distance of GeographicLib (WGS84) within 0.5 % for two points', () => {
    const a: [number, number, number, number] = [-150, 30, -150, 30];
    const b: [number, number, number, number] = [-128, -38, -128, -38];
    // Reference: GeographicLib's geodesic inverse on the WGS84 ellipsoid (Karney 2013); the sphere differs by < 0.5 %.
    const ref = geodesic.Geodesic.WGS84.Inverse(30, -150, -38, -128).s12! / 1000;
    expect(Math.abs(bboxGapKm(a, b) - ref) / ref).toBeLessThan(0.005);
    expect(bboxGapKm([-1, -1, 1, 1], [0, 0, 2, 2])).toBe(0);
    // Across the antimeridian: 179.5° E to 179.5° W on the equator is 1° of longitude, 111.2 km (R1 × π/180).
    expect(bboxGapKm([179, 0, 179.5, 0], [-179.5, 0, -179, 0])).toBeCloseTo((6371.0088 * Math.PI) / 180, 1);
  });
});
