import type pg from 'pg';

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
  {
    // Blobs in chunks of 16 KiB (BLOB_CHUNK_BYTES), so a reader takes only the chunks a byte range covers (a map tile
    // reads its COG's header and the tiles it samples). EXTERNAL: kept out of line uncompressed (COG tiles are
    // compressed already). Existing blobs are cut into chunks here.
    name: 'blobs in chunks',
    sql: `
     CREATE TABLE blob_chunks (
       hash TEXT NOT NULL REFERENCES blobs(hash), idx INTEGER NOT NULL, bytes BYTEA NOT NULL, PRIMARY KEY (hash, idx)
     );
     ALTER TABLE blob_chunks ALTER COLUMN bytes SET STORAGE EXTERNAL;
     INSERT INTO blob_chunks (hash, idx, bytes)
       SELECT b.hash, i, substring(b.bytes FROM i * 16384 + 1 FOR 16384)
       FROM blobs b, generate_series(0, (b.size - 1) / 16384) AS i WHERE b.size > 0;
     ALTER TABLE blobs DROP COLUMN bytes;`,
  },
];

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
