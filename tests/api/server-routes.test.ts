// Every server route and every error code, in-process (app.request). Runs go through the real job system
// (piscina worker threads) with the run-worker test double (tests/helpers/run-worker-double.ts), whose
// behaviours (fail, crash, slow) exercise failure isolation and cancel.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { fileURLToPath } from 'node:url';
import { createApp } from '../../server/app.ts';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { loadDemo, DEMO_DIR } from '../../server/demo.ts';
import { classifyFacies, FACIES_NAMES } from '../../shared/petrology/index.ts';
import { runRequestSchema, type RunSummary } from '../../shared/schema/run.ts';
import proj4 from 'proj4';
import { DEFAULT_LIMITS, resolveLimits } from '../../server/limits.ts';
import { putDoneRun } from '../helpers/stored-runs.ts';
import { columnAtRunAnswerSchema, type ColumnAnswer } from '../../shared/schema/column.ts';

const DOUBLE = fileURLToPath(new URL('../helpers/run-worker-double.ts', import.meta.url));
let dir: string;
let store: SqliteStore;
let app: ReturnType<typeof createApp>;

const json = (body: unknown, headers: Record<string, string> = {}) => ({
  method: 'POST',
  headers: { 'content-type': 'application/json', ...headers },
  body: JSON.stringify(body),
});
const post = (path: string, body: unknown) => app.request(path, json(body));
async function errorOf(res: Response, status: number, code?: string) {
  expect(res.status).toBe(status);
  expect(res.headers.get('content-type')).toContain('application/json');
  const b = (await res.json()) as { error: { code: string; message: string; details: unknown[] } };
  expect(b.error.message.length).toBeGreaterThan(0);
  expect(Array.isArray(b.error.details)).toBe(true);
  if (code !== undefined) expect(b.error.code).toBe(code);
  return b.error;
}
async function waitDone(a: typeof app, id: string, timeoutMs = 30_000): Promise<Record<string, unknown>> {
  const t0 = Date.now();
  for (;;) {
    const r = (await (await a.request(`/api/runs/${id}`)).json()) as Record<string, unknown>;
    if (['done', 'failed', 'cancelled'].includes(r.status as string)) return r;
    if (Date.now() - t0 > timeoutMs) throw new Error(`run ${id} still ${String(r.status)}`);
    await new Promise((res) => setTimeout(res, 25));
  }
}

// Invented test sites on the equator, so that distances along a section have a closed form (see the section test).
const EQ_SITES = {
  type: 'FeatureCollection',
  features: Array.from({ length: 9 }, (_, k) => ({
    type: 'Feature',
    geometry: { type: 'Point', coordinates: [(k % 3) * 0.5, Math.floor(k / 3) * 0.5 - 0.5] },
    properties: { id: `eq-${k}`, heatFlowMWm2: 60 },
  })),
};
const EQ_FAULT = {
  type: 'FeatureCollection',
  features: [
    {
      type: 'Feature',
      geometry: {
        type: 'LineString',
        coordinates: [
          [0.25, -0.4],
          [0.25, 0.4],
        ],
      },
      properties: { id: 'f-1', kind: 'normal' },
    },
  ],
};
/** One layer, constant k and A, b = 0: T(z) = T0 + q0·z/k − A·z²/(2k) (Turcotte & Schubert 2002, eq. 4-31). */
const SIMPLE_MODEL = {
  surfaceTemperatureC: 10,
  surfaceHeatFlowMWm2: 60,
  layers: [{ name: 'crust', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2700 }],
};

let runId: string;
let eqRunId: string;

beforeAll(async () => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-routes-'));
  store = new SqliteStore(join(dir, 'db.sqlite'));
  await loadDemo(store);
  app = createApp({ store, terrain: null, clientDir: null, runWorkerFile: DOUBLE, limits: { maxQueuedRunsPerClient: 3 } });
  const r = await post('/api/runs', { sites: 'demo-sites', faults: 'demo-faults', model: 'demo-model', realizations: 50, seed: 3 });
  expect(r.status).toBe(202);
  runId = ((await r.json()) as { id: string }).id;
  expect((await waitDone(app, runId)).status).toBe('done');
}, 60_000);

