/** Schema migrations, applied in order; `PRAGMA user_version` records how many have run. */
export const MIGRATIONS: string[] = [
  `CREATE TABLE datasets (
     id TEXT PRIMARY KEY,
     kind TEXT NOT NULL,
     feature_count INTEGER NOT NULL,
     content_hash TEXT NOT NULL,
     title TEXT,
     body TEXT NOT NULL,
     created_at TEXT NOT NULL
   );
   CREATE INDEX datasets_hash ON datasets(content_hash);`,
  // Projects: the row holds only what never changes; every save is a new revision row (append-only).
  `CREATE TABLE projects (
     id TEXT PRIMARY KEY,
     token_hash TEXT NOT NULL,
     created_at TEXT NOT NULL
   );
   CREATE TABLE project_revisions (
     project_id TEXT NOT NULL REFERENCES projects(id),
     revision INTEGER NOT NULL,
     title TEXT NOT NULL,
     state TEXT NOT NULL,
     created_at TEXT NOT NULL,
     UNIQUE (project_id, revision)
   );
   CREATE TRIGGER project_revisions_no_update BEFORE UPDATE ON project_revisions
     BEGIN SELECT RAISE(ABORT, 'project revisions are append-only'); END;
   CREATE TRIGGER project_revisions_no_delete BEFORE DELETE ON project_revisions
     BEGIN SELECT RAISE(ABORT, 'project revisions are append-only'); END;
   CREATE TABLE blobs (
     hash TEXT PRIMARY KEY,
     size INTEGER NOT NULL,
     bytes BLOB NOT NULL
   );
   CREATE TABLE runs (
     id TEXT PRIMARY KEY,
     cache_key TEXT NOT NULL,
     request TEXT NOT NULL,
     status TEXT NOT NULL,
     progress REAL NOT NULL,
     message TEXT NOT NULL,
     layers TEXT NOT NULL,
     summary TEXT,
     warnings TEXT NOT NULL,
     model TEXT,
     grids TEXT NOT NULL,
     client TEXT NOT NULL,
     created_at TEXT NOT NULL,
     updated_at TEXT NOT NULL
   );
   CREATE INDEX runs_cache_key ON runs(cache_key, created_at);
   CREATE INDEX runs_status ON runs(status);
   CREATE TABLE run_files (
     run_id TEXT NOT NULL REFERENCES runs(id),
     name TEXT NOT NULL,
     ext TEXT NOT NULL,
     blob_hash TEXT NOT NULL REFERENCES blobs(hash),
     content_type TEXT NOT NULL,
     PRIMARY KEY (run_id, name, ext)
   );
   CREATE TABLE run_grids (
     run_id TEXT NOT NULL REFERENCES runs(id),
     name TEXT NOT NULL,
     meta TEXT NOT NULL,
     blob_hash TEXT NOT NULL REFERENCES blobs(hash),
     PRIMARY KEY (run_id, name)
   );`,
  // Projects own named data sets (an attachment: the content row stays shared and content-addressed), their runs
  // and an optional terrain. A detached data set keeps its row here (detached_at set), so the list of what a
  // project once held survives; its content stays while any revision, run or project refers to it.
  `ALTER TABLE datasets ADD COLUMN bbox TEXT;
   CREATE INDEX datasets_kind_hash ON datasets(kind, content_hash);
   CREATE TABLE project_datasets (
     project_id TEXT NOT NULL REFERENCES projects(id),
     dataset_id TEXT NOT NULL REFERENCES datasets(id),
     name TEXT NOT NULL,
     attached_at TEXT NOT NULL,
     detached_at TEXT,
     PRIMARY KEY (project_id, dataset_id)
   );
   CREATE INDEX project_datasets_dataset ON project_datasets(dataset_id);
   CREATE TABLE run_datasets (
     run_id TEXT NOT NULL REFERENCES runs(id),
     dataset_id TEXT NOT NULL,
     PRIMARY KEY (run_id, dataset_id)
   );
   CREATE INDEX run_datasets_dataset ON run_datasets(dataset_id);
   CREATE TABLE project_runs (
     project_id TEXT NOT NULL REFERENCES projects(id),
     run_id TEXT NOT NULL REFERENCES runs(id),
     created_at TEXT NOT NULL,
     PRIMARY KEY (project_id, run_id)
   );
   CREATE TABLE project_terrain (
     project_id TEXT PRIMARY KEY REFERENCES projects(id),
     blob_hash TEXT NOT NULL REFERENCES blobs(hash),
     meta TEXT NOT NULL,
     created_at TEXT NOT NULL
   );`,
  // Blobs in chunks of 16 KiB (BLOB_CHUNK_BYTES), so a reader takes only the chunks a byte range covers (a map
  // tile reads its COG's header and the tiles it samples). Existing blobs are cut into chunks here.
  `CREATE TABLE blob_chunks (
     hash TEXT NOT NULL REFERENCES blobs(hash),
     idx INTEGER NOT NULL,
     bytes BLOB NOT NULL,
     PRIMARY KEY (hash, idx)
   );
   INSERT INTO blob_chunks (hash, idx, bytes)
     WITH RECURSIVE c(hash, idx) AS (
       SELECT hash, 0 FROM blobs WHERE size > 0
       UNION ALL
       SELECT c.hash, c.idx + 1 FROM c JOIN blobs b ON b.hash = c.hash WHERE (c.idx + 1) * 16384 < b.size
     )
     SELECT c.hash, c.idx, substr(b.bytes, c.idx * 16384 + 1, 16384) FROM c JOIN blobs b ON b.hash = c.hash;
   ALTER TABLE blobs DROP COLUMN bytes;`,
  // A data set's body moves to its row's last column. SQLite keeps a long value in a chain of overflow pages and
  // reaches a column stored after it only by walking that chain: with the body before created_at and bbox, listing
  // a project's data sets read every page of every body (a 50 MB body: 13,000 pages, up to a second on a busy disk).
  // The table is rebuilt (SQLite cannot move a column) with foreign keys off (migrate() checks them afterwards).
  `CREATE TABLE datasets_rebuilt (
     id TEXT PRIMARY KEY,
     kind TEXT NOT NULL,
     feature_count INTEGER NOT NULL,
     content_hash TEXT NOT NULL,
     title TEXT,
     created_at TEXT NOT NULL,
     bbox TEXT,
     body TEXT NOT NULL
   );
   INSERT INTO datasets_rebuilt (id, kind, feature_count, content_hash, title, created_at, bbox, body)
     SELECT id, kind, feature_count, content_hash, title, created_at, bbox, body FROM datasets;
   DROP TABLE datasets;
   ALTER TABLE datasets_rebuilt RENAME TO datasets;
   CREATE INDEX datasets_hash ON datasets(content_hash);
   CREATE INDEX datasets_kind_hash ON datasets(kind, content_hash);`,
];
