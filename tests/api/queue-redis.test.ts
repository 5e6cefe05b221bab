// The Redis run queue with real servers: a throwaway PostgreSQL cluster and redis-server, two apps (A and B) on them
// with a queue URL, and queue workers taking the runs (the run worker's test double, so runs are short and can be
// slowed, failed or cancelled on demand). Checks: a run started through A is followed live through B's event stream
// and served by B; a cancel through B stops a run a worker is running; the start order is round-robin across
// clients and the per-client bound holds across servers; a run whose workers keep dying is started again a bounded
// number of times, then ends failed with the reason. Needs PostgreSQL and redis-server installed (bash .ci/run
// installs them); without them the test fails with the install line.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fileURLToPath } from 'node:url';
import { createApp } from '../../server/app.ts';
import { openPostgresStore } from '../../server/main.ts';
import { QueueWorker } from '../../server/queue/worker.ts';
import { MAX_ATTEMPTS, QueueRedis } from '../../server/queue/connection.ts';
import type { RedisRunJobs } from '../../server/queue/redis-jobs.ts';
import type { Store } from '../../server/store/types.ts';
import type { RunRequest } from '../../shared/schema/run.ts';
import { startPgCluster, type PgCluster } from '../helpers/pg-cluster.ts';
import { startRedisServer, type RedisServer } from '../helpers/redis-server.ts';

const ROOT = new URL('../..', import.meta.url).pathname;
const DOUBLE = fileURLToPath(new URL('../helpers/run-worker-double.ts', import.meta.url));
const SITES = JSON.stringify({
  type: 'FeatureCollection',
  features: [
    { type: 'Feature', geometry: { type: 'Point', coordinates: [10, 10] }, properties: { heatFlowMWm2: 60 } },
    { type: 'Feature', geometry: { type: 'Point', coordinates: [11, 11] }, properties: { heatFlowMWm2: 80 } },
  ],
});
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** A run request the test double understands (its title picks the behaviour). */
function request(title: string, seed: number): RunRequest {
  return { title, sites: 'ds_sites', seed, grid: { bbox: [10, 10, 11, 11], size: [6, 5] } } as unknown as RunRequest;
}

