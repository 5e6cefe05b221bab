import pg from 'pg';
import type {
  DatasetRecord,
  ProjectDatasetRecord,
  ProjectRecord,
  ProjectRunInfo,
  ProjectTerrainRecord,
  RevisionInfo,
  RunRecord,
  RunStatus,
  Store,
  StoredGridMeta,
} from './types.ts';
import { bodyBbox } from './bbox.ts';
import { newId, sha256Hex } from './sqlite.ts';

/**
 * Versioned schema migrations, applied in order at start (and by `subtherm migrate`); the table
 * `subtherm_migrations` records which ran. Revisions are append-only in the database itself (a trigger refuses
 * UPDATE and DELETE); a grid's Float32 values are kept in bands of rows (`grid_chunks`, bytea) so that a reader
 * takes only the bands a window covers.
 */
export const PG_MIGRATIONS: { name: string; sql: string }[] = [
  {
    name: 'initial schema',
    sql: `
     CREATE TABLE datasets (
       id TEXT PRIMARY KEY, kind TEXT NOT NULL, feature_count INTEGER NOT NULL, content_hash TEXT NOT NULL,
       title TEXT, body TEXT NOT NULL, created_at TEXT NOT NULL, bbox TEXT
     );
     CREATE INDEX datasets_kind_hash ON datasets(kind, content_hash);
     CREATE TABLE projects (id TEXT PRIMARY KEY, token_hash TEXT NOT NULL, created_at TEXT NOT NULL);
     CREATE TABLE project_revisions (
       project_id TEXT NOT NULL REFERENCES projects(id), revision INTEGER NOT NULL, title TEXT NOT NULL,
       state TEXT NOT NULL, created_at TEXT NOT NULL, UNIQUE (project_id, revision)
     );
     CREATE FUNCTION project_revisions_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
       BEGIN RAISE EXCEPTION 'project revisions are append-only'; END $$;
     CREATE TRIGGER project_revisions_no_change BEFORE UPDATE OR DELETE ON project_revisions
       FOR EACH ROW EXECUTE FUNCTION project_revisions_append_only();
     CREATE TABLE blobs (hash TEXT PRIMARY KEY, size INTEGER NOT NULL, bytes BYTEA NOT NULL);
     CREATE TABLE runs (
       id TEXT PRIMARY KEY, cache_key TEXT NOT NULL, request TEXT NOT NULL, status TEXT NOT NULL,
       progress DOUBLE PRECISION NOT NULL, message TEXT NOT NULL, layers TEXT NOT NULL, summary TEXT,
       warnings TEXT NOT NULL, model TEXT, grids TEXT NOT NULL, client TEXT NOT NULL, created_at TEXT NOT NULL,
       updated_at TEXT NOT NULL
     );
     CREATE INDEX runs_cache_key ON runs(cache_key, created_at);
     CREATE INDEX runs_status ON runs(status);
     CREATE TABLE run_files (
       run_id TEXT NOT NULL REFERENCES runs(id), name TEXT NOT NULL, ext TEXT NOT NULL,
       blob_hash TEXT NOT NULL REFERENCES blobs(hash), content_type TEXT NOT NULL, PRIMARY KEY (run_id, name, ext)
     );
     CREATE TABLE run_grids (
       run_id TEXT NOT NULL REFERENCES runs(id), name TEXT NOT NULL, meta TEXT NOT NULL,
       band_rows INTEGER NOT NULL, PRIMARY KEY (run_id, name)
     );
     CREATE TABLE grid_chunks (
       run_id TEXT NOT NULL, name TEXT NOT NULL, band INTEGER NOT NULL, bytes BYTEA NOT NULL,
       PRIMARY KEY (run_id, name, band), FOREIGN KEY (run_id, name) REFERENCES run_grids(run_id, name) ON DELETE CASCADE
     );
     CREATE TABLE project_datasets (
       project_id TEXT NOT NULL REFERENCES projects(id), dataset_id TEXT NOT NULL REFERENCES datasets(id),
       name TEXT NOT NULL, attached_at TEXT NOT NULL, detached_at TEXT, PRIMARY KEY (project_id, dataset_id)
     );
     CREATE INDEX project_datasets_dataset ON project_datasets(dataset_id);
     CREATE TABLE run_datasets (run_id TEXT NOT NULL REFERENCES runs(id), dataset_id TEXT NOT NULL, PRIMARY KEY (run_id, dataset_id));
     CREATE INDEX run_datasets_dataset ON run_datasets(dataset_id);
     CREATE TABLE project_runs (
       project_id TEXT NOT NULL REFERENCES projects(id), run_id TEXT NOT NULL REFERENCES runs(id),
       created_at TEXT NOT NULL, PRIMARY KEY (project_id, run_id)
     );
     CREATE TABLE project_terrain (
       project_id TEXT PRIMARY KEY REFERENCES projects(id), blob_hash TEXT NOT NULL REFERENCES blobs(hash),
       meta TEXT NOT NULL, created_at TEXT NOT NULL
     );`,
  },
  {
    // Several servers share one database: each run records the server that runs it, and each server says every few
    // seconds that it is alive, so that only the runs of a server that stopped are marked failed.
    name: 'run owners and server heartbeats',
    sql: `
     ALTER TABLE runs ADD COLUMN owner TEXT;
     CREATE TABLE servers (id TEXT PRIMARY KEY, started_at TIMESTAMPTZ NOT NULL DEFAULT now(), seen_at TIMESTAMPTZ NOT NULL DEFAULT now());`,
  },
];

