// Bounds, owners and faults of the server: every limit just under (works) and just over (a 4xx naming the limit),
// runs that start in round-robin order across clients with their queue position, run tokens for cancelling (401 /
// 403, a project's edit token), the wall-clock limit, a full database (507, reads still served, nothing half
// written), malformed URLs (400) and a database path that cannot be written (a plain message naming the path).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fileURLToPath } from 'node:url';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { putDoneRun, storeHeatFlowGrids, waitJob as waitFor } from '../helpers/stored-runs.ts';
import { openStore } from '../../server/main.ts';
import { isStorageFull } from '../../server/routes/guards.ts';
import { InputError } from '../../shared/errors.ts';
import { MODEL_BOUNDS } from '../../shared/schema/model.ts';

const DOUBLE = fileURLToPath(new URL('../helpers/run-worker-double.ts', import.meta.url));
const ROOT = new URL('../..', import.meta.url).pathname;

type Err = { error: { code: string; message: string; details: { field?: string; problem: string }[] } };
async function errorOf(res: Response, status: number, code: string): Promise<Err['error']> {
  const body = (await res.json()) as Err;
  expect({ status: res.status, code: body.error?.code }).toEqual({ status, code });
  return body.error;
}
/** A request from `client`, as a trusted reverse proxy would forward it (in-process requests come from "local"). */
const from = (client: string, token?: string) => ({
  'content-type': 'application/json',
  'x-forwarded-for': client,
  ...(token ? { authorization: `Bearer ${token}` } : {}),
});

