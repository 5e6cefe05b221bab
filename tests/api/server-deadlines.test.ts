// Deadlines and bounded queues of the compute pools. A task past its deadline is stopped (its thread terminated),
// answered with the mapped error (503 deadline_exceeded naming the limit, with Retry-After), and its thread is
// free for the next task; a full queue answers 503 server_busy at once with Retry-After; long work never holds a
// short column band behind it. A compute-worker double whose tasks with SPIN_SEED never return stands in for a
// stuck computation, so nothing here depends on the machine's speed.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fileURLToPath } from 'node:url';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { putDoneRun, storeHeatFlowGrids, waitJob as waitFor } from '../helpers/stored-runs.ts';
import { SPIN_SEED } from '../helpers/compute-worker-double.ts';
import { ComputePool, DeadlineError } from '../../server/runs/compute.ts';
import { columnWork, SHORT_COLUMN_WORK } from '../../server/routes/inspect.ts';
import { parseModelDocument } from '../../shared/products/model-input.ts';
import type { ColumnQuery } from '../../shared/products/column.ts';

const DOUBLE = fileURLToPath(new URL('../helpers/compute-worker-double.ts', import.meta.url));
const ROOT = new URL('../..', import.meta.url).pathname;
const demoModel = JSON.parse(readFileSync(join(ROOT, 'fixtures/demo/model.json'), 'utf8')) as Record<string, unknown>;

type Err = { error: { code: string; message: string; details: { field?: string; problem: string }[] } };

describe('a compute pool past its deadline', () => {
  it('stops the task, rejects with deadline_exceeded naming the limit, and frees its only thread', async () => {
    const pool = new ComputePool({
      name: 'test',
      threads: 1,
      maxQueue: 4,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
      workerFile: DOUBLE,
    });
    try {
      const model = parseModelDocument(demoModel, 'demo model').model;
      const query = (seed: number): ColumnQuery => ({
        model,
        heatFlowMWm2: 70,
        heatFlowSdMWm2: 5,
        isothermsC: [300],
        depthsKm: [5],
        maxDepthKm: 20,
        stepKm: 1,
        realizations: 20,
        seed,
        profileBand: true,
      });
      const stuck = pool.run({ kind: 'column', query: query(SPIN_SEED) }, 300);
      await expect(stuck).rejects.toBeInstanceOf(DeadlineError);
      await expect(stuck).rejects.toMatchObject({ code: 'deadline_exceeded', details: [{ field: 'computeDeadlineSeconds' }] });
      expect(pool.load()).toBe(0);
      // The pool has one thread; the stuck task never returns, so this answer shows that its thread was stopped.
      const next = await pool.run<{ monteCarlo: { realizations: number } }>({ kind: 'column', query: query(1) }, 120_000);
      expect(next.monteCarlo.realizations).toBe(20);
    } finally {
      await pool.close();
    }
  }, 150_000);
});