/** A server not seen for this long has stopped: its queued and running runs are failed (seconds). */
export const SERVER_STALE_SECONDS = 30;
const HEARTBEAT_MS = 5000;
/** The `owner` of runs the Redis run queue carries: no server's heartbeat decides their fate. */
const QUEUE_OWNER = 'queue';

/** Rows of a grid kept per chunk: bands of at most this many bytes (whole rows). */
const BAND_BYTES = 256 * 1024;

type Client = pg.PoolClient | pg.Pool;

/** Runs the migrations not yet recorded, each in its own transaction, under a lock so two servers never race. */
export async function migratePostgres(pool: pg.Pool, log: (line: string) => void = () => {}): Promise<number> {
  const client = await pool.connect();
  let applied = 0;
  try {
    await client.query('SELECT pg_advisory_lock(7406202611)');
    await client.query(
      'CREATE TABLE IF NOT EXISTS subtherm_migrations (version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TIMESTAMPTZ NOT NULL DEFAULT now())',
    );
    const done = new Set((await client.query<{ version: number }>('SELECT version FROM subtherm_migrations')).rows.map((r) => r.version));
    for (let v = 1; v <= PG_MIGRATIONS.length; v++) {
      if (done.has(v)) continue;
      await client.query('BEGIN');
      try {
        await client.query(PG_MIGRATIONS[v - 1].sql);
        await client.query('INSERT INTO subtherm_migrations (version, name) VALUES ($1, $2)', [v, PG_MIGRATIONS[v - 1].name]);
        await client.query('COMMIT');
      } catch (e) {
        await client.query('ROLLBACK');
        throw e;
      }
      applied++;
      log(`migration ${v} (${PG_MIGRATIONS[v - 1].name}) applied`);
    }
  } finally {
    await client.query('SELECT pg_advisory_unlock(7406202611)').catch(() => undefined);
    client.release();
  }
  return applied;
}

/** The team store: a PostgreSQL database (node-postgres pool), migrated on open. */
export class PostgresStore implements Store {
  readonly kind = 'postgresql' as const;
  readonly pool: pg.Pool;
  /** This server's id in `servers` and in the `owner` of the runs it starts. */
  readonly serverId = newId('srv_');
  /**
   * Who runs the runs this process records: the server itself (its id; failed by the others once it stops), or the
   * shared run queue (`queue`; a queue run outlives the server that queued it, and the queue's reaper ends it).
   */
  private readonly runOwner: string;
  private heartbeat: NodeJS.Timeout | null = null;

  private constructor(pool: pg.Pool, queueOwnsRuns: boolean) {
    this.pool = pool;
    this.runOwner = queueOwnsRuns ? QUEUE_OWNER : this.serverId;
  }

  /** Registers this server and keeps saying it is alive; each beat also fails the runs of servers that stopped. */
  private async startHeartbeat(log?: (line: string) => void): Promise<void> {
    await this.pool.query('INSERT INTO servers (id) VALUES ($1)', [this.serverId]);
    this.heartbeat = setInterval(() => {
      void this.pool
        .query('UPDATE servers SET seen_at = now() WHERE id = $1', [this.serverId])
        .then(() => this.failRunsOfStoppedServers('the server running this run stopped before it finished; submit it again'))
        .catch((e: unknown) => log?.(`[${new Date().toISOString()}] database heartbeat failed: ${(e as Error).message}`));
    }, HEARTBEAT_MS);
    this.heartbeat.unref();
  }