describe('run bounds, fairness and tokens', () => {
  let t: TestApp;
  const started: { id: string; runToken: string }[] = [];
  beforeAll(async () => {
    t = await startTestApp('bounds', {
      runWorkerFile: DOUBLE,
      trustedProxies: ['local'],
      limits: {
        maxRunCellRealizations: 1000,
        maxQueuedWorkPerClient: 1500,
        maxQueuedWorkServer: 2400,
        maxQueuedRunsServer: 3,
        maxQueuedRunsPerClient: 2,
        runConcurrency: 1,
      },
    });
  });
  afterAll(async () => await t?.close());
  let seed = 0;
  const run = (client: string, realizations: number, title = 'slow') =>
    t.app.request('/api/runs', {
      method: 'POST',
      headers: from(client),
      body: JSON.stringify({ title, sites: 'demo-sites', model: 'demo-model', realizations, seed: ++seed, grid: { size: [10, 10] } }),
    });
  const accept = async (res: Response) => {
    expect(res.status).toBe(202);
    const b = (await res.json()) as { id: string; runToken: string };
    expect(b.runToken).toMatch(/^[A-Za-z0-9_-]{43}$/);
    started.push(b);
    return b;
  };

  it('checks cells × realizations per run, and work and runs in flight per client and for the server, before queuing', async () => {
    // 10 × 10 cells × 11 realizations = 1100 > maxRunCellRealizations = 1000; 10 realizations = 1000 is accepted.
    const e1 = await errorOf(await run('10.0.0.1', 11), 422, 'run_too_large');
    expect(e1.details[0].field).toBe('maxRunCellRealizations');
    expect(e1.message).toContain('1,100');
    await accept(await run('10.0.0.1', 10));
    // Client A holds 1000; 600 more = 1600 > maxQueuedWorkPerClient = 1500; 500 more = 1500 is accepted.
    expect((await errorOf(await run('10.0.0.1', 6), 429, 'too_much_work')).details[0].field).toBe('maxQueuedWorkPerClient');
    await accept(await run('10.0.0.1', 5));
    // Server holds 1500; client B's 1000 = 2500 > maxQueuedWorkServer = 2400; 900 = 2400 is accepted.
    expect((await errorOf(await run('10.0.0.2', 10), 503, 'server_busy')).details[0].field).toBe('maxQueuedWorkServer');
    await accept(await run('10.0.0.2', 9));
    // Three runs in flight = maxQueuedRunsServer: a fourth, from anyone, waits.
    expect((await errorOf(await run('10.0.0.3', 1), 503, 'server_busy')).details[0].field).toBe('maxQueuedRunsServer');
  });

  it("refuses to cancel without a token (401), with another run's token (403), and cancels with the run token", async () => {
    const [a, b] = started;
    await errorOf(await t.app.request(`/api/runs/${a.id}`, { method: 'DELETE' }), 401, 'token_required');
    await errorOf(await t.app.request(`/api/runs/${a.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${b.runToken}` } }), 403, 'forbidden');
    await errorOf(await t.app.request(`/api/runs/${a.id}`, { method: 'DELETE', headers: { authorization: 'Bearer not-a-token' } }), 403, 'forbidden');
    for (const r of started)
      expect((await t.app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${r.runToken}` } })).status).toBe(200);
    started.length = 0;
    await t.app.jobs.idle();
  });

  it('starts runs in round-robin order across clients and shows each queued run its position', async () => {
    // One run at a time (runConcurrency = 1): the others wait, queued. Client A queues two runs, then client B one:
    // B's first run starts before A's second (FIFO would make it wait).
    const a1 = await accept(await run('10.0.1.1', 1));
    const a2 = await accept(await run('10.0.1.1', 2));
    const b1 = await accept(await run('10.0.1.2', 3));
    const view = async (id: string) =>
      (await (await t.app.request(`/api/runs/${id}`)).json()) as { status: string; position?: number; estimateSeconds?: number | null };
    for (let i = 0; i < 200 && (await view(a1.id)).status !== 'running'; i++) await new Promise((r) => setTimeout(r, 20));
    expect((await view(a1.id)).status).toBe('running');
    expect(await view(a2.id)).toMatchObject({ status: 'queued', position: 1 });
    // The ring is [A, B]: a2 starts next, then b1 (position 2) ... and a third run of A would come after b1.
    expect(await view(b1.id)).toMatchObject({ status: 'queued', position: 2 });
    expect('estimateSeconds' in (await view(b1.id))).toBe(true);
    for (const r of started) await t.app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${r.runToken}` } });
    started.length = 0;
    await t.app.jobs.idle();
  });

  it('ignores X-Forwarded-For from peers that are not listed proxies', async () => {
    const plain = await startTestApp('bounds-noproxy', { runWorkerFile: DOUBLE, limits: { maxQueuedRunsPerClient: 1 } });
    try {
      const post = (xff: string, seed: number) =>
        plain.app.request('/api/runs', {
          method: 'POST',
          headers: from(xff),
          body: JSON.stringify({ title: 'slow', sites: 'demo-sites', model: 'demo-model', seed }),
        });
      const first = (await (await post('10.9.9.1', 1)).json()) as { id: string; runToken: string };
      // A different forwarded address from the same unlisted peer is the same client: over its limit of 1.
      expect((await errorOf(await post('10.9.9.2', 2), 429, 'too_many_runs')).details[0].field).toBe('maxQueuedRunsPerClient');
      await plain.app.request(`/api/runs/${first.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${first.runToken}` } });
    } finally {
      await plain.close();
    }
  });

  it("lets a project's edit token cancel the project's runs, and not another project's token", async () => {
    const mk = async (title: string) => (await (await t.post('/api/projects', { title })).json()) as { id: string; editToken: string };
    const p = await mk('Cancel survey'),
      other = await mk('Other survey');
    const up = (kind: string, body: string, type: string) =>
      t.app.request(`/api/projects/${p.id}/datasets?kind=${kind}`, {
        method: 'POST',
        headers: { 'content-type': type, authorization: `Bearer ${p.editToken}` },
        body,
      });
    const sites = (await (
      await up('sites', 'longitude,latitude,id,heatFlowMWm2\n-150.2,30.1,a1,62\n-150.0,30.3,a2,71\n-149.8,30.0,a3,66\n', 'text/csv')
    ).json()) as { id: string };
    const model = (await (await up('model', readFileSync(join(ROOT, 'fixtures/demo/model.json'), 'utf8'), 'application/json')).json()) as { id: string };
    const res = await t.app.request(`/api/projects/${p.id}/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${p.editToken}` },
      body: JSON.stringify({ title: 'slow', sites: sites.id, model: model.id }),
    });
    expect(res.status).toBe(202);
    const r = (await res.json()) as { id: string; runToken: string };
    await errorOf(await t.app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${other.editToken}` } }), 403, 'forbidden');
    expect(await (await t.app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${p.editToken}` } })).json()).toMatchObject({
      status: 'cancelled',
    });
    await t.app.jobs.idle();
  });
});