describe('deadlines and queues through the routes', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await startTestApp('deadlines', { computeWorkerFile: DOUBLE, limits: { computeDeadlineSeconds: 10, maxLongComputeQueue: 1 } });
  });
  afterAll(async () => await t?.close());

  // A long band: 2000 realizations × 4 layers × 241 depth samples = 1,928,000 > SHORT_COLUMN_WORK.
  const longColumn = (seed: number) =>
    t.post('/api/column', { model: 'demo-model', heatFlowMWm2: 70, heatFlowSdMWm2: 5, realizations: 2000, seed, maxDepthKm: 60, stepKm: 0.25 });
  const shortColumn = (seed: number) =>
    t.post('/api/column', { model: 'demo-model', heatFlowMWm2: 70, heatFlowSdMWm2: 5, realizations: 20, seed, maxDepthKm: 40, stepKm: 0.5 });

  it('classifies the bands it sends: the long one to the long pool, a map click to the short pool', () => {
    const model = parseModelDocument(demoModel, 'demo model').model;
    expect(columnWork({ model, realizations: 2000, maxDepthKm: 60, stepKm: 0.25 })).toBe(2000 * 4 * 241);
    expect(columnWork({ model, realizations: 2000, maxDepthKm: 60, stepKm: 0.25 })).toBeGreaterThan(SHORT_COLUMN_WORK);
    expect(columnWork({ model, realizations: 200, maxDepthKm: 40, stepKm: 0.5 })).toBeLessThanOrEqual(SHORT_COLUMN_WORK);
  });

  it('answers a band past its deadline with 503 deadline_exceeded and Retry-After; a full long queue with 503 server_busy at once; short bands meanwhile', async () => {
    // A first short band starts the short pool's threads. A cold start counts against the deadline too, and on a
    // crowded machine it can take longer than the deadline: warm up until a band is answered.
    let warm = 0;
    for (let i = 0; i < 10 && warm !== 200; i++) warm = (await shortColumn(2)).status;
    expect(warm).toBe(200);
    // The long pool takes one running and one waiting task; the third is refused before any work.
    const first = longColumn(SPIN_SEED);
    const second = longColumn(SPIN_SEED);
    // Wait until both are on the long pool (one running, one waiting), as /api/health reports.
    for (let i = 0; i < 500; i++) {
      const h = (await (await t.app.request('/api/health')).json()) as { computeTasks: { long: number } };
      if (h.computeTasks.long === 2) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    const third = await longColumn(SPIN_SEED);
    expect(third.status).toBe(503);
    expect(third.headers.get('retry-after')).toBe('2');
    const busy = ((await third.json()) as Err).error;
    expect(busy.code).toBe('server_busy');
    expect(busy.details[0].field).toBe('maxLongComputeQueue');
    // While the long pool is full and stuck, a short band is answered by the short pool.
    const short = await shortColumn(3);
    expect(short.status, await short.clone().text()).toBe(200);
    expect(((await short.json()) as { monteCarlo: { realizations: number } }).monteCarlo.realizations).toBe(20);
    for (const res of await Promise.all([first, second])) {
      expect(res.status).toBe(503);
      expect(res.headers.get('retry-after')).toBe('10');
      const e = ((await res.json()) as Err).error;
      expect(e.code).toBe('deadline_exceeded');
      expect(e.details[0].field).toBe('computeDeadlineSeconds');
    }
    const health = (await (await t.app.request('/api/health')).json()) as { computeTasks: { short: number; long: number } };
    expect(health.computeTasks).toMatchObject({ short: 0, long: 0 });
  }, 180_000);
});

describe('a heat-in-place job past its deadline', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await startTestApp('hip-deadline', { computeWorkerFile: DOUBLE, trustedProxies: ['local'], limits: { heatInPlaceDeadlineSeconds: 30 } });
    await putDoneRun(t.store, 'run_d', { model: demoModel });
    const meta = { width: 10, height: 10, west: -129, north: -37, dx: 0.05, dy: 0.05, crs: 'EPSG:4326', units: 'mW/m²' };
    await storeHeatFlowGrids(t.store, 'run_d', meta, new Float32Array(100).fill(75), new Float32Array(100).fill(5));
  });
  afterAll(async () => await t?.close());
  const waitJob = (url: string) => waitFor(t, url, 3000);
  const job = async (seed: number, client: string) => {
    const res = await t.app.request('/api/runs/run_d/heat-in-place', {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-forwarded-for': client },
      body: JSON.stringify({ options: { realizations: 10, seed } }),
    });
    expect(res.status).toBe(202);
    return ((await res.json()) as { url: string }).url;
  };

  // The next job's deadline includes starting a new thread in place of the stopped one: 30 s leaves room for a
  // crowded machine.
  it('fails the job with 503 deadline_exceeded naming the limit, as every deadline, and the next job runs on the freed thread', async () => {
    const stuck = await waitJob(await job(SPIN_SEED, '10.2.0.1'));
    expect(stuck.status).toBe(503);
    expect(stuck.headers.get('retry-after')).toMatch(/^\d+$/);
    const e = ((await stuck.json()) as Err).error;
    expect(e.code).toBe('deadline_exceeded');
    expect(e.details[0].field).toBe('heatInPlaceDeadlineSeconds');
    const next = await waitJob(await job(4, '10.2.0.2'));
    expect(next.status, await next.clone().text()).toBe(200);
    expect(((await next.json()) as { monteCarlo: { realizations: number } }).monteCarlo.realizations).toBe(10);
  }, 180_000);
});