  private async failRunsOfStoppedServers(message: string): Promise<number> {
    const r = await this.pool.query(
      `UPDATE runs SET status = 'failed', message = $1, updated_at = $2
       WHERE status IN ('queued', 'running') AND owner IS DISTINCT FROM '${QUEUE_OWNER}'
         AND (owner IS NULL OR owner NOT IN (SELECT id FROM servers WHERE id = $3 OR seen_at > now() - make_interval(secs => $4)))`,
      [message, new Date().toISOString(), this.serverId, SERVER_STALE_SECONDS],
    );
    return r.rowCount ?? 0;
  }

  /**
   * Connects to `url` (postgres://…), runs the pending migrations and returns the store. With `queueOwnsRuns`, the
   * runs it records belong to the Redis run queue (server/queue/) instead of this process.
   */
  static async open(url: string, opts: { max?: number; log?: (line: string) => void; queueOwnsRuns?: boolean } = {}): Promise<PostgresStore> {
    const pool = new pg.Pool({ connectionString: url, max: opts.max ?? 10 });
    // An idle client losing its connection (server restart) must not crash the process: the pool replaces it.
    pool.on('error', (e) => opts.log?.(`[${new Date().toISOString()}] database connection error: ${e.message}`));
    try {
      await migratePostgres(pool, opts.log);
      const store = new PostgresStore(pool, opts.queueOwnsRuns === true);
      await store.startHeartbeat(opts.log);
      return store;
    } catch (e) {
      await pool.end();
      throw e;
    }
  }

  /**
   * Runs `fn` while holding a database-wide lock (a session advisory lock), so servers starting together do their
   * start-up writes (the demo's data sets and project) one after the other instead of racing on the same ids.
   */
  async exclusive<T>(fn: () => Promise<T>): Promise<T> {
    const c = await this.pool.connect();
    try {
      await c.query('SELECT pg_advisory_lock(7406202612)');
      return await fn();
    } finally {
      await c.query('SELECT pg_advisory_unlock(7406202612)').catch(() => undefined);
      c.release();
    }
  }

  private async tx<T>(fn: (c: pg.PoolClient) => Promise<T>): Promise<T> {
    const c = await this.pool.connect();
    try {
      await c.query('BEGIN');
      const out = await fn(c);
      await c.query('COMMIT');
      return out;
    } catch (e) {
      await c.query('ROLLBACK').catch(() => undefined);
      throw e;
    } finally {
      c.release();
    }
  }

  async putDataset(input: { id?: string; kind: string; body: string; featureCount: number; title?: string }): Promise<DatasetRecord> {
    if (input.id !== undefined) {
      const existing = await this.getDataset(input.id);
      if (existing) {
        const { body: _body, ...rest } = existing;
        return rest;
      }
    }
    const bbox = input.kind === 'model' ? null : bodyBbox(input.body);
    const rec: DatasetRecord = {
      id: input.id ?? newId('ds_'),
      kind: input.kind,
      featureCount: input.featureCount,
      contentHash: sha256Hex(input.body),
      createdAt: new Date().toISOString(),
      title: input.title ?? null,
      bbox,
      bytes: Buffer.byteLength(input.body, 'utf8'),
    };
    await this.pool.query(
      'INSERT INTO datasets (id, kind, feature_count, content_hash, title, body, created_at, bbox) VALUES ($1, $2, $3, $4, $5, $6, $7, $8)',
      [rec.id, rec.kind, rec.featureCount, rec.contentHash, rec.title, input.body, rec.createdAt, bbox === null ? null : JSON.stringify(bbox)],
    );
    return rec;
  }

  async getDataset(id: string): Promise<(DatasetRecord & { body: string }) | null> {
    const r = await this.pool.query<DatasetRow & { body: string }>(`SELECT ${DATASET_COLUMNS}, body FROM datasets WHERE id = $1`, [id]);
    return r.rows[0] ? { ...datasetFromRow(r.rows[0]), body: r.rows[0].body } : null;
  }

  async listDatasets(): Promise<DatasetRecord[]> {
    return (await this.pool.query<DatasetRow>(`SELECT ${DATASET_COLUMNS} FROM datasets ORDER BY created_at, id`)).rows.map(datasetFromRow);
  }

  async findDatasetByContent(kind: string, contentHash: string): Promise<DatasetRecord | null> {
    const r = await this.pool.query<DatasetRow>(`SELECT ${DATASET_COLUMNS} FROM datasets WHERE kind = $1 AND content_hash = $2 ORDER BY created_at LIMIT 1`, [
      kind,
      contentHash,
    ]);
    return r.rows[0] ? datasetFromRow(r.rows[0]) : null;
  }

