// One suite for every Store: the embedded SQLite file and PostgreSQL (a throwaway cluster started here, under the
// `postgres` user when the tests run as root). Both must behave the same through the interface, and both must refuse
// to change a saved revision in the database itself.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { PostgresStore, PG_MIGRATIONS, migratePostgres } from '../../server/store/postgres.ts';
import type { RunRecord, Store } from '../../server/store/types.ts';
import { hashToken, newEditToken } from '../../server/security.ts';
import { startPgCluster, type PgCluster } from '../helpers/pg-cluster.ts';

const ROOT = new URL('../..', import.meta.url).pathname;

interface Backend {
  store: Store;
  /** Runs raw SQL against the backend's database (for what the interface must not allow). */
  raw(sql: string, params: unknown[]): Promise<unknown>;
  close(): Promise<void>;
}

const backends: [string, () => Promise<Backend>][] = [
  [
    'SQLite',
    async () => {
      mkdirSync(join(ROOT, '.tmp'), { recursive: true });
      const dir = mkdtempSync(join(ROOT, '.tmp', 'store-sqlite-'));
      const store = new SqliteStore(join(dir, 'db.sqlite'));
      return {
        store,
        raw: async (sql, params) => store.db.prepare(sql.replace(/\$\d+/g, '?')).run(...params),
        close: async () => {
          await store.close();
          rmSync(dir, { recursive: true, force: true });
        },
      };
    },
  ],
];
let cluster: PgCluster | null = null;
backends.push([
  'PostgreSQL',
  async () => {
    cluster = startPgCluster(ROOT);
    const store = await PostgresStore.open(cluster.url, { max: 4 });
    return {
      store,
      raw: (sql, params) => store.pool.query(sql, params),
      close: async () => {
        await store.close();
        cluster?.stop();
      },
    };
  },
]);

const run = (id: string, over: Partial<RunRecord> = {}): RunRecord => {
  const now = new Date().toISOString();
  return {
    id,
    cacheKey: `key-${id}`,
    request: { title: `run ${id}` },
    status: 'queued',
    progress: 0,
    message: 'queued',
    layers: [],
    summary: null,
    warnings: [],
    model: null,
    grids: [],
    client: 'c',
    createdAt: now,
    updatedAt: now,
    ...over,
  };
};

const SITES = JSON.stringify({
  type: 'FeatureCollection',
  features: [
    { type: 'Feature', geometry: { type: 'Point', coordinates: [-128.5, -38.25] }, properties: { heatFlowMWm2: 70 } },
    { type: 'Feature', geometry: { type: 'Point', coordinates: [-127, -37] }, properties: { heatFlowMWm2: 80 } },
  ],
});