describe('heat-in-place bounds', () => {
  let t: TestApp;
  // A finished run with a 20 × 20 heat-flow grid (400 cells) and the demo model, stored as the job system would.
  beforeAll(async () => {
    t = await startTestApp('hip-bounds', {
      trustedProxies: ['local'],
      limits: {
        maxPolygonVertices: 10,
        maxHeatInPlaceRealizations: 50,
        maxHeatInPlaceCellRealizations: 400 * 40,
        maxHeatInPlaceJobsPerClient: 1,
        maxHeatInPlaceJobsServer: 2,
      },
    });
    const model = JSON.parse(readFileSync(join(ROOT, 'fixtures/demo/model.json'), 'utf8'));
    await putDoneRun(t.store, 'run_b', { model });
    const meta = { width: 20, height: 20, west: -129, north: -37, dx: 0.05, dy: 0.05, crs: 'EPSG:4326', units: 'mW/m²' };
    await storeHeatFlowGrids(t.store, 'run_b', meta, new Float32Array(400).fill(75), new Float32Array(400).fill(5));
  });
  afterAll(async () => await t?.close());
  const hip = (body: unknown, client = '10.1.0.1') =>
    t.app.request('/api/runs/run_b/heat-in-place', { method: 'POST', headers: from(client), body: JSON.stringify(body) });
  const ring = (n: number) => {
    // A closed ring of n vertices (the first repeated at the end) around a circle inside the grid.
    const pts = Array.from({ length: n - 1 }, (_, k) => [
      -128.5 + 0.3 * Math.cos((2 * Math.PI * k) / (n - 1)),
      -37.5 + 0.3 * Math.sin((2 * Math.PI * k) / (n - 1)),
    ]);
    return { type: 'Polygon', coordinates: [[...pts, pts[0]]] };
  };
  const waitJob = (url: string) => waitFor(t, url);

  it('checks vertices, realizations and cells × realizations before queuing, naming each limit', async () => {
    expect((await errorOf(await hip({ polygon: ring(11) }), 422, 'over_limit')).details[0].problem).toContain('maxPolygonVertices');
    expect((await errorOf(await hip({ options: { realizations: 51 } }), 422, 'over_limit')).details[0].problem).toContain('maxHeatInPlaceRealizations');
    // 400 cells × 41 realizations = 16,400 > 16,000.
    expect((await errorOf(await hip({ options: { realizations: 41 } }), 422, 'over_limit')).details[0].problem).toContain('maxHeatInPlaceCellRealizations');
    // Just under all three: 10 vertices, 40 realizations.
    const ok = await hip({ polygon: ring(10), options: { realizations: 40, seed: 1 } });
    expect(ok.status).toBe(202);
    const done = await waitJob(((await ok.json()) as { url: string }).url);
    expect(done.status).toBe(200);
    expect(((await done.json()) as { monteCarlo: { realizations: number } }).monteCarlo.realizations).toBe(40);
  }, 60_000);

  it('limits jobs in flight per client and for the server (429 naming the limit)', async () => {
    // Sent together, so all four arrive while the first job is still in flight.
    const [a, a2, b, c] = await Promise.all([
      hip({ options: { realizations: 40, seed: 2 } }, '10.1.0.1'),
      hip({ options: { realizations: 40, seed: 3 } }, '10.1.0.1'),
      hip({ options: { realizations: 40, seed: 4 } }, '10.1.0.2'),
      hip({ options: { realizations: 40, seed: 5 } }, '10.1.0.3'),
    ]);
    expect(a.status).toBe(202);
    expect((await errorOf(a2, 429, 'too_many_jobs')).details[0].field).toBe('maxHeatInPlaceJobsPerClient');
    expect(b.status).toBe(202);
    expect((await errorOf(c, 429, 'too_many_jobs')).details[0].field).toBe('maxHeatInPlaceJobsServer');
    for (const r of [a, b]) expect((await waitJob(((await r.json()) as { url: string }).url)).status).toBe(200);
  }, 60_000);
});