  async attachDataset(projectId: string, datasetId: string, name: string): Promise<ProjectDatasetRecord> {
    await this.pool.query(
      `INSERT INTO project_datasets (project_id, dataset_id, name, attached_at, detached_at) VALUES ($1, $2, $3, $4, NULL)
       ON CONFLICT (project_id, dataset_id) DO UPDATE SET name = excluded.name, attached_at = excluded.attached_at, detached_at = NULL`,
      [projectId, datasetId, name, new Date().toISOString()],
    );
    return (await this.getProjectDataset(projectId, datasetId))!;
  }

  async listProjectDatasets(projectId: string): Promise<ProjectDatasetRecord[]> {
    const r = await this.pool.query<DatasetRow & { name: string; attached_at: string }>(
      `SELECT ${DATASET_COLUMNS_D}, p.name, p.attached_at FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = $1 AND p.detached_at IS NULL ORDER BY p.attached_at, d.id`,
      [projectId],
    );
    return r.rows.map((row) => projectDataset(datasetFromRow(row), row.name, row.attached_at));
  }

  async getProjectDataset(projectId: string, datasetId: string): Promise<ProjectDatasetRecord | null> {
    const r = await this.pool.query<DatasetRow & { name: string; attached_at: string }>(
      `SELECT ${DATASET_COLUMNS_D}, p.name, p.attached_at FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = $1 AND p.dataset_id = $2 AND p.detached_at IS NULL`,
      [projectId, datasetId],
    );
    const row = r.rows[0];
    return row ? projectDataset(datasetFromRow(row), row.name, row.attached_at) : null;
  }

  async renameProjectDataset(projectId: string, datasetId: string, name: string): Promise<boolean> {
    const r = await this.pool.query('UPDATE project_datasets SET name = $1 WHERE project_id = $2 AND dataset_id = $3 AND detached_at IS NULL', [
      name,
      projectId,
      datasetId,
    ]);
    return (r.rowCount ?? 0) > 0;
  }

  async detachProjectDataset(projectId: string, datasetId: string): Promise<boolean> {
    const r = await this.pool.query('UPDATE project_datasets SET detached_at = $1 WHERE project_id = $2 AND dataset_id = $3 AND detached_at IS NULL', [
      new Date().toISOString(),
      projectId,
      datasetId,
    ]);
    return (r.rowCount ?? 0) > 0;
  }

  async pruneDataset(datasetId: string): Promise<boolean> {
    return this.tx(async (c) => {
      // Lock the content row first, so an attach racing the prune waits for it (and then finds it gone or kept).
      const row = await c.query('SELECT 1 FROM datasets WHERE id = $1 FOR UPDATE', [datasetId]);
      if (row.rowCount === 0) return false;
      const attached = await c.query('SELECT 1 FROM project_datasets WHERE dataset_id = $1 AND detached_at IS NULL LIMIT 1', [datasetId]);
      const byRun = await c.query('SELECT 1 FROM run_datasets WHERE dataset_id = $1 LIMIT 1', [datasetId]);
      // A saved state (any revision of any project) that names the id keeps the content: revisions are append-only.
      const byRevision = await c.query('SELECT 1 FROM project_revisions WHERE strpos(state, $1) > 0 LIMIT 1', [JSON.stringify(datasetId)]);
      if ((attached.rowCount ?? 0) > 0 || (byRun.rowCount ?? 0) > 0 || (byRevision.rowCount ?? 0) > 0) return false;
      await c.query('DELETE FROM project_datasets WHERE dataset_id = $1', [datasetId]);
      return ((await c.query('DELETE FROM datasets WHERE id = $1', [datasetId])).rowCount ?? 0) > 0;
    });
  }

  async projectStorageBytes(projectId: string): Promise<number> {
    const ds = await this.pool.query<{ n: string }>(
      'SELECT COALESCE(SUM(octet_length(d.body)), 0) AS n FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = $1 AND p.detached_at IS NULL',
      [projectId],
    );
    const t = await this.pool.query<{ n: string }>(
      'SELECT COALESCE(SUM(b.size), 0) AS n FROM project_terrain t JOIN blobs b ON b.hash = t.blob_hash WHERE t.project_id = $1',
      [projectId],
    );
    return Number(ds.rows[0].n) + Number(t.rows[0].n);
  }