afterAll(async () => {
  await app.close();
  await store.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('data sets', () => {
  it('stores GeoJSON and returns it by id (201, then 200)', async () => {
    const res = await app.request('/api/datasets?kind=sites&title=eq', {
      method: 'POST',
      headers: { 'content-type': 'application/geo+json' },
      body: JSON.stringify(EQ_SITES),
    });
    expect(res.status).toBe(201);
    const b = (await res.json()) as { id: string; kind: string; featureCount: number; warnings: string[] };
    expect(b).toMatchObject({ kind: 'sites', featureCount: 9, warnings: [] });
    const back = (await (await app.request(`/api/datasets/${b.id}`)).json()) as { features: { properties: { id: string } }[] };
    expect(back.features.map((f) => f.properties.id)).toEqual(EQ_SITES.features.map((f) => f.properties.id));
  });

  it('stores point CSV (lon,lat header) and warns about missing ids', async () => {
    const csv = 'lon,lat,heatFlowMWm2\n0,0,55\n0.5,0,65\n';
    const res = await app.request('/api/datasets?kind=sites', { method: 'POST', headers: { 'content-type': 'text/csv' }, body: csv });
    expect(res.status).toBe(201);
    const b = (await res.json()) as { featureCount: number; warnings: string[] };
    expect(b.featureCount).toBe(2);
    expect(b.warnings.join(' ')).toContain('no id');
  });

  it("stores a thermal model without its name (a name is the data set's), de-duplicated by content", async () => {
    const demo = JSON.parse(readFileSync(join(DEMO_DIR, 'model.json'), 'utf8')) as { name: string; surfaceTemperatureC: number };
    const other = { ...demo, name: 'another name', surfaceTemperatureC: demo.surfaceTemperatureC + 1 };
    const res = await post('/api/datasets?kind=model', other);
    expect(res.status).toBe(201);
    const { id } = (await res.json()) as { id: string };
    const rec = (await store.listDatasets()).find((d) => d.id === id)!;
    expect(rec.title).toBe('another name');
    const body = (await (await app.request(`/api/datasets/${id}`)).json()) as Record<string, unknown>;
    expect(body.name).toBeUndefined();
    expect((body.layers as unknown[]).length).toBe(4);
    // The demo model's own content under another name is the demo model, not a second copy.
    const again = await post('/api/datasets?kind=model', { ...demo, name: 'renamed' });
    expect(again.status).toBe(200);
    expect((await again.json()) as { id: string; deduplicated: boolean }).toMatchObject({ id: 'demo-model', deduplicated: true });
  });

  it('names the feature, field and problem of rejected input (422)', async () => {
    const bad = {
      type: 'FeatureCollection',
      features: [{ type: 'Feature', geometry: { type: 'Point', coordinates: [0, 0] }, properties: { id: 'x', heatFlowMWm2: -5 } }],
    };
    const e = await errorOf(await post('/api/datasets?kind=sites', bad), 422, 'invalid_features');
    expect(e.details[0]).toMatchObject({ feature: '0 (x)', field: 'properties.heatFlowMWm2' });
  });

  it('answers bad kinds, media types and bodies with 400/415', async () => {
    await errorOf(await post('/api/datasets?kind=rocks', EQ_SITES), 400, 'bad_query');
    await errorOf(await post('/api/datasets', EQ_SITES), 400, 'bad_query');
    await errorOf(
      await app.request('/api/datasets?kind=sites', { method: 'POST', headers: { 'content-type': 'text/plain' }, body: 'x' }),
      415,
      'unsupported_media_type',
    );
    await errorOf(
      await app.request('/api/datasets?kind=faults', { method: 'POST', headers: { 'content-type': 'text/csv' }, body: 'lon,lat\n0,0\n' }),
      415,
      'bad_csv',
    );
    await errorOf(await app.request('/api/datasets?kind=model', { method: 'POST', headers: { 'content-type': 'text/csv' }, body: 'lon,lat\n0,0\n' }), 415);
    await errorOf(
      await app.request('/api/datasets?kind=sites', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{"type":' }),
      400,
      'bad_json',
    );
    await errorOf(
      await app.request('/api/datasets?kind=sites', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '' }),
      400,
      'empty_body',
    );
    await errorOf(await post('/api/datasets?kind=model', { surfaceTemperatureC: 10, layers: [] }), 422, 'invalid_model');
  });

  it('enforces the feature and body limits with 413', async () => {
    const small = createApp({ store, terrain: null, clientDir: null, runWorkerFile: DOUBLE, limits: { maxFeatures: 5, maxBodyBytes: 2000 } });
    await errorOf(await small.request('/api/datasets?kind=sites', json(EQ_SITES)), 413, 'too_many_features');
    const big = { ...EQ_SITES, padding: 'x'.repeat(3000) };
    const e = await errorOf(await small.request('/api/datasets?kind=sites', json(big)), 413, 'body_too_large');
    expect(e.message).toContain('2000 bytes');
    await small.close();
  });
});

describe('runs', () => {
  it('reports a finished run with its layers and their URLs', async () => {
    const r = (await (await app.request(`/api/runs/${runId}`)).json()) as {
      status: string;
      progress: number;
      layers: { name: string; urls: Record<string, string> }[];
      summary: RunSummary;
    };
    expect(r.status).toBe('done');
    expect(r.progress).toBe(1);
    expect(r.summary.provenance.inputs.sites).toBe('260 sites');
    const hf = r.layers.find((l) => l.name === 'heat-flow')!;
    expect(hf.urls.tif).toBe(`/api/runs/${runId}/layers/heat-flow.tif`);
  });

  it('serves layer files with their content types, and 404/400 JSON otherwise', async () => {
    const tif = await app.request(`/api/runs/${runId}/layers/heat-flow.tif`);
    expect(tif.status).toBe(200);
    expect(tif.headers.get('content-type')).toBe('image/tiff');
    const bytes = new Uint8Array(await tif.arrayBuffer());
    // TIFF 6.0 §2 header: "II" 42 (little-endian) or "MM" 42 (big-endian).
    expect([
      [0x49, 0x49, 0x2a, 0x00],
      [0x4d, 0x4d, 0x00, 0x2a],
    ]).toContainEqual([...bytes.subarray(0, 4)]);
    const etag = tif.headers.get('etag')!;
    expect((await app.request(`/api/runs/${runId}/layers/heat-flow.tif`, { headers: { 'if-none-match': etag } })).status).toBe(304);
    expect((await app.request(`/api/runs/${runId}/layers/heat-flow.csv`)).headers.get('content-type')).toContain('text/csv');
    expect((await app.request(`/api/runs/${runId}/layers/isograds.geojson`)).headers.get('content-type')).toBe('application/geo+json');
    await errorOf(await app.request(`/api/runs/${runId}/layers/heat-flow.png`), 404, 'layer_not_found');
    await errorOf(await app.request(`/api/runs/${runId}/layers/heat-flow.exe`), 400, 'bad_layer_format');
    await errorOf(await app.request(`/api/runs/${runId}/layers/noext`), 400, 'bad_layer_format');
    await errorOf(await app.request('/api/runs/run_nope/layers/heat-flow.tif'), 404, 'run_not_found');
    await errorOf(await app.request('/api/runs/run_nope'), 404, 'run_not_found');
    await errorOf(await app.request('/api/runs/bad%20id'), 400, 'bad_url'); // a malformed id names nothing
  });

  it('returns the cached run (200, same id) for the same inputs, and a new run when an input changes', async () => {
    const again = await post('/api/runs', { seed: 3, realizations: 50, model: 'demo-model', faults: 'demo-faults', sites: 'demo-sites' });
    expect(again.status).toBe(200);
    expect(await again.json()).toMatchObject({ id: runId, cached: true, status: 'done' });
    const other = await post('/api/runs', { sites: 'demo-sites', faults: 'demo-faults', model: 'demo-model', realizations: 50, seed: 4 });
    expect(other.status).toBe(202);
    const id = ((await other.json()) as { id: string }).id;
    expect(id).not.toBe(runId);
    await waitDone(app, id);
  });

  it('streams real progress as Server-Sent Events, ending with the final state', async () => {
    const r = await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 11 });
    const { id } = (await r.json()) as { id: string };
    const res = await app.request(`/api/runs/${id}/events`);
    expect(res.headers.get('content-type')).toContain('text/event-stream');
    const text = await res.text(); // the stream closes itself when the run ends
    const events = [...text.matchAll(/event: (\w+)\ndata: (.*)\n/g)].map((m) => ({
      event: m[1],
      data: JSON.parse(m[2]) as { status: string; progress: number; message: string },
    }));
    const progress = events.filter((e) => e.event === 'progress' && e.data.status === 'running').map((e) => e.data.progress);
    expect(progress.length).toBeGreaterThan(10); // 40 steps of the slow double, some coalesced
    for (let i = 1; i < progress.length; i++) expect(progress[i]).toBeGreaterThanOrEqual(progress[i - 1]);
    expect(events.some((e) => /tile \d+ of 40/.test(e.data.message))).toBe(true);
    expect(events.at(-1)).toMatchObject({ event: 'end', data: { status: 'done', progress: 1 } });
    // A finished run's stream is one end event.
    const done = await (await app.request(`/api/runs/${id}/events`)).text();
    expect(done.match(/event: end/g)?.length).toBe(1);
    await errorOf(await app.request('/api/runs/run_nope/events'), 404, 'run_not_found');
  });

  it('cancels a running run (its worker thread is stopped) and a queued one; a finished run answers 409', async () => {
    const ra = (await (await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 21 })).json()) as {
      id: string;
      runToken: string;
    };
    const rb = (await (await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 22 })).json()) as {
      id: string;
      runToken: string;
    };
    const a = ra.id,
      b = rb.id;
    const bearer = (t: string) => ({ authorization: `Bearer ${t}` });
    // Wait until a is running with some progress; b waits in the queue (one run at a time).
    for (let i = 0; i < 400; i++) {
      const s = (await (await app.request(`/api/runs/${a}`)).json()) as { status: string; progress: number };
      if (s.status === 'running' && s.progress > 0.1) break;
      await new Promise((res) => setTimeout(res, 20));
    }
    expect(((await (await app.request(`/api/runs/${b}`)).json()) as { status: string }).status).toBe('queued');
    // Without a token 401; with another run's token 403; with its own run token it is cancelled.
    await errorOf(await app.request(`/api/runs/${b}`, { method: 'DELETE' }), 401, 'token_required');
    await errorOf(await app.request(`/api/runs/${b}`, { method: 'DELETE', headers: bearer(ra.runToken) }), 403, 'forbidden');
    expect(await (await app.request(`/api/runs/${b}`, { method: 'DELETE', headers: bearer(rb.runToken) })).json()).toMatchObject({ status: 'cancelled' });
    expect(await (await app.request(`/api/runs/${a}`, { method: 'DELETE', headers: bearer(ra.runToken) })).json()).toMatchObject({ status: 'cancelled' });
    const fa = await waitDone(app, a);
    expect(fa.status).toBe('cancelled');
    expect(fa.progress as number).toBeLessThan(1);
    expect((await waitDone(app, b)).status).toBe('cancelled');
    await errorOf(await app.request(`/api/runs/${runId}`, { method: 'DELETE' }), 409, 'run_finished');
    await errorOf(await app.request('/api/runs/run_nope', { method: 'DELETE' }), 404, 'run_not_found');
    // A cancelled run is not a cache hit: the same request runs again.
    const again = await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 22 });
    expect(again.status).toBe(202);
    const ag = (await again.json()) as { id: string; runToken: string };
    await app.request(`/api/runs/${ag.id}`, { method: 'DELETE', headers: bearer(ag.runToken) });
    await app.jobs.idle();
  });

  it('isolates failures: a throwing run and a crashing worker thread fail alone, the next run completes', async () => {
    const f = ((await (await post('/api/runs', { title: 'fail', sites: 'demo-sites', model: 'demo-model' })).json()) as { id: string }).id;
    const c = ((await (await post('/api/runs', { title: 'crash', sites: 'demo-sites', model: 'demo-model' })).json()) as { id: string }).id;
    const ok = ((await (await post('/api/runs', { title: 'after', sites: 'demo-sites', model: 'demo-model' })).json()) as { id: string }).id;
    const rf = await waitDone(app, f);
    expect(rf.status).toBe('failed');
    expect(rf.message).toContain('asked to fail');
    expect((await waitDone(app, c)).status).toBe('failed');
    expect((await waitDone(app, ok)).status).toBe('done');
    expect((await app.request('/api/health')).status).toBe(200);
  });

  it('limits runs in flight per client (429)', async () => {
    const ids: { id: string; runToken: string }[] = [];
    for (let k = 0; k < 3; k++)
      ids.push(
        (await (await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 100 + k })).json()) as {
          id: string;
          runToken: string;
        },
      );
    const e = await errorOf(await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 199 }), 429, 'too_many_runs');
    expect(e.message).toContain('maxQueuedRunsPerClient = 3');
    for (const r of ids) await app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${r.runToken}` } });
    await app.jobs.idle();
  });

  it('rejects bad run requests: 422 invalid, 404 missing data set, 422 wrong kind or bad model, 422 grid too large, 415', async () => {
    await errorOf(await post('/api/runs', { model: 'demo-model' }), 422, 'run_needs_input');
    await errorOf(await post('/api/runs', { sites: 7, model: 'demo-model' }), 422, 'invalid_run');
    await errorOf(await post('/api/runs', { sites: 'nope', model: 'demo-model' }), 404, 'dataset_not_found');
    await errorOf(await post('/api/runs', { sites: 'demo-faults', model: 'demo-model' }), 422, 'wrong_dataset_kind');
    await errorOf(await post('/api/runs', { sites: 'demo-sites', model: 'demo-sites' }), 422, 'wrong_dataset_kind');
    await errorOf(await post('/api/runs', { sites: 'demo-sites', model: { surfaceTemperatureC: 10, layers: [{ bottomKm: 10 }] } }), 422, 'invalid_model');
    const e = await errorOf(await post('/api/runs', { sites: 'demo-sites', model: 'demo-model', grid: { cellKm: 0.001 } }), 422, 'grid_too_large');
    expect(e.message).toContain('25,000,000');
    await errorOf(await post('/api/runs', { sites: 'demo-sites', model: 'demo-model', grid: { size: [6000, 6000] } }), 422, 'grid_too_large');
    await errorOf(await app.request('/api/runs', { method: 'POST', headers: { 'content-type': 'text/plain' }, body: '{}' }), 415, 'unsupported_media_type');
  });

  it('answers 503 when the server has no run worker', async () => {
    const none = createApp({ store, terrain: null, clientDir: null, runWorkerFile: join(dir, 'missing-worker.ts') });
    await errorOf(await none.request('/api/runs', json({ sites: 'demo-sites', model: 'demo-model', seed: 999 })), 503, 'runs_unavailable');
    await none.close();
  });
});

describe('column', () => {
  it('matches the closed-form geotherm for a one-layer model (Turcotte & Schubert 2002, eq. 4-31)', async () => {
    const res = await post('/api/column', { model: SIMPLE_MODEL, heatFlowMWm2: 60, depthsKm: [10], isothermsC: [230], stepKm: 1, maxDepthKm: 30 });
    expect(res.status).toBe(200);
    const b = (await res.json()) as {
      temperatureAtDepthsC: Record<string, number>;
      isothermDepthsKm: Record<string, number>;
      profile: { depthKm: number; temperatureC: number; pressureMPa: number; facies: string | null }[];
    };
    // T(10 km) = 10 + 60e-3·1e4/2.5 − 1e-6·1e8/(2·2.5) = 10 + 240 − 20 = 230 °C.
    expect(b.temperatureAtDepthsC['10']).toBeCloseTo(230, 3);
    expect(b.isothermDepthsKm['230']).toBeCloseTo(10, 3);
    // Lithostatic pressure ρ·g·z = 2700 · 9.81 · 10 000 m = 264.87 MPa (g = 9.81 m/s², the engine's default).
    expect(b.profile[10].pressureMPa).toBeCloseTo(264.87, 1);
    expect(b.profile).toHaveLength(31);
    expect(b.profile[10].facies).toBe(classifyFacies(230, 2.6487).facies);
  });

  it('reads the heat flow of a run at a point, and gives the P10–P90 band of a run with realizations', async () => {
    const grid = (await store.getRunGrid(runId, 'heatFlow'))!;
    const lon = grid.meta.west + grid.meta.dx * 5.5,
      lat = grid.meta.north - grid.meta.dy * 7.5; // a cell centre
    const res = await post('/api/column', { runId, lon, lat });
    expect(res.status).toBe(200);
    const b = (await res.json()) as ColumnAnswer;
    expect(b.surfaceHeatFlowMWm2).toBeCloseTo(grid.values[7 * grid.meta.width + 5], 3);
    expect(b.heatFlowSdMWm2).toBe(5);
    expect(columnAtRunAnswerSchema.parse(b)).toEqual(b); // the typed contract, exactly
    expect(b.monteCarlo!.realizations).toBe(200);
    const k = 20; // 10 km at the default 0.5-km step
    const t = b.monteCarlo!.profileTemperatureC![k];
    expect(b.profile[k].depthKm).toBe(10);
    expect(t.p10!).toBeLessThan(t.p50!);
    expect(t.p50!).toBeLessThan(t.p90!);
    // Each uncertain number is { p10, p50, p90, mean, sd, stderrP50 } (DESIGN §4).
    expect(Object.keys(b.isothermDepthsKm['300'] as object).sort()).toEqual(['mean', 'p10', 'p50', 'p90', 'sd', 'stderrP50']);
    // Same answer on a repeated click (seeded by the run's seed).
    expect(await (await post('/api/column', { runId, lon, lat })).json()).toEqual(b);
  });

  it('answers column errors: 404 run or model, 409 unfinished run, 422 off the grid or no heat flow or bad body', async () => {
    await errorOf(await post('/api/column', { runId: 'run_nope', lon: 0, lat: 0 }), 404, 'run_not_found');
    await errorOf(await post('/api/column', { runId, lon: 10, lat: 10 }), 422, 'no_data_here');
    await errorOf(await post('/api/column', { runId, lon: 200, lat: 0 }), 422, 'invalid_column');
    await errorOf(await post('/api/column', { model: 'nope', heatFlowMWm2: 60 }), 404, 'dataset_not_found');
    await errorOf(await post('/api/column', { model: 'demo-sites', heatFlowMWm2: 60 }), 422, 'wrong_dataset_kind');
    await errorOf(await post('/api/column', { model: { ...SIMPLE_MODEL, surfaceHeatFlowMWm2: undefined } }), 422, 'missing_heat_flow');
    await errorOf(await post('/api/column', { model: 'demo-model', heatFlowMWm2: 60, stepKm: 0.001 }), 422, 'invalid_column');
    await errorOf(await post('/api/column', { model: 'demo-model', heatFlowMWm2: 60, extra: 1 }), 422, 'invalid_column');
    const slowRun = (await (await post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 301 })).json()) as {
      id: string;
      runToken: string;
    };
    const slow = slowRun.id;
    await errorOf(await post('/api/column', { runId: slow, lon: 0, lat: 0 }), 409, 'run_not_done');
    await app.request(`/api/runs/${slow}`, { method: 'DELETE', headers: { authorization: `Bearer ${slowRun.runToken}` } });
    await app.jobs.idle();
  });
});

describe('runs stored by another server', () => {
  const putRun = (id: string, grids: string[]) =>
    putDoneRun(store, id, { request: runRequestSchema.parse({ sites: 'demo-sites', model: 'demo-model' }), model: null, grids });

  it('samples a grid in a projected CRS (EPSG:3857) at a WGS84 point', async () => {
    // Web Mercator by proj4 (the reference library) puts the point at the centre of cell (col 4, row 6).
    const [x, y] = proj4('EPSG:4326', 'EPSG:3857', [-128.2, -38.0]);
    const dx = 2000,
      width = 10,
      height = 10;
    const values = Float32Array.from({ length: width * height }, (_, k) => 50 + k * 0.25);
    await putRun('run_mercator', ['heatFlow']);
    await store.putRunGrid(
      'run_mercator',
      'heatFlow',
      { width, height, west: x - 4.5 * dx, north: y + 6.5 * dx, dx, dy: dx, crs: 'EPSG:3857', units: 'mW/m²' },
      await store.putBlob(new Uint8Array(values.buffer)),
    );
    const b = (await (await post('/api/column', { runId: 'run_mercator', lon: -128.2, lat: -38.0 })).json()) as ColumnAnswer;
    expect(b.surfaceHeatFlowMWm2).toBeCloseTo(values[6 * width + 4], 3);
    expect(b.monteCarlo).toBeNull(); // the run asked for no realizations
  });

  it('answers 409 for a finished run without a heat-flow grid', async () => {
    await putRun('run_gridless', []);
    await errorOf(await post('/api/column', { runId: 'run_gridless', lon: 0, lat: 0 }), 409, 'run_without_grid');
    await errorOf(
      await post('/api/section', {
        runId: 'run_gridless',
        line: [
          [0, 0],
          [1, 0],
        ],
      }),
      409,
      'run_without_grid',
    );
  });

  it('marks runs left queued or running by a stopped server as failed on start', async () => {
    await putDoneRun(store, 'run_orphan', {
      cacheKey: 'key-orphan',
      request: {},
      status: 'running',
      progress: 0.4,
      message: 'tile 3',
      summary: null,
      model: null,
      client: 'x',
    });
    const restarted = createApp({ store, terrain: null, clientDir: null, runWorkerFile: DOUBLE });
    await restarted.jobs.ready;
    const r = (await (await restarted.request('/api/runs/run_orphan')).json()) as { status: string; message: string };
    expect(r.status).toBe('failed');
    expect(r.message).toContain('server stopped');
    await restarted.close();
    // A closed job system takes no more runs.
    await errorOf(await restarted.request('/api/runs', json({ sites: 'demo-sites', model: 'demo-model', seed: 77 })), 503, 'shutting_down');
  });
});

describe('section', () => {
  beforeAll(async () => {
    const s = (await (await app.request('/api/datasets?kind=sites', json(EQ_SITES))).json()) as { id: string };
    const f = (await (await app.request('/api/datasets?kind=faults', json(EQ_FAULT))).json()) as { id: string };
    const r = await post('/api/runs', { sites: s.id, faults: f.id, model: SIMPLE_MODEL, grid: { bbox: [0, -0.5, 1, 0.5], size: [20, 20] }, isothermsC: [230] });
    eqRunId = ((await r.json()) as { id: string }).id;
    expect((await waitDone(app, eqRunId)).status).toBe('done');
  });

  it('gives a distance × depth temperature grid, isotherm curves, facies and fault/isograd crossings', async () => {
    const res = await post('/api/section', {
      runId: eqRunId,
      line: [
        [0.05, 0],
        [0.95, 0],
      ],
      maxDepthKm: 20,
      samples: 91,
      depthSamples: 21,
    });
    expect(res.status).toBe(200);
    const b = (await res.json()) as {
      lengthKm: number;
      width: number;
      height: number;
      distanceKm: number[];
      depthKm: number[];
      temperatureC: (number | null)[];
      faciesClass: number[];
      isotherms: { temperatureC: number; depthKm: (number | null)[] }[];
      faultCrossings: { id: string; distanceKm: number }[];
      isogradCrossings: { id: string; distanceKm: number; properties: { zone: string } }[];
    };
    // On the equator a geodesic is the equator itself: length = a·Δλ = 6378.137 km · 0.9° · π/180 = 100.1875 km (WGS84 a).
    expect(b.lengthKm).toBeCloseTo(100.1875, 2);
    expect(b.width).toBe(91);
    expect(b.height).toBe(21);
    expect(b.temperatureC).toHaveLength(91 * 21);
    expect(b.distanceKm.at(-1)).toBeCloseTo(b.lengthKm, 6);
    // Uniform 60 mW/m² (every site is 60): row 10 is 10 km, 230 °C by eq. 4-31; the 230 °C isotherm at 10 km.
    for (const j of [0, 45, 90]) {
      expect(b.temperatureC[10 * 91 + j]).toBeCloseTo(230, 1);
      expect(b.isotherms[0].depthKm[j]).toBeCloseTo(10, 2);
      expect(b.temperatureC[j]).toBeCloseTo(10, 6); // the surface row
    }
    expect(b.faciesClass[10 * 91]).toBe(FACIES_NAMES.indexOf(classifyFacies(230, 2.6487).facies!));
    // The fault at lon 0.25 and the double's isograd at lon 0.5: a·(0.25 − 0.05)·π/180 and a·0.45·π/180.
    expect(b.faultCrossings).toHaveLength(1);
    expect(b.faultCrossings[0]).toMatchObject({ id: 'f-1' });
    expect(b.faultCrossings[0].distanceKm).toBeCloseTo((6378.137 * 0.2 * Math.PI) / 180, 2);
    expect(b.isogradCrossings).toHaveLength(1);
    expect(b.isogradCrossings[0].properties.zone).toBe('garnet');
    expect(b.isogradCrossings[0].distanceKm).toBeCloseTo((6378.137 * 0.45 * Math.PI) / 180, 2);
  });

  it('agrees with the column inspector at a point of the line', async () => {
    const sec = (await (
      await post('/api/section', {
        runId,
        line: [
          [-128.3, -38.1],
          [-127.9, -37.8],
        ],
        maxDepthKm: 30,
        samples: 11,
        depthSamples: 31,
      })
    ).json()) as { positions: [number, number][]; temperatureC: (number | null)[] };
    const [lon, lat] = sec.positions[5];
    const col = (await (await post('/api/column', { runId, lon, lat, stepKm: 1, maxDepthKm: 30 })).json()) as { profile: { temperatureC: number }[] };
    expect(sec.temperatureC[20 * 11 + 5]).toBeCloseTo(col.profile[20].temperatureC, 1);
  });

  it('answers section errors with 404/409/422', async () => {
    await errorOf(
      await post('/api/section', {
        runId: 'run_nope',
        line: [
          [0, 0],
          [1, 0],
        ],
      }),
      404,
      'run_not_found',
    );
    await errorOf(await post('/api/section', { runId, line: [[0, 0]] }), 422, 'invalid_section');
    await errorOf(
      await post('/api/section', {
        runId,
        line: [
          [0, 0],
          [1, 95],
        ],
      }),
      422,
      'invalid_section',
    );
    await errorOf(
      await post('/api/section', {
        runId,
        line: [
          [0, 0],
          [1, 0],
        ],
        samples: 5000,
      }),
      422,
      'invalid_section',
    );
    await errorOf(
      await post('/api/section', {
        runId,
        line: [
          [-128, -38],
          [-128, -38],
        ],
      }),
      422,
      'invalid_section',
    );
    await errorOf(
      await post('/api/section', {
        runId,
        line: [
          [0, 0],
          [1, 0],
        ],
        samples: 1000,
        depthSamples: 500,
      }),
      422,
      'invalid_section',
    );
    const failed = ((await (await post('/api/runs', { title: 'fail', sites: 'demo-sites', model: 'demo-model', seed: 401 })).json()) as { id: string }).id;
    await waitDone(app, failed);
    await errorOf(
      await post('/api/section', {
        runId: failed,
        line: [
          [0, 0],
          [1, 0],
        ],
      }),
      409,
      'run_not_done',
    );
  });
});

describe('projects', () => {
  let id: string, token: string;
  beforeAll(async () => {
    const res = await post('/api/projects', { title: 'Orrindel survey', state: { view: { center: [-128, -38], zoom: 8 }, layers: ['heat-flow'] } });
    expect(res.status).toBe(201);
    const b = (await res.json()) as { id: string; editToken: string; viewUrl: string; editUrl: string; revision: number };
    ({ id, editToken: token } = b);
    expect(b.revision).toBe(1);
    expect(b.viewUrl).toBe(`/p/${id}`);
    expect(b.editUrl).toBe(`/p/${id}#edit=${token}`); // the token rides in the fragment, never a query string
    expect(Buffer.from(token, 'base64url').length).toBeGreaterThanOrEqual(16); // ≥ 128 bits
  });

  it('reads a project without its token; the view link cannot write, nor a wrong token', async () => {
    const res = await app.request(`/api/projects/${id}`);
    const text = await res.text();
    expect(text).not.toContain(token);
    expect(JSON.parse(text)).toMatchObject({ id, title: 'Orrindel survey', revision: 1, state: { layers: ['heat-flow'] } });
    const put = (auth?: string) =>
      app.request(`/api/projects/${id}`, {
        method: 'PUT',
        headers: { 'content-type': 'application/json', ...(auth ? { authorization: auth } : {}) },
        body: JSON.stringify({ state: { x: 1 } }),
      });
    const e401 = await put();
    expect(e401.headers.get('www-authenticate')).toContain('Bearer');
    await errorOf(e401, 401, 'unauthorized');
    await errorOf(await put('Basic abc'), 401, 'unauthorized');
    await errorOf(await put(`Bearer ${token.slice(0, -2)}xx`), 403, 'forbidden');
    const other = (await (await post('/api/projects', { title: 'other', state: {} })).json()) as { editToken: string };
    await errorOf(await put(`Bearer ${other.editToken}`), 403, 'forbidden');
    expect(((await (await app.request(`/api/projects/${id}`)).json()) as { revision: number }).revision).toBe(1);
  });

  it('appends revisions on each save and serves any of them', async () => {
    const put = (body: unknown) =>
      app.request(`/api/projects/${id}`, {
        method: 'PUT',
        headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
        body: JSON.stringify(body),
      });
    expect(await (await put({ state: { step: 2 } })).json()).toEqual({ id, revision: 2 });
    expect(await (await put({ title: 'Renamed', state: { step: 3 } })).json()).toEqual({ id, revision: 3 });
    const head = (await (await app.request(`/api/projects/${id}`)).json()) as { title: string; state: unknown; revision: number };
    expect(head).toMatchObject({ title: 'Renamed', state: { step: 3 }, revision: 3 });
    const r1 = (await (await app.request(`/api/projects/${id}?revision=1`)).json()) as { title: string; state: { layers: string[] } };
    expect(r1).toMatchObject({ title: 'Orrindel survey', state: { layers: ['heat-flow'] } });
    const listRes = await app.request(`/api/projects/${id}/revisions`);
    const listText = await listRes.text();
    expect(listText).not.toContain(token);
    const list = JSON.parse(listText) as { revisions: { revision: number; title: string }[] };
    expect(list.revisions.map((r) => [r.revision, r.title])).toEqual([
      [1, 'Orrindel survey'],
      [2, 'Orrindel survey'],
      [3, 'Renamed'],
    ]);
    await errorOf(await app.request(`/api/projects/${id}?revision=9`), 404, 'revision_not_found');
    await errorOf(await app.request(`/api/projects/${id}?revision=abc`), 400, 'bad_query');
    await errorOf(await app.request('/api/projects/nope'), 404, 'project_not_found');
    await errorOf(await app.request('/api/projects/nope/revisions'), 404, 'project_not_found');
    await errorOf(
      await app.request('/api/projects/nope', { method: 'PUT', headers: { authorization: `Bearer ${token}` }, body: '{}' }),
      404,
      'project_not_found',
    );
    await errorOf(await put({ state: 'not an object' }), 422, 'invalid_project');
    await errorOf(await put({}), 422, 'invalid_project');
  });

  it('keeps revision rows immutable in the database itself', async () => {
    expect(() => store.db.prepare('UPDATE project_revisions SET state = ? WHERE project_id = ?').run('{}', id)).toThrow(/append-only/);
    expect(() => store.db.prepare('DELETE FROM project_revisions WHERE project_id = ?').run(id)).toThrow(/append-only/);
    expect(() =>
      store.db.prepare("INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES (?, 1, 't', '{}', 'now')").run(id),
    ).toThrow(/UNIQUE/);
    const hash = (await store.getProjectTokenHash(id))!;
    expect(hash).toMatch(/^[0-9a-f]{64}$/);
    expect(JSON.stringify(store.db.prepare('SELECT * FROM projects').all())).not.toContain(token);
  });

  it('rejects too deep (422) and too large (413) states, and bad bodies', async () => {
    const nest = (n: number) => {
      let v: unknown = 1;
      for (let i = 0; i < n; i++) v = { d: v };
      return v;
    };
    await errorOf(await post('/api/projects', { title: 't', state: nest(80) }), 422, 'state_too_deep'); // limit 64
    await errorOf(await post('/api/projects', { title: 't', state: nest(500) }), 422, 'too_deep'); // any body: limit 100
    await errorOf(await post('/api/projects', { title: 't', state: { big: 'x'.repeat(2.5 * 1024 * 1024) } }), 413, 'state_too_large');
    await errorOf(await post('/api/projects', { title: '', state: {} }), 422, 'invalid_project');
    await errorOf(await post('/api/projects', { title: 't', state: [] }), 422, 'invalid_project');
    await errorOf(await app.request('/api/projects', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{' }), 400, 'bad_json');
  });
});

describe('limits', () => {
  it('has the documented defaults, taken from options first, then the environment', () => {
    expect(app.limits.maxBodyBytes).toBe(50 * 1024 * 1024);
    expect(resolveLimits({}, {})).toEqual(DEFAULT_LIMITS);
    expect(DEFAULT_LIMITS).toMatchObject({ maxFeatures: 200_000, maxGridCells: 25_000_000, maxQueuedRunsPerClient: 5, runConcurrency: 1 });
    const l = resolveLimits({ maxFeatures: 10 }, { SUBTHERM_MAX_FEATURES: '20', SUBTHERM_RUN_CONCURRENCY: '2', SUBTHERM_MAX_BODY_BYTES: ' ' });
    expect(l).toMatchObject({ maxFeatures: 10, runConcurrency: 2, maxBodyBytes: DEFAULT_LIMITS.maxBodyBytes });
    expect(() => resolveLimits({}, { SUBTHERM_MAX_GRID_CELLS: 'lots' })).toThrow(/SUBTHERM_MAX_GRID_CELLS/);
    expect(() => resolveLimits({ runConcurrency: 0 }, {})).toThrow(/runConcurrency/);
  });
});

describe('headers, OpenAPI and fallbacks', () => {
  it('sends security headers with a CSP that fits the map client', async () => {
    for (const path of ['/api/health', '/', '/p/abc']) {
      const res = await app.request(path);
      const csp = res.headers.get('content-security-policy')!;
      expect(csp).toContain("worker-src 'self' blob:");
      expect(csp).toContain("img-src 'self' data: blob:");
      expect(csp).toContain("style-src 'self' 'unsafe-inline'");
      expect(csp).toContain("connect-src 'self'");
      expect(csp).toContain("script-src 'self'");
      expect(res.headers.get('x-content-type-options')).toBe('nosniff');
      expect(res.headers.get('x-frame-options')).toBe('DENY');
    }
  });

  it('serves an OpenAPI document generated from the schemas', async () => {
    const doc = (await (await app.request('/api/openapi.json')).json()) as {
      openapi: string;
      paths: Record<string, Record<string, { requestBody?: { content: Record<string, { schema: { properties?: Record<string, unknown> } }> } }>>;
    };
    expect(doc.openapi).toBe('3.1.0');
    for (const p of ['/api/runs', '/api/column', '/api/section', '/api/projects', '/api/projects/{id}', '/api/datasets']) expect(doc.paths[p], p).toBeDefined();
    expect(Object.keys(doc.paths['/api/runs'].post.requestBody!.content['application/json'].schema.properties!)).toContain('isothermsC');
  });

  it('keeps unknown API routes JSON 404, and a wrong method too', async () => {
    await errorOf(await app.request('/api/projects', { method: 'GET' }), 404, 'not_found');
    await errorOf(await app.request('/api/column', { method: 'GET' }), 404, 'not_found');
  });
});