describe('the wall-clock limit of a run', () => {
  it('stops a run that runs longer and records it as failed, naming the limit', async () => {
    const t = await startTestApp('wallclock', { runWorkerFile: DOUBLE, limits: { runWallClockSeconds: 1 } });
    try {
      // The test double's "slow" run takes 40 × 50 ms = 2 s.
      const { id } = (await (await t.post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 7 })).json()) as { id: string };
      const end = await t.waitEnd(id);
      expect(end.status).toBe('failed');
      expect(end.message).toContain('runWallClockSeconds = 1 s');
    } finally {
      await t.close();
    }
    // Under the limit the same run ends done (60 s leaves room for a worker thread's cold start on a busy machine,
    // which counts against the limit).
    const roomy = await startTestApp('wallclock-roomy', { runWorkerFile: DOUBLE, limits: { runWallClockSeconds: 60 } });
    try {
      const { id } = (await (await roomy.post('/api/runs', { title: 'slow', sites: 'demo-sites', model: 'demo-model', seed: 7 })).json()) as { id: string };
      expect((await roomy.waitEnd(id)).status).toBe('done');
    } finally {
      await roomy.close();
    }
  }, 60_000);
});

describe('model bounds', () => {
  let t: TestApp;
  beforeAll(async () => (t = await startTestApp('model-bounds')));
  afterAll(async () => await t?.close());
  // A layered model in the range of the demo's (common practice: upper crust k ≈ 3 W/m/K, A ≈ 1–2 µW/m³).
  const layers = (n: number) =>
    Array.from({ length: n }, (_, i) => ({
      name: `layer ${i + 1}`,
      bottomKm: ((i + 1) * 60) / n,
      conductivityWmK: 2.8,
      heatProductionUWm3: 1,
      densityKgM3: 2750,
    }));
  const column = (model: Record<string, unknown>) => t.post('/api/column', { model: { surfaceTemperatureC: 10, ...model }, heatFlowMWm2: 65 });

  it(`takes ${MODEL_BOUNDS.maxLayers} layers and refuses one more, naming the limit`, async () => {
    expect((await column({ layers: layers(MODEL_BOUNDS.maxLayers) })).status).toBe(200);
    const e = await errorOf(await column({ layers: layers(MODEL_BOUNDS.maxLayers + 1) }), 422, 'invalid_model');
    expect(e.message).toContain('maxLayers');
  });

  it(`takes names of ${MODEL_BOUNDS.maxNameChars} characters and refuses longer ones`, async () => {
    const l = layers(2);
    expect(
      (await column({ name: 'm'.repeat(MODEL_BOUNDS.maxNameChars), layers: [{ ...l[0], name: 'n'.repeat(MODEL_BOUNDS.maxNameChars) }, l[1]] })).status,
    ).toBe(200);
    await errorOf(await column({ layers: [{ ...l[0], name: 'n'.repeat(MODEL_BOUNDS.maxNameChars + 1) }, l[1]] }), 422, 'invalid_model');
    await errorOf(await column({ name: 'm'.repeat(MODEL_BOUNDS.maxNameChars + 1), layers: l }), 422, 'invalid_model');
  });

  // Each value just inside and just outside its stated plausible range (MODEL_BOUNDS.ranges names the source).
  const cases: [string, Record<string, unknown>, Record<string, unknown>][] = [
    ['conductivityWmK', { conductivityWmK: 0.1 }, { conductivityWmK: 1e-308 }],
    ['conductivityWmK', { conductivityWmK: 10 }, { conductivityWmK: 10.5 }],
    ['heatProductionUWm3', { heatProductionUWm3: 100 }, { heatProductionUWm3: 101 }],
    ['densityKgM3', { densityKgM3: 1000 }, { densityKgM3: 999 }],
    ['densityKgM3', { densityKgM3: 4000 }, { densityKgM3: { dist: 'uniform', min: 3000, max: 4100 } }],
    ['bottomKm', { bottomKm: 700 }, { bottomKm: 1e308 }],
  ];
  for (const [field, ok, bad] of cases) {
    it(`checks ${field}: ${JSON.stringify(ok)} works, ${JSON.stringify(bad)} is refused`, async () => {
      const base = { name: 'crust', bottomKm: 40, conductivityWmK: 2.8, heatProductionUWm3: 1, densityKgM3: 2750 };
      expect((await column({ layers: [{ ...base, ...ok }] })).status).toBe(200);
      const e = await errorOf(await column({ layers: [{ ...base, ...bad }] }), 422, 'invalid_model');
      expect(e.details.some((d) => d.field === field && d.problem.includes('plausible range'))).toBe(true);
    });
  }
});