  async linkRunDatasets(runId: string, datasetIds: string[]): Promise<void> {
    if (datasetIds.length === 0) return;
    await this.pool.query('INSERT INTO run_datasets (run_id, dataset_id) SELECT $1, unnest($2::text[]) ON CONFLICT DO NOTHING', [runId, datasetIds]);
  }

  async linkProjectRun(projectId: string, runId: string): Promise<void> {
    await this.pool.query('INSERT INTO project_runs (project_id, run_id, created_at) VALUES ($1, $2, $3) ON CONFLICT DO NOTHING', [
      projectId,
      runId,
      new Date().toISOString(),
    ]);
  }

  async listProjectRuns(projectId: string): Promise<ProjectRunInfo[]> {
    const r = await this.pool.query<{ id: string; status: RunStatus; request: string; created_at: string }>(
      'SELECT r.id, r.status, r.request, p.created_at FROM project_runs p JOIN runs r ON r.id = p.run_id WHERE p.project_id = $1 ORDER BY p.created_at, r.id',
      [projectId],
    );
    return r.rows.map((row) => {
      const title = (JSON.parse(row.request) as { title?: unknown }).title;
      return { id: row.id, status: row.status, title: typeof title === 'string' ? title : null, createdAt: row.created_at };
    });
  }

  async runProjects(runId: string): Promise<string[]> {
    return (await this.pool.query<{ project_id: string }>('SELECT project_id FROM project_runs WHERE run_id = $1 ORDER BY created_at', [runId])).rows.map(
      (r) => r.project_id,
    );
  }

  async putProjectTerrain(projectId: string, values: Float32Array, meta: ProjectTerrainRecord['meta']): Promise<ProjectTerrainRecord> {
    const createdAt = new Date().toISOString();
    const blobHash = await this.tx(async (c) => {
      const hash = await putBlobWith(c, new Uint8Array(values.buffer, values.byteOffset, values.byteLength));
      await c.query(
        `INSERT INTO project_terrain (project_id, blob_hash, meta, created_at) VALUES ($1, $2, $3, $4)
         ON CONFLICT (project_id) DO UPDATE SET blob_hash = excluded.blob_hash, meta = excluded.meta, created_at = excluded.created_at`,
        [projectId, hash, JSON.stringify(meta), createdAt],
      );
      return hash;
    });
    return { blobHash, meta, createdAt };
  }

  async getProjectTerrain(projectId: string): Promise<(ProjectTerrainRecord & { values: Float32Array }) | null> {
    const r = await this.pool.query<{ blob_hash: string; meta: string; created_at: string; bytes: Buffer }>(
      'SELECT t.blob_hash, t.meta, t.created_at, b.bytes FROM project_terrain t JOIN blobs b ON b.hash = t.blob_hash WHERE t.project_id = $1',
      [projectId],
    );
    const row = r.rows[0];
    if (!row) return null;
    return { blobHash: row.blob_hash, meta: JSON.parse(row.meta) as ProjectTerrainRecord['meta'], createdAt: row.created_at, values: float32Of(row.bytes) };
  }

  async createProject(input: { id: string; title: string; stateJson: string; tokenHash: string }): Promise<ProjectRecord> {
    const now = new Date().toISOString();
    await this.tx(async (c) => {
      await c.query('INSERT INTO projects (id, token_hash, created_at) VALUES ($1, $2, $3)', [input.id, input.tokenHash, now]);
      await c.query('INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES ($1, 1, $2, $3, $4)', [
        input.id,
        input.title,
        input.stateJson,
        now,
      ]);
    });
    return { id: input.id, title: input.title, state: JSON.parse(input.stateJson), revision: 1, updatedAt: now, createdAt: now };
  }

  async getProject(id: string, revision?: number): Promise<ProjectRecord | null> {
    const base =
      'SELECT r.revision, r.title, r.state, r.created_at, p.created_at AS p_created FROM project_revisions r JOIN projects p ON p.id = r.project_id WHERE r.project_id = $1';
    const r = await this.pool.query<{ revision: number; title: string; state: string; created_at: string; p_created: string }>(
      revision === undefined ? `${base} ORDER BY r.revision DESC LIMIT 1` : `${base} AND r.revision = $2`,
      revision === undefined ? [id] : [id, revision],
    );
    const row = r.rows[0];
    if (!row) return null;
    return { id, title: row.title, state: JSON.parse(row.state), revision: row.revision, updatedAt: row.created_at, createdAt: row.p_created };
  }

