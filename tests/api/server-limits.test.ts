// Every limit of server/limits.ts, just under (the request works) and just over (the named 4xx, naming the limit
// and its value). `WHERE` lists each limit with the test file that shows both sides (TypeScript makes it list
// every limit); the limits shown here are those no other file covers at their boundary.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { SPIN_SEED } from '../helpers/compute-worker-double.ts';
import { DEFAULT_LIMITS, LIMIT_ENV, type Limits } from '../../server/limits.ts';

const RUN_DOUBLE = fileURLToPath(new URL('../helpers/run-worker-double.ts', import.meta.url));
const COMPUTE_DOUBLE = fileURLToPath(new URL('../helpers/compute-worker-double.ts', import.meta.url));

/** The test file that shows each limit just under and just over. */
const WHERE: Record<keyof Limits, string> = {
  maxBodyBytes: 'server-limits.test.ts',
  maxFeatures: 'server-limits.test.ts',
  maxGridCells: 'server-limits.test.ts',
  maxRunCellRealizations: 'server-bounds.test.ts',
  maxQueuedRunsPerClient: 'server-limits.test.ts',
  maxQueuedRunsServer: 'server-bounds.test.ts',
  maxQueuedWorkPerClient: 'server-bounds.test.ts',
  maxQueuedWorkServer: 'server-bounds.test.ts',
  runWallClockSeconds: 'server-bounds.test.ts',
  // Not a bound on requests: runs beyond it wait their turn (queued, with their position).
  runConcurrency: 'server-bounds.test.ts',
  maxHeatInPlaceCellRealizations: 'server-bounds.test.ts',
  maxHeatInPlaceRealizations: 'server-bounds.test.ts',
  maxPolygonVertices: 'server-bounds.test.ts',
  heatInPlaceDeadlineSeconds: 'server-deadlines.test.ts',
  maxHeatInPlaceJobsPerClient: 'server-bounds.test.ts',
  maxHeatInPlaceJobsServer: 'server-bounds.test.ts',
  computeDeadlineSeconds: 'server-deadlines.test.ts',
  maxComputeQueue: 'server-limits.test.ts',
  maxLongComputeQueue: 'server-deadlines.test.ts',
  maxProjectStateBytes: 'server-limits.test.ts',
  maxJsonDepth: 'server-limits.test.ts',
  maxProjectStorageBytes: 'server-limits.test.ts',
  maxTerrainBytes: 'terrain-upload.test.ts',
};

type Err = { error: { code: string; message: string; details: { field?: string; problem: string }[] } };

/** Checks an over-the-limit answer: its status and code, and that it names the limit (or its variable) and the value. */
async function over(res: Response, status: number, code: string, limit: keyof Limits, value: number): Promise<void> {
  const body = (await res.json()) as Err;
  expect({ status: res.status, code: body.error?.code }).toEqual({ status, code });
  const text = JSON.stringify(body.error);
  expect(text.includes(limit) || text.includes(LIMIT_ENV[limit]), `${text} names ${limit}`).toBe(true);
  expect(text.replace(/,/g, ''), `${text} gives ${value}`).toContain(String(value));
}

describe('the list of limits', () => {
  it('names, for every limit, a test file that exercises it', () => {
    expect(Object.keys(WHERE).sort()).toEqual(Object.keys(DEFAULT_LIMITS).sort());
    for (const [limit, file] of Object.entries(WHERE)) {
      const text = readFileSync(fileURLToPath(new URL(`./${file}`, import.meta.url)), 'utf8');
      const uses = text.split(limit).length - 1 - (file === 'server-limits.test.ts' ? 1 : 0);
      expect(uses, `${file} uses ${limit}`).toBeGreaterThan(0);
    }
  });
});

