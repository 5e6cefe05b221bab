/**
 * The team store: PostgreSQL behind the Store interface. Its schema and migrations are in postgres-schema.ts, the
 * writes shared by its transactions and the grid bands in postgres-writes.ts, the rows it shares with the SQLite
 * store in rows.ts.
 */
import pg from 'pg';
import { migratePostgres } from './postgres-schema.ts';
import { putBlobWith, putGridWith, putRunFileWith, readGridRows, updateRunWith } from './postgres-writes.ts';
import type { ProjectRecord, ProjectTerrainRecord, RunRecord, RunResultWrite, Store, StoredGridMeta } from './types.ts';
import { newId } from './ids.ts';
import { float32Of, runRowValues } from './rows.ts';
import { SqlStore, type TxStatement } from './sql-store.ts';

export { PG_MIGRATIONS, migratePostgres } from './postgres-schema.ts';

/** A server not seen for this long has stopped: its queued and running runs are failed (seconds). */
export const SERVER_STALE_SECONDS = 30;
const HEARTBEAT_MS = 5000;
/** The `owner` of runs the Redis run queue carries: no server's heartbeat decides their fate. */
const QUEUE_OWNER = 'queue';

/** The team store: a PostgreSQL database (node-postgres pool), migrated on open. */
export class PostgresStore extends SqlStore implements Store {
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
    super();
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

  /** `?` placeholders become PostgreSQL's numbered ones (the shared SQL has no other question mark). */
  protected async rows<T>(sql: string, params: unknown[] = []): Promise<T[]> {
    return (await this.pool.query(numbered(sql), params)).rows as T[];
  }

  protected async exec(sql: string, params: unknown[] = []): Promise<number> {
    return (await this.pool.query(numbered(sql), params)).rowCount ?? 0;
  }

  protected async execAll(statements: TxStatement[]): Promise<void> {
    await this.tx(async (c) => {
      for (const [sql, params, unlessChanged] of statements)
        if (((await c.query(numbered(sql), params)).rowCount ?? 0) === 0 && unlessChanged) throw unlessChanged;
    });
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

  async linkRunDatasets(runId: string, datasetIds: string[]): Promise<void> {
    if (datasetIds.length === 0) return;
    await this.pool.query('INSERT INTO run_datasets (run_id, dataset_id) SELECT $1, unnest($2::text[]) ON CONFLICT DO NOTHING', [runId, datasetIds]);
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

  async putRun(run: RunRecord): Promise<void> {
    await this.pool.query(
      `INSERT INTO runs (id, cache_key, request, status, progress, message, layers, summary, warnings, model, grids, client, created_at, updated_at, owner)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
      [...runRowValues(run), this.runOwner],
    );
  }

  /** Fails the queued and running runs of servers that stopped (not seen for SERVER_STALE_SECONDS); others' go on. */
  async failInterruptedRuns(message: string): Promise<number> {
    return this.failRunsOfStoppedServers(message);
  }

  async putBlob(bytes: Uint8Array): Promise<string> {
    return this.tx((c) => putBlobWith(c, bytes));
  }

  async putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
    await putRunFileWith(this.pool, runId, name, ext, hash, contentType);
  }

  /** Links a grid stored as a blob to a run: its values are copied into bands of rows. */
  async putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): Promise<void> {
    const bytes = await this.getBlob(hash);
    if (!bytes) throw new Error(`no blob ${hash}`);
    await this.tx((c) => putGridWith(c, runId, name, meta, float32Of(bytes)));
  }

  async getRunGrid(runId: string, name: string): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    return readGridRows(this.pool, runId, name, 0, Infinity);
  }

  /**
   * Rows [row0, row1) of a stored grid, reading only the bands that hold them (a tile or a window of a large grid
   * without the whole grid); null when the run has no such grid.
   */
  async getRunGridRows(runId: string, name: string, row0: number, row1: number): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    return readGridRows(this.pool, runId, name, row0, row1);
  }

  async storeRunResult(runId: string, result: RunResultWrite): Promise<void> {
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

function numbered(sql: string): string {
  let n = 0;
  return sql.replace(/\?/g, () => `$${++n}`);
}