  async getProjectTokenHash(id: string): Promise<string | null> {
    const r = await this.pool.query<{ token_hash: string }>('SELECT token_hash FROM projects WHERE id = $1', [id]);
    return r.rows[0]?.token_hash ?? null;
  }

  async appendRevision(id: string, input: { title?: string; stateJson: string }): Promise<number> {
    return this.tx(async (c) => {
      // The project row's lock orders saves from every server: two saves never compute the same number.
      const p = await c.query('SELECT 1 FROM projects WHERE id = $1 FOR UPDATE', [id]);
      if (p.rowCount === 0) throw new Error(`no project ${id}`);
      const head = (
        await c.query<{ revision: number; title: string }>(
          'SELECT revision, title FROM project_revisions WHERE project_id = $1 ORDER BY revision DESC LIMIT 1',
          [id],
        )
      ).rows[0];
      const next = head.revision + 1;
      await c.query('INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES ($1, $2, $3, $4, $5)', [
        id,
        next,
        input.title ?? head.title,
        input.stateJson,
        new Date().toISOString(),
      ]);
      return next;
    });
  }

  async listRevisions(id: string): Promise<RevisionInfo[] | null> {
    if ((await this.getProjectTokenHash(id)) === null) return null;
    const r = await this.pool.query<{ revision: number; title: string; created_at: string; n: number }>(
      'SELECT revision, title, created_at, length(state) AS n FROM project_revisions WHERE project_id = $1 ORDER BY revision',
      [id],
    );
    return r.rows.map((row) => ({ revision: row.revision, title: row.title, createdAt: row.created_at, stateBytes: row.n }));
  }