describe('the Redis run queue across servers and workers', () => {
  let cluster: PgCluster;
  let redis: RedisServer;
  const stores: Store[] = [];
  let A: ReturnType<typeof createApp>, B: ReturnType<typeof createApp>;
  let workers: QueueWorker[] = [];
  const prefix = `t${Date.now()}:`;
  const json = (method: string, body: unknown, token?: string) => ({
    method,
    headers: { 'content-type': 'application/json', ...(token !== undefined ? { authorization: `Bearer ${token}` } : {}) },
    body: JSON.stringify(body),
  });
  const submit = (app: typeof A, title: string, seed: number, client = 'c1') =>
    (app.jobs as RedisRunJobs).submit({
      request: request(title, seed),
      datasets: { ds_sites: { kind: 'sites', body: SITES } },
      cacheKey: `${title}-${seed}-${Math.random()}`,
      client,
      cells: 30,
    });
  const statusOf = async (app: typeof A, id: string) => (await (await app.request(`/api/runs/${id}`)).json()) as { status: string; message: string };
  const waitEnd = async (app: typeof A, id: string, ms = 60_000) => {
    const until = Date.now() + ms;
    for (;;) {
      const s = await statusOf(app, id);
      if (['done', 'failed', 'cancelled'].includes(s.status) || Date.now() > until) return s;
      await sleep(50);
    }
  };

  beforeAll(async () => {
    cluster = startPgCluster(ROOT);
    redis = await startRedisServer(ROOT);
    for (let i = 0; i < 4; i++) stores.push(await openPostgresStore(cluster.url, () => {}, { queueOwnsRuns: true }));
    const limits = { maxQueuedRunsPerClient: 3 };
    A = createApp({ store: stores[0], terrain: null, clientDir: null, runWorkerFile: DOUBLE, queueUrl: redis.url, queuePrefix: prefix, limits });
    B = createApp({ store: stores[1], terrain: null, clientDir: null, runWorkerFile: DOUBLE, queueUrl: redis.url, queuePrefix: prefix, limits });
    await Promise.all([A.ready, B.ready]);
  }, 120_000);
  afterAll(async () => {
    for (const w of workers) await w.stop();
    await A?.close();
    await B?.close();
    for (const s of stores) await s.close();
    cluster?.stop();
    await redis?.stop();
  });

  const startWorkers = async () => {
    workers = [2, 3].map((i) => new QueueWorker({ store: stores[i], url: redis.url, prefix, workerFile: DOUBLE, concurrency: 1, log: () => {} }));
    await Promise.all(workers.map((w) => w.start()));
  };

  it('starts runs round-robin across clients and holds the per-client bound across servers', async () => {
    // No worker yet: the start order is read by claiming as a worker would.
    const x = [await submit(A, 'order', 1, 'x'), await submit(B, 'order', 2, 'x'), await submit(A, 'order', 3, 'x')];
    const y = await submit(B, 'order', 4, 'y');
    // x has 3 in flight (its bound) through both servers: a fourth through either is refused.
    await expect(submit(B, 'order', 5, 'x')).rejects.toMatchObject({ code: 'too_many_runs' });
    const q = await QueueRedis.connect(redis.url, { prefix });
    const order: string[] = [];
    for (let k = 0; k < 4; k++) order.push(((await q.script('claim', ['probe', Date.now(), 60_000])) as string[])[0]);
    expect(order).toEqual([x[0].id, y.id, x[1].id, x[2].id]);
    // Handed back as the reaper does for a lost worker, then cancelled through the other server.
    for (const id of order) await q.script('finish', [id, '']);
    await q.close();
  });

  it('follows a run started through A live through B, and serves its layers and tiles from B', async () => {
    await startWorkers();
    const started = (await (await A.request('/api/runs', json('POST', { sites: 'demo-sites', model: 'demo-model', seed: 21, title: 'slow' }))).json()) as {
      id: string;
    };
    const sse = await (await B.request(`/api/runs/${started.id}/events`)).text();
    const progress = [...sse.matchAll(/event: progress\ndata: (.*)\n/g)].map((m) => JSON.parse(m[1]) as { status: string; progress: number });
    expect(progress.filter((p) => p.status === 'running' && p.progress > 0 && p.progress < 1).length).toBeGreaterThan(3);
    expect(sse).toMatch(/event: end\ndata: .*"status":"done"/);
    const run = (await (await B.request(`/api/runs/${started.id}`)).json()) as { layers: { name: string; urls: Record<string, string> }[] };
    const tif = run.layers.find((l) => l.urls.tif !== undefined)!;
    expect((await B.request(tif.urls.tif)).status).toBe(200);
    expect((await B.request(`/api/runs/${started.id}/tiles/${tif.name}.json`)).status).toBe(200);
    const health = (await (await B.request('/api/health')).json()) as { queue: string; workers: number; workerProcesses: number };
    expect(health).toMatchObject({ queue: 'redis', workers: 2, workerProcesses: 2 });
  }, 90_000);

  it('cancels through B a run a worker is running for A', async () => {
    const started = (await (await A.request('/api/runs', json('POST', { sites: 'demo-sites', model: 'demo-model', seed: 22, title: 'slow' }))).json()) as {
      id: string;
      runToken: string;
    };
    for (let i = 0; i < 400 && (await statusOf(B, started.id)).status !== 'running'; i++) await sleep(25);
    expect((await B.request(`/api/runs/${started.id}`, { method: 'DELETE', headers: { authorization: 'Bearer wrong' } })).status).toBe(403);
    const del = await B.request(`/api/runs/${started.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${started.runToken}` } });
    expect(del.status).toBe(200);
    const end = await waitEnd(A, started.id, 20_000);
    expect(end.status).toBe('cancelled');
  }, 60_000);

  it('starts a run again when its worker dies, and fails it with the reason after the last start', async () => {
    for (const w of workers) await w.stop();
    workers = [];
    const run = await submit(A, 'doomed', 7, 'z');
    const q = await QueueRedis.connect(redis.url, { prefix });
    // Workers that take the run and die at once (a lease of 50 ms never renewed); the servers' reapers hand it on.
    for (let k = 1; k <= MAX_ATTEMPTS; k++) {
      let got: string[] | null = null;
      for (let i = 0; i < 200 && got === null; i++) {
        got = (await q.script('claim', [`dead-${k}`, Date.now(), 50])) as string[] | null;
        if (got === null) await sleep(25);
      }
      expect(got?.[0]).toBe(run.id);
      expect(Number(got![1])).toBe(k);
      if (k < MAX_ATTEMPTS) {
        const handedOn = new RegExp(`start ${k} of ${MAX_ATTEMPTS}`);
        for (let i = 0; i < 400 && !handedOn.test((await statusOf(B, run.id)).message); i++) await sleep(25);
        expect(await statusOf(B, run.id)).toMatchObject({ status: 'queued', message: expect.stringMatching(handedOn) });
      }
    }
    await q.close();
    const end = await waitEnd(B, run.id, 20_000);
    expect(end.status).toBe('failed');
    expect(end.message).toMatch(/started 3 times and each worker running it stopped/);
  }, 60_000);
});
