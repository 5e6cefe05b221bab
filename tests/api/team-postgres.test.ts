// Two servers on one PostgreSQL database (a throwaway cluster): what one saves the other serves, an edit token issued
// by one works on the other, a view link writes on neither, and a run started through one is read, with its layers
// and tiles, through the other. Needs PostgreSQL installed (bash .ci/run installs it); without it the test fails with
// the install line.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fileURLToPath } from 'node:url';
import { createApp } from '../../server/app.ts';
import { openPostgresStore } from '../../server/main.ts';
import { resolveDatabase } from '../../server/cli/serve.ts';
import { InputError } from '../../shared/errors.ts';
import type { Store } from '../../server/store/types.ts';
import { startPgCluster, type PgCluster } from '../helpers/pg-cluster.ts';

const ROOT = new URL('../..', import.meta.url).pathname;
const DOUBLE = fileURLToPath(new URL('../helpers/run-worker-double.ts', import.meta.url));

describe('choosing the store', () => {
  it('refuses a database URL and a SQLite file given together (two stores), naming both', () => {
    let err: unknown = null;
    try {
      resolveDatabase({ db: 'x.sqlite', 'database-url': 'postgres://u@h/db' });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as Error).message).toMatch(/--database-url.*--db x\.sqlite/);
    expect(resolveDatabase({ 'database-url': 'postgres://u@h/db' }).databaseUrl).toBe('postgres://u@h/db');
  });
});

describe('two servers on one PostgreSQL database', () => {
  let cluster: PgCluster;
  let storeA: Store, storeB: Store;
  let A: ReturnType<typeof createApp>, B: ReturnType<typeof createApp>;
  const json = (method: string, body: unknown, token?: string) => ({
    method,
    headers: { 'content-type': 'application/json', ...(token !== undefined ? { authorization: `Bearer ${token}` } : {}) },
    body: JSON.stringify(body),
  });

  beforeAll(async () => {
    cluster = startPgCluster(ROOT);
    storeA = await openPostgresStore(cluster.url);
    storeB = await openPostgresStore(cluster.url);
    A = createApp({ store: storeA, terrain: null, clientDir: null, runWorkerFile: DOUBLE });
    B = createApp({ store: storeB, terrain: null, clientDir: null, runWorkerFile: DOUBLE });
    await Promise.all([A.ready, B.ready]);
  }, 120_000);
  afterAll(async () => {
    await A?.close();
    await B?.close();
    await storeA?.close();
    await storeB?.close();
    cluster?.stop();
  });

  it('reports the store in /api/health', async () => {
    expect(await (await A.request('/api/health')).json()).toMatchObject({ ok: true, store: 'postgresql' });
  });

  it('shares projects: a token from A edits on B, a view link writes on neither, saves from both are all kept', async () => {
    const created = (await (await A.request('/api/projects', json('POST', { title: 'Shared', state: { n: 0 } }))).json()) as { id: string; editToken: string };
    const saves = await Promise.all(
      Array.from(
        { length: 10 },
        async (_, k) => await (k % 2 === 0 ? A : B).request(`/api/projects/${created.id}`, json('PUT', { state: { n: k + 1 } }, created.editToken)),
      ),
    );
    expect(saves.map((r) => r.status)).toEqual(Array(10).fill(200));
    const revs = (await (await B.request(`/api/projects/${created.id}/revisions`)).json()) as { revisions: { revision: number }[] };
    expect(revs.revisions.map((r) => r.revision)).toEqual(Array.from({ length: 11 }, (_, k) => k + 1));
    for (const app of [A, B]) {
      expect((await app.request(`/api/projects/${created.id}`, json('PUT', { state: {} }))).status).toBe(401);
      expect((await app.request(`/api/projects/${created.id}`, json('PUT', { state: {} }, 'not-the-token'))).status).toBe(403);
    }
  });

  it('serves through B a run started through A: its state, layers and tiles', async () => {
    const started = (await (await A.request('/api/runs', json('POST', { sites: 'demo-sites', model: 'demo-model', seed: 11 }))).json()) as { id: string };
    let status = '';
    for (let i = 0; i < 1500 && !['done', 'failed', 'cancelled'].includes(status); i++) {
      status = ((await (await B.request(`/api/runs/${started.id}`)).json()) as { status: string }).status;
      if (status !== 'done') await new Promise((r) => setTimeout(r, 20));
    }
    expect(status).toBe('done');
    const run = (await (await B.request(`/api/runs/${started.id}`)).json()) as { layers: { name: string; urls: Record<string, string> }[] };
    const tifLayer = run.layers.find((l) => l.urls.tif !== undefined)!;
    const tif = await B.request(tifLayer.urls.tif);
    expect(tif.status).toBe(200);
    expect(tif.headers.get('content-type')).toBe('image/tiff');
    const tiles = await B.request(`/api/runs/${started.id}/tiles/${tifLayer.name}.json`);
    expect(tiles.status).toBe(200);
  }, 60_000);
});