  async putRun(run: RunRecord): Promise<void> {
    await this.pool.query(
      `INSERT INTO runs (id, cache_key, request, status, progress, message, layers, summary, warnings, model, grids, client, created_at, updated_at, owner)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
      [
        run.id,
        run.cacheKey,
        JSON.stringify(run.request),
        run.status,
        run.progress,
        run.message,
        JSON.stringify(run.layers),
        run.summary === null ? null : JSON.stringify(run.summary),
        JSON.stringify(run.warnings),
        run.model === null || run.model === undefined ? null : JSON.stringify(run.model),
        JSON.stringify(run.grids),
        run.client,
        run.createdAt,
        run.updatedAt,
        this.runOwner,
      ],
    );
  }

  async updateRun(
    id: string,
    patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>,
  ): Promise<void> {
    await updateRunWith(this.pool, id, patch);
  }

  async getRun(id: string): Promise<RunRecord | null> {
    const r = await this.pool.query<RunRow>('SELECT * FROM runs WHERE id = $1', [id]);
    return r.rows[0] ? runFromRow(r.rows[0]) : null;
  }

  async findRunByCacheKey(cacheKey: string, statuses: RunStatus[]): Promise<RunRecord | null> {
    if (statuses.length === 0) return null;
    const r = await this.pool.query<RunRow>('SELECT * FROM runs WHERE cache_key = $1 AND status = ANY($2::text[]) ORDER BY created_at DESC LIMIT 1', [
      cacheKey,
      statuses,
    ]);
    return r.rows[0] ? runFromRow(r.rows[0]) : null;
  }

  /** Fails the queued and running runs of servers that stopped (not seen for SERVER_STALE_SECONDS); others' go on. */
  async failInterruptedRuns(message: string): Promise<number> {
    return this.failRunsOfStoppedServers(message);
  }

  async putBlob(bytes: Uint8Array): Promise<string> {
    return putBlobWith(this.pool, bytes);
  }

  async getBlob(hash: string): Promise<Uint8Array | null> {
    const r = await this.pool.query<{ bytes: Buffer }>('SELECT bytes FROM blobs WHERE hash = $1', [hash]);
    const b = r.rows[0]?.bytes;
    return b ? new Uint8Array(b.buffer, b.byteOffset, b.byteLength) : null;
  }

  async putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
    await putRunFileWith(this.pool, runId, name, ext, hash, contentType);
  }

  async getRunFile(runId: string, name: string, ext: string): Promise<{ bytes: Uint8Array; contentType: string; hash: string } | null> {
    const r = await this.pool.query<{ content_type: string; blob_hash: string; bytes: Buffer }>(
      'SELECT f.content_type, f.blob_hash, b.bytes FROM run_files f JOIN blobs b ON b.hash = f.blob_hash WHERE f.run_id = $1 AND f.name = $2 AND f.ext = $3',
      [runId, name, ext],
    );
    const row = r.rows[0];
    if (!row) return null;
    return { bytes: new Uint8Array(row.bytes.buffer, row.bytes.byteOffset, row.bytes.byteLength), contentType: row.content_type, hash: row.blob_hash };
  }

  /** Links a grid stored as a blob to a run: its values are copied into bands of rows. */
  async putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): Promise<void> {
    const bytes = await this.getBlob(hash);
    if (!bytes) throw new Error(`no blob ${hash}`);
    await this.tx((c) => putGridWith(c, runId, name, meta, float32Of(bytes)));
  }

  async getRunGrid(runId: string, name: string): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    const g = await this.pool.query<{ meta: string; band_rows: number }>('SELECT meta, band_rows FROM run_grids WHERE run_id = $1 AND name = $2', [
      runId,
      name,
    ]);
    if (!g.rows[0]) return null;
    const meta = JSON.parse(g.rows[0].meta) as StoredGridMeta;
    return { meta, values: await this.readRows(runId, name, meta, g.rows[0].band_rows, 0, meta.height) };
  }

  /**
   * Rows [row0, row1) of a stored grid, reading only the bands that hold them (a tile or a window of a large grid
   * without the whole grid); null when the run has no such grid.
   */
  async getRunGridRows(runId: string, name: string, row0: number, row1: number): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    const g = await this.pool.query<{ meta: string; band_rows: number }>('SELECT meta, band_rows FROM run_grids WHERE run_id = $1 AND name = $2', [
      runId,
      name,
    ]);
    if (!g.rows[0]) return null;
    const meta = JSON.parse(g.rows[0].meta) as StoredGridMeta;
    const a = Math.max(0, Math.min(meta.height, row0)),
      b = Math.max(a, Math.min(meta.height, row1));
    return { meta, values: await this.readRows(runId, name, meta, g.rows[0].band_rows, a, b) };
  }

  private async readRows(runId: string, name: string, meta: StoredGridMeta, bandRows: number, row0: number, row1: number): Promise<Float32Array> {
    const out = new Float32Array((row1 - row0) * meta.width);
    if (row1 <= row0) return out;
    const first = Math.floor(row0 / bandRows),
      last = Math.floor((row1 - 1) / bandRows);
    const r = await this.pool.query<{ band: number; bytes: Buffer }>(
      'SELECT band, bytes FROM grid_chunks WHERE run_id = $1 AND name = $2 AND band BETWEEN $3 AND $4 ORDER BY band',
      [runId, name, first, last],
    );
    for (const { band, bytes } of r.rows) {
      const values = float32Of(bytes);
      const bandStart = band * bandRows;
      const from = Math.max(row0, bandStart),
        to = Math.min(row1, bandStart + values.length / meta.width);
      if (to > from) out.set(values.subarray((from - bandStart) * meta.width, (to - bandStart) * meta.width), (from - row0) * meta.width);
    }
    return out;
  }

  async storeRunResult(
    runId: string,
    result: {
      files: { name: string; ext: string; bytes: Uint8Array; contentType: string }[];
      grids: { name: string; meta: StoredGridMeta; values: Float32Array }[];
      record: Partial<Pick<RunRecord, 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>;
    },
  ): Promise<void> {
    await this.tx(async (c) => {
      for (const f of result.files) await putRunFileWith(c, runId, f.name, f.ext, await putBlobWith(c, f.bytes), f.contentType);
      for (const g of result.grids) await putGridWith(c, runId, g.name, g.meta, g.values);
      await updateRunWith(c, runId, result.record);
    });
  }

  async close(): Promise<void> {
    if (this.heartbeat !== null) clearInterval(this.heartbeat);
    this.heartbeat = null;
    await this.pool.query('DELETE FROM servers WHERE id = $1', [this.serverId]).catch(() => undefined);
    await this.pool.end();
  }
}

async function putBlobWith(c: Client, bytes: Uint8Array): Promise<string> {
  const hash = sha256Hex(bytes);
  await c.query('INSERT INTO blobs (hash, size, bytes) VALUES ($1, $2, $3) ON CONFLICT (hash) DO NOTHING', [
    hash,
    bytes.byteLength,
    Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength),
  ]);
  return hash;
}

async function putRunFileWith(c: Client, runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
  await c.query(
    `INSERT INTO run_files (run_id, name, ext, blob_hash, content_type) VALUES ($1, $2, $3, $4, $5)
     ON CONFLICT (run_id, name, ext) DO UPDATE SET blob_hash = excluded.blob_hash, content_type = excluded.content_type`,
    [runId, name, ext, hash, contentType],
  );
}

/** Stores a grid's values in bands of whole rows (replacing a grid of the same name). */
async function putGridWith(c: pg.PoolClient, runId: string, name: string, meta: StoredGridMeta, values: Float32Array): Promise<void> {
  const bandRows = Math.max(1, Math.floor(BAND_BYTES / (4 * Math.max(1, meta.width))));
  await c.query('DELETE FROM run_grids WHERE run_id = $1 AND name = $2', [runId, name]);
  await c.query('INSERT INTO run_grids (run_id, name, meta, band_rows) VALUES ($1, $2, $3, $4)', [runId, name, JSON.stringify(meta), bandRows]);
  for (let band = 0, row = 0; row < meta.height; band++, row += bandRows) {
    const part = values.subarray(row * meta.width, Math.min(meta.height, row + bandRows) * meta.width);
    await c.query('INSERT INTO grid_chunks (run_id, name, band, bytes) VALUES ($1, $2, $3, $4)', [
      runId,
      name,
      band,
      Buffer.from(part.buffer, part.byteOffset, part.byteLength),
    ]);
  }
}

async function updateRunWith(
  c: Client,
  id: string,
  patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>,
): Promise<void> {
  const json = new Set(['layers', 'summary', 'warnings', 'model', 'grids']);
  const allowed = new Set(['status', 'progress', 'message', ...json]);
  const sets: string[] = [];
  const vals: unknown[] = [];
  for (const [k, v] of Object.entries(patch)) {
    if (v === undefined || !allowed.has(k)) continue;
    vals.push(json.has(k) ? (v === null ? null : JSON.stringify(v)) : v);
    sets.push(`${k} = $${vals.length}`);
  }
  vals.push(new Date().toISOString());
  sets.push(`updated_at = $${vals.length}`);
  vals.push(id);
  await c.query(`UPDATE runs SET ${sets.join(', ')} WHERE id = $${vals.length}`, vals);
}

/** Float32 values of stored bytes, copied into an aligned buffer (a Buffer's offset need not be a multiple of 4). */
function float32Of(bytes: Uint8Array): Float32Array {
  const values = new Float32Array(bytes.byteLength / 4);
  new Uint8Array(values.buffer).set(bytes);
  return values;
}

const DATASET_COLUMNS = 'id, kind, feature_count, content_hash, title, created_at, bbox, octet_length(body) AS bytes';
const DATASET_COLUMNS_D = 'd.id, d.kind, d.feature_count, d.content_hash, d.title, d.created_at, d.bbox, octet_length(d.body) AS bytes';

interface DatasetRow {
  id: string;
  kind: string;
  feature_count: number;
  content_hash: string;
  title: string | null;
  created_at: string;
  bbox: string | null;
  bytes: number;
}

function datasetFromRow(r: DatasetRow): DatasetRecord {
  const bbox = r.bbox === null ? null : (JSON.parse(r.bbox) as [number, number, number, number]);
  return { id: r.id, kind: r.kind, featureCount: r.feature_count, contentHash: r.content_hash, title: r.title, createdAt: r.created_at, bbox, bytes: r.bytes };
}

function projectDataset(d: DatasetRecord, name: string, attachedAt: string): ProjectDatasetRecord {
  return { id: d.id, kind: d.kind, name, featureCount: d.featureCount, contentHash: d.contentHash, bbox: d.bbox, bytes: d.bytes, uploadedAt: attachedAt };
}

interface RunRow {
  id: string;
  cache_key: string;
  request: string;
  status: RunStatus;
  progress: number;
  message: string;
  layers: string;
  summary: string | null;
  warnings: string;
  model: string | null;
  grids: string;
  client: string;
  created_at: string;
  updated_at: string;
}

function runFromRow(r: RunRow): RunRecord {
  return {
    id: r.id,
    cacheKey: r.cache_key,
    request: JSON.parse(r.request),
    status: r.status,
    progress: r.progress,
    message: r.message,
    layers: JSON.parse(r.layers) as unknown[],
    summary: r.summary === null ? null : (JSON.parse(r.summary) as Record<string, unknown>),
    warnings: JSON.parse(r.warnings) as string[],
    model: r.model === null ? null : JSON.parse(r.model),
    grids: JSON.parse(r.grids) as string[],
    client: r.client,
    createdAt: r.created_at,
    updatedAt: r.updated_at,
  };
}