describe('storage and URL faults', () => {
  let t: TestApp;
  beforeAll(async () => (t = await startTestApp('storage')));
  afterAll(async () => await t?.close());

  it('answers a full database with 507 insufficient_storage, writes nothing, and keeps serving reads', async () => {
    const created = (await (await t.post('/api/projects', { title: 'Before the disk filled', state: { view: { zoom: 3 } } })).json()) as {
      id: string;
      editToken: string;
    };
    // SQLite's max_page_count caps the file at its current size: the next write that needs a page fails SQLITE_FULL.
    const pages = t.store.db.pragma('page_count', { simple: true }) as number;
    t.store.db.pragma(`max_page_count = ${pages}`);
    try {
      const big = { title: 'Too big', state: { notes: 'x'.repeat(200_000) } };
      const e = await errorOf(await t.post('/api/projects', big), 507, 'insufficient_storage');
      expect(e.message).not.toMatch(/at .*\.ts:\d+/);
      const put = await t.app.request(`/api/projects/${created.id}`, {
        method: 'PUT',
        headers: { 'content-type': 'application/json', authorization: `Bearer ${created.editToken}` },
        body: JSON.stringify({ state: { notes: 'y'.repeat(200_000) } }),
      });
      await errorOf(put, 507, 'insufficient_storage');
      // Reads go on: the project as it was (revision 1, nothing half written), the health probe, a data set.
      const got = (await (await t.app.request(`/api/projects/${created.id}`)).json()) as { revision: number; state: unknown };
      expect(got).toMatchObject({ revision: 1, state: { view: { zoom: 3 } } });
      expect((await t.app.request('/api/health')).status).toBe(200);
      expect((await t.app.request('/api/datasets/demo-sites')).status).toBe(200);
    } finally {
      t.store.db.pragma('max_page_count = 1073741823');
    }
  });

  it("recognizes a full store: SQLite's SQLITE_FULL, PostgreSQL's SQLSTATE 53100 disk_full, the file system's ENOSPC", () => {
    // Codes from the SQLite result-code list, PostgreSQL's Appendix A "PostgreSQL Error Codes" and errno(3).
    expect(isStorageFull({ code: 'SQLITE_FULL', message: 'database or disk is full' })).toBe(true);
    expect(isStorageFull({ code: '53100', message: 'could not extend file "base/16384/16385": No space left on device' })).toBe(true);
    expect(isStorageFull({ code: 'ENOSPC', message: 'no space left on device' })).toBe(true);
    expect(isStorageFull({ code: '53300', message: 'sorry, too many clients already' })).toBe(false);
    expect(isStorageFull(new Error('something else'))).toBe(false);
  });

  it('answers malformed percent-encoding with 400 JSON, under /api/ and elsewhere', async () => {
    for (const path of ['/%E0%A4%A', '/api/runs/%E0%A4%A', '/api/projects/%ZZ', '/p/%C3%28']) {
      const res = await t.app.request(path);
      expect(res.status, path).toBe(400);
      expect(((await res.json()) as Err).error.code).toBe('bad_url');
    }
  });

  it('answers over-long paths, segments that name nothing and malformed ids with 400 JSON, whatever the method', async () => {
    const long = 'a'.repeat(2000);
    const cases: [string, string][] = [
      [`/api/runs/${long}`, 'bad_url'],
      [`/${long}`, 'bad_url'],
      [`/api/runs/x/layers/${'b'.repeat(300)}.tif`, 'bad_url'],
      ['/api/runs/a%20b', 'bad_url'],
      ['/api/runs/a%00b/events', 'bad_url'],
      ['/api/runs/..%2F..%2Fetc%2Fpasswd', 'bad_url'],
      ['/api/runs/x//layers', 'bad_url'],
      [`/api/runs/${'r'.repeat(101)}`, 'bad_id'],
      ['/api/runs/run.1/spread?isothermC=300', 'bad_id'],
      ['/api/projects/p~1/datasets', 'bad_id'],
      ['/api/datasets/demo.sites', 'bad_id'],
    ];
    for (const [path, code] of cases) {
      for (const method of ['GET', 'DELETE', 'POST']) {
        const res = await t.app.request(path, { method, headers: { 'content-type': 'application/json' }, body: method === 'POST' ? '{}' : undefined });
        expect(res.status, `${method} ${path.slice(0, 60)}`).toBe(400);
        const e = ((await res.json()) as Err).error;
        expect(e.code, path.slice(0, 60)).toBe(code);
        expect(e.message.length).toBeLessThan(200); // the path is not echoed whole
      }
    }
    // Well-formed URLs still reach their routes.
    expect((await t.app.request('/api/datasets/demo-sites')).status).toBe(200);
    expect((await t.app.request('/api/runs/no_such-run')).status).toBe(404);
  });

  it('says in plain words which database path cannot be written, and what to do', async () => {
    // A folder that cannot be created (its parent is a file), as a read-only mount or a missing permission gives
    // (file permissions cannot be used here: the tests may run as root, whom they do not stop).
    const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-ro-'));
    writeFileSync(join(dir, 'not-a-folder'), 'x');
    const dbPath = join(dir, 'not-a-folder', 'db.sqlite');
    let err: unknown = null;
    try {
      await openStore(dbPath);
    } catch (e) {
      err = e;
    }
    rmSync(dir, { recursive: true, force: true });
    expect(err).toBeInstanceOf(InputError);
    expect((err as Error).message).toContain(dbPath);
    expect((err as Error).message).toMatch(/--db or SUBTHERM_DB/);
  });

  it('lists every limit with its value, units and environment variable, and the model bounds with sources', async () => {
    const l = (await (await t.app.request('/api/limits')).json()) as {
      limits: { name: string; value: number; units: string; env: string }[];
      model: typeof MODEL_BOUNDS;
    };
    const names = l.limits.map((x) => x.name);
    for (const n of [
      'maxRunCellRealizations',
      'maxQueuedWorkPerClient',
      'maxQueuedWorkServer',
      'maxQueuedRunsServer',
      'runWallClockSeconds',
      'maxHeatInPlaceCellRealizations',
      'maxPolygonVertices',
      'heatInPlaceDeadlineSeconds',
    ])
      expect(names).toContain(n);
    for (const x of l.limits) expect(x.env).toMatch(/^SUBTHERM_/);
    expect(l.model.maxLayers).toBe(MODEL_BOUNDS.maxLayers);
    for (const r of Object.values(l.model.ranges)) expect(r.source.length).toBeGreaterThan(10);
  });
});