describe.each(backends)('the %s store', (_name, make) => {
  let b: Backend;
  let s: Store;
  beforeAll(async () => {
    b = await make();
    s = b.store;
  }, 120_000);
  afterAll(async () => await b?.close());

  it('stores data sets content-addressed, with their byte size and bbox, and finds them by content', async () => {
    const rec = await s.putDataset({ kind: 'sites', body: SITES, featureCount: 2, title: 'Sites' });
    expect(rec.contentHash).toMatch(/^[0-9a-f]{64}$/);
    expect(rec.bytes).toBe(Buffer.byteLength(SITES));
    expect(rec.bbox).toEqual([-128.5, -38.25, -127, -37]);
    expect((await s.getDataset(rec.id))!.body).toBe(SITES);
    expect((await s.findDatasetByContent('sites', rec.contentHash))!.id).toBe(rec.id);
    expect(await s.findDatasetByContent('faults', rec.contentHash)).toBeNull();
    // A stable id given again keeps the first record.
    const a = await s.putDataset({ id: 'fixed-id', kind: 'model', body: '{"layers":[]}', featureCount: 0 });
    const again = await s.putDataset({ id: 'fixed-id', kind: 'model', body: '{"other":1}', featureCount: 0 });
    expect(again.contentHash).toBe(a.contentHash);
    expect((await s.listDatasets()).map((d) => d.id)).toEqual(expect.arrayContaining([rec.id, 'fixed-id']));
  });

  it('appends project revisions, never rewrites one, and keeps only the token hash', async () => {
    const token = newEditToken();
    await s.createProject({ id: 'p1', title: 'First', stateJson: '{"a":1}', tokenHash: hashToken(token) });
    expect(await s.getProjectTokenHash('p1')).toBe(hashToken(token));
    // Saves made at once each get their own number (the database orders them).
    const numbers = await Promise.all(Array.from({ length: 12 }, (_, k) => s.appendRevision('p1', { stateJson: JSON.stringify({ k }) })));
    expect([...numbers].sort((x, y) => x - y)).toEqual(Array.from({ length: 12 }, (_, k) => k + 2));
    expect((await s.getProject('p1'))!.revision).toBe(13);
    expect((await s.getProject('p1', 1))!.state).toEqual({ a: 1 });
    expect((await s.listRevisions('p1'))!.map((r) => r.revision)).toEqual(Array.from({ length: 13 }, (_, k) => k + 1));
    expect(await s.listRevisions('nope')).toBeNull();
    await expect(b.raw('UPDATE project_revisions SET state = $1 WHERE project_id = $2', ['{}', 'p1'])).rejects.toThrow(/append-only/);
    await expect(b.raw('DELETE FROM project_revisions WHERE project_id = $1', ['p1'])).rejects.toThrow(/append-only/);
    await expect(s.createProject({ id: 'p1', title: 'again', stateJson: '{}', tokenHash: 'x' })).rejects.toThrow();
  });

  it('attaches, renames, detaches and prunes data sets of a project, counting its bytes', async () => {
    await s.createProject({ id: 'p2', title: 'Two', stateJson: '{}', tokenHash: hashToken(newEditToken()) });
    const d = await s.putDataset({ kind: 'faults', body: '{"type":"FeatureCollection","features":[]}', featureCount: 0 });
    expect((await s.attachDataset('p2', d.id, 'Faults')).name).toBe('Faults');
    expect(await s.renameProjectDataset('p2', d.id, 'Main faults')).toBe(true);
    expect((await s.listProjectDatasets('p2')).map((x) => x.name)).toEqual(['Main faults']);
    expect(await s.projectStorageBytes('p2')).toBe(d.bytes);
    expect(await s.pruneDataset(d.id)).toBe(false); // still attached
    expect(await s.detachProjectDataset('p2', d.id)).toBe(true);
    expect(await s.getProjectDataset('p2', d.id)).toBeNull();
    expect(await s.projectStorageBytes('p2')).toBe(0);
    expect(await s.pruneDataset(d.id)).toBe(true);
    expect(await s.getDataset(d.id)).toBeNull();
  });

  it('replaces a data set in one transaction: a failed attach leaves the old one attached under its name', async () => {
    await s.createProject({ id: 'p3', title: 'Three', stateJson: '{}', tokenHash: hashToken(newEditToken()) });
    const old = await s.putDataset({ kind: 'faults', body: '{"type":"FeatureCollection","features":[],"v":1}', featureCount: 0 });
    const other = await s.putDataset({ kind: 'faults', body: '{"type":"FeatureCollection","features":[],"v":2}', featureCount: 0 });
    await s.attachDataset('p3', old.id, 'Faults');
    // The new attachment names content that does not exist: the foreign key fails it, and the detach goes back too.
    await expect(s.replaceProjectDataset('p3', old.id, 'no-such-dataset', 'Faults')).rejects.toThrow();
    expect((await s.listProjectDatasets('p3')).map((x) => [x.id, x.name])).toEqual([[old.id, 'Faults']]);
    const now = await s.replaceProjectDataset('p3', old.id, other.id, 'Faults');
    expect(now.name).toBe('Faults');
    expect((await s.listProjectDatasets('p3')).map((x) => [x.id, x.name])).toEqual([[other.id, 'Faults']]);
    expect(await s.getProjectDataset('p3', old.id)).toBeNull();
    expect(await s.projectStorageBytes('p3')).toBe(other.bytes);
    // Two replacements of the same data set at once: one detaches it, the other finds nothing to detach, is refused
    // (dataset_changed) and writes nothing.
    const [a, b] = await Promise.all(
      [3, 4].map((v) => s.putDataset({ kind: 'faults', body: `{"type":"FeatureCollection","features":[],"v":${v}}`, featureCount: 0 })),
    );
    const both = await Promise.allSettled([a, b].map((d) => s.replaceProjectDataset('p3', other.id, d.id, 'Faults')));
    expect(both.map((r) => r.status).sort()).toEqual(['fulfilled', 'rejected']);
    const lost = both.findIndex((r) => r.status === 'rejected');
    expect(((both[lost] as PromiseRejectedResult).reason as { code: string }).code).toBe('dataset_changed');
    expect((await s.listProjectDatasets('p3')).map((x) => [x.id, x.name])).toEqual([[[a, b][1 - lost].id, 'Faults']]);
  });

  it('records runs, their progress, their projects and data sets, and fails runs left by a stopped server', async () => {
    await s.putRun(run('r1'));
    await s.updateRun('r1', { status: 'running', progress: 0.25, message: 'tile 1' });
    expect(await s.getRun('r1')).toMatchObject({ status: 'running', progress: 0.25, message: 'tile 1', request: { title: 'run r1' } });
    expect((await s.findRunByCacheKey('key-r1', ['running']))!.id).toBe('r1');
    expect(await s.findRunByCacheKey('key-r1', ['done'])).toBeNull();
    await s.linkProjectRun('p2', 'r1');
    await s.linkProjectRun('p2', 'r1');
    expect(await s.runProjects('r1')).toEqual(['p2']);
    expect((await s.listProjectRuns('p2')).map((r) => [r.id, r.title])).toEqual([['r1', 'run r1']]);
    const d = await s.putDataset({ kind: 'sites', body: SITES.replace('70', '71'), featureCount: 2 });
    await s.linkRunDatasets('r1', [d.id, d.id]);
    expect(await s.pruneDataset(d.id)).toBe(false); // a run reads it
    if (s instanceof PostgresStore) {
      // A shared database: only the runs of a server that is no longer seen are failed; this server's run goes on.
      await s.putRun(run('r1b', { status: 'running' }));
      await b.raw('UPDATE runs SET owner = $1 WHERE id = $2', ['srv_gone', 'r1b']);
      expect(await s.failInterruptedRuns('server stopped')).toBe(1);
      expect(await s.getRun('r1')).toMatchObject({ status: 'running' });
      expect(await s.getRun('r1b')).toMatchObject({ status: 'failed', message: 'server stopped' });
    } else {
      expect(await s.failInterruptedRuns('server stopped')).toBe(1);
      expect(await s.getRun('r1')).toMatchObject({ status: 'failed', message: 'server stopped' });
    }
  });

  it('stores a run result atomically: files and grids content-addressed, grids read back whole and by rows', async () => {
    await s.putRun(run('r2', { status: 'running' }));
    // 300 × 700 cells: several bands of rows in the PostgreSQL store.
    const width = 300,
      height = 700;
    const values = Float32Array.from({ length: width * height }, (_, k) => (k % 977) * 0.5 - 10);
    values[5] = NaN;
    const meta = { width, height, west: -129, north: -37, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units: 'mW/m²' };
    const png = new Uint8Array([137, 80, 78, 71, 1, 2, 3]);
    await s.storeRunResult('r2', {
      files: [{ name: 'heat-flow', ext: 'png', bytes: png, contentType: 'image/png' }],
      grids: [{ name: 'heatFlow', meta, values }],
      record: { grids: ['heatFlow'], layers: [{ name: 'heat-flow' }] },
    });
    const f = (await s.getRunFile('r2', 'heat-flow', 'png'))!;
    expect([...f.bytes]).toEqual([...png]);
    expect(f.contentType).toBe('image/png');
    expect([...(await s.getBlob(f.hash))!]).toEqual([...png]);
    const g = (await s.getRunGrid('r2', 'heatFlow'))!;
    expect(g.meta).toEqual(meta);
    expect(g.values.length).toBe(width * height);
    expect(Number.isNaN(g.values[5])).toBe(true);
    expect(g.values[width * height - 1]).toBe(values[width * height - 1]);
    expect(Buffer.from(g.values.buffer).equals(Buffer.from(values.buffer))).toBe(true);
    expect((await s.getRun('r2'))!.grids).toEqual(['heatFlow']);
    expect(await s.getRunGrid('r2', 'missing')).toBeNull();
    if (s instanceof PostgresStore) {
      const part = (await s.getRunGridRows('r2', 'heatFlow', 217, 480))!;
      expect(part.values.length).toBe((480 - 217) * width);
      expect(Buffer.from(part.values.buffer).equals(Buffer.from(values.slice(217 * width, 480 * width).buffer))).toBe(true);
    }
  });

  it('keeps a project terrain and replaces it', async () => {
    const values = Float32Array.from([1, 2, 3, 4, 5, 6]);
    const meta = { width: 3, height: 2, west: 0, north: 1, dx: 0.5, dy: 0.5, crs: 'EPSG:4326', units: 'm', sourceCrs: 'EPSG:4326', sourceBytes: 24, name: 'T' };
    await s.putProjectTerrain('p2', values, meta);
    await s.putProjectTerrain('p2', Float32Array.from([6, 5, 4, 3, 2, 1]), meta);
    const t = (await s.getProjectTerrain('p2'))!;
    expect([...t.values]).toEqual([6, 5, 4, 3, 2, 1]);
    expect(await s.projectStorageBytes('p2')).toBe(24);
  });

  if (_name === 'PostgreSQL') {
    it('records each migration once, and running them again changes nothing', async () => {
      const pool = (s as PostgresStore).pool;
      expect(await migratePostgres(pool)).toBe(0);
      const rows = (await pool.query<{ version: number }>('SELECT version FROM subtherm_migrations ORDER BY version')).rows;
      expect(rows.map((r) => r.version)).toEqual(PG_MIGRATIONS.map((_, k) => k + 1));
    });
  }
});