describe('limits just under and just over', () => {
  const L = {
    maxBodyBytes: 4000,
    maxFeatures: 5,
    maxGridCells: 400,
    maxQueuedRunsPerClient: 2,
    maxProjectStateBytes: 1000,
    maxJsonDepth: 6,
    maxComputeQueue: 1,
    computeDeadlineSeconds: 5,
  } satisfies Partial<Limits>;
  let t: TestApp;
  beforeAll(async () => {
    t = await startTestApp('limits', { runWorkerFile: RUN_DOUBLE, computeWorkerFile: COMPUTE_DOUBLE, trustedProxies: ['local'], limits: L });
  });
  afterAll(async () => await t?.close());
  const post = (path: string, body: string, type = 'application/json', client = '10.7.0.1') =>
    t.app.request(path, { method: 'POST', headers: { 'content-type': type, 'x-forwarded-for': client }, body });

  it('maxBodyBytes: a body of exactly the limit is read, one byte more is 413', async () => {
    const sized = (n: number) => {
      const head = JSON.stringify({ title: 'Body limit', state: { notes: '' } });
      return JSON.stringify({ title: 'Body limit', state: { notes: 'x'.repeat(n - head.length) } });
    };
    // The state limit is lower than the body limit: the body is read (past the body limit's check) and refused
    // for its state, which shows that the body limit let it through.
    expect(sized(L.maxBodyBytes).length).toBe(L.maxBodyBytes);
    expect(((await (await post('/api/projects', sized(L.maxBodyBytes))).json()) as Err).error.code).toBe('state_too_large');
    await over(await post('/api/projects', sized(L.maxBodyBytes + 1)), 413, 'body_too_large', 'maxBodyBytes', L.maxBodyBytes);
  });

  it('maxProjectStateBytes: a state of exactly the limit is saved, one byte more is 413', async () => {
    const state = (n: number) => ({ notes: 'x'.repeat(n - JSON.stringify({ notes: '' }).length) });
    expect(JSON.stringify(state(L.maxProjectStateBytes)).length).toBe(L.maxProjectStateBytes);
    expect((await t.post('/api/projects', { title: 'State limit', state: state(L.maxProjectStateBytes) })).status).toBe(201);
    await over(
      await t.post('/api/projects', { title: 'State limit', state: state(L.maxProjectStateBytes + 1) }),
      413,
      'state_too_large',
      'maxProjectStateBytes',
      L.maxProjectStateBytes,
    );
  });

  it('maxJsonDepth: a state nested to the limit is saved, one level more is 422', async () => {
    // {} is one level; each { a: … } adds one.
    const nest = (levels: number): Record<string, unknown> => (levels <= 1 ? {} : { a: nest(levels - 1) });
    expect((await t.post('/api/projects', { title: 'Depth limit', state: nest(L.maxJsonDepth) })).status).toBe(201);
    await over(await t.post('/api/projects', { title: 'Depth limit', state: nest(L.maxJsonDepth + 1) }), 422, 'state_too_deep', 'maxJsonDepth', L.maxJsonDepth);
  });

  it('maxFeatures: a data set of exactly the limit is stored, one feature more is 413', async () => {
    const csv = (n: number) =>
      'longitude,latitude,id,heatFlowMWm2\n' + Array.from({ length: n }, (_, i) => `${-150 + i * 0.1},30.${i},s${i},${60 + i}`).join('\n') + '\n';
    const ok = await post('/api/datasets?kind=sites', csv(L.maxFeatures), 'text/csv');
    expect(ok.status, await ok.clone().text()).toBe(201);
    expect(((await ok.json()) as { featureCount: number }).featureCount).toBe(L.maxFeatures);
    await over(await post('/api/datasets?kind=sites', csv(L.maxFeatures + 1), 'text/csv'), 413, 'too_many_features', 'maxFeatures', L.maxFeatures);
  });

  it('maxGridCells: a run of exactly the limit is queued, one more row of cells is 422', async () => {
    const run = (size: [number, number], client: string) =>
      post('/api/runs', JSON.stringify({ title: 'grid', sites: 'demo-sites', model: 'demo-model', seed: size[1], grid: { size } }), 'application/json', client);
    const ok = await run([20, 20], '10.7.1.1');
    expect(ok.status, await ok.clone().text()).toBe(202);
    await over(await run([20, 21], '10.7.1.1'), 422, 'grid_too_large', 'maxGridCells', L.maxGridCells);
    await t.app.jobs.idle();
  });

  it('maxQueuedRunsPerClient: runs up to the limit are queued, one more is 429', async () => {
    const slow = (seed: number) =>
      post(
        '/api/runs',
        JSON.stringify({ title: 'slow', sites: 'demo-sites', model: 'demo-model', seed, grid: { size: [4, 4] } }),
        'application/json',
        '10.7.2.1',
      );
    const accepted: { id: string; runToken: string }[] = [];
    for (let i = 0; i < L.maxQueuedRunsPerClient; i++) {
      const res = await slow(100 + i);
      expect(res.status).toBe(202);
      accepted.push((await res.json()) as { id: string; runToken: string });
    }
    await over(await slow(200), 429, 'too_many_runs', 'maxQueuedRunsPerClient', L.maxQueuedRunsPerClient);
    for (const r of accepted) await t.app.request(`/api/runs/${r.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${r.runToken}` } });
    await t.app.jobs.idle();
  });

  it('maxComputeQueue: bands up to the queue limit are taken, one more is 503 at once', async () => {
    // Short bands that never finish (the compute double) fill the short pool's threads and its queue of one.
    const threads = Math.min(2, availableParallelism());
    const band = (seed: number) =>
      t.post('/api/column', { model: 'demo-model', heatFlowMWm2: 70, heatFlowSdMWm2: 5, realizations: 20, seed, maxDepthKm: 40, stepKm: 0.5 });
    const taken = Array.from({ length: threads + L.maxComputeQueue }, () => band(SPIN_SEED));
    for (let i = 0; i < 500; i++) {
      const h = (await (await t.app.request('/api/health')).json()) as { computeTasks: { short: number } };
      if (h.computeTasks.short === threads + L.maxComputeQueue) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    const refused = await band(SPIN_SEED);
    expect(refused.headers.get('retry-after')).toBe('2');
    await over(refused, 503, 'server_busy', 'maxComputeQueue', L.maxComputeQueue);
    // Those taken end at their deadline (they never finish), not refused as busy.
    for (const res of await Promise.all(taken)) expect(((await res.json()) as Err).error.code).toBe('deadline_exceeded');
  }, 120_000);
});

describe('the storage quota of a project', () => {
  const SITES = 'longitude,latitude,id,heatFlowMWm2\n-150.2,30.1,a1,62\n-150.0,30.3,a2,71\n';
  const OTHER = 'longitude,latitude,id,heatFlowMWm2\n-149.2,31.1,b1,58\n-149.0,31.3,b2,77\n';
  const upload = async (t: TestApp, p: { id: string; editToken: string }, csv: string) =>
    t.app.request(`/api/projects/${p.id}/datasets?kind=sites`, {
      method: 'POST',
      headers: { 'content-type': 'text/csv', authorization: `Bearer ${p.editToken}` },
      body: csv,
    });
  const project = async (t: TestApp) => (await (await t.post('/api/projects', { title: 'quota' })).json()) as { id: string; editToken: string };

  it('maxProjectStorageBytes: a project filled to exactly the limit takes the upload, one byte more is 413', async () => {
    // The stored size of the upload, measured on a server without a tight quota.
    let bytes: number;
    const measure = await startTestApp('quota-measure');
    try {
      const p = await project(measure);
      expect((await upload(measure, p, SITES)).status).toBe(201);
      bytes = ((await (await measure.app.request(`/api/projects/${p.id}/datasets`)).json()) as { storage: { bytes: number } }).storage.bytes;
      expect(bytes).toBeGreaterThan(0);
    } finally {
      await measure.close();
    }
    const t = await startTestApp('quota-exact', { limits: { maxProjectStorageBytes: bytes } });
    try {
      const p = await project(t);
      expect((await upload(t, p, SITES)).status).toBe(201);
      await over(await upload(t, p, OTHER), 413, 'project_quota_exceeded', 'maxProjectStorageBytes', bytes);
    } finally {
      await t.close();
    }
  });
});
