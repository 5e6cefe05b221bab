import Database from 'better-sqlite3';
import { createHash, randomBytes } from 'node:crypto';
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
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

/** Schema migrations, applied in order; `PRAGMA user_version` records how many have run. */
const MIGRATIONS: string[] = [
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
];

/** A new random id: 16 bytes from the CSPRNG, base64url (22 characters). */
export function newId(prefix = ''): string {
  return prefix + randomBytes(16).toString('base64url');
}

export function sha256Hex(text: string | Uint8Array): string {
  return createHash('sha256').update(text).digest('hex');
}

/**
 * The embedded store: one SQLite file in WAL mode (better-sqlite3), created and migrated on open. better-sqlite3 is
 * synchronous: each method does its work before it returns, and is `async` only so that a failure reaches the caller
 * as a rejected Promise, as the Store interface promises. Transactions use the `…Now` helpers, which stay synchronous.
 */
export class SqliteStore implements Store {
  readonly kind = 'sqlite' as const;
  readonly db: Database.Database;

  constructor(path: string) {
    if (path !== ':memory:') mkdirSync(dirname(path), { recursive: true });
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    // FULL: a save acknowledged to a client is on disk even after a power cut, not only after a process kill.
    this.db.pragma('synchronous = FULL');
    this.db.pragma('foreign_keys = ON');
    this.db.pragma('busy_timeout = 5000');
    this.migrate();
  }

  private migrate(): void {
    const version = this.db.pragma('user_version', { simple: true }) as number;
    for (let v = version; v < MIGRATIONS.length; v++) {
      this.db.transaction(() => {
        this.db.exec(MIGRATIONS[v]);
        this.db.pragma(`user_version = ${v + 1}`);
      })();
    }
  }

  async putDataset(input: { id?: string; kind: string; body: string; featureCount: number; title?: string }): Promise<DatasetRecord> {
    const contentHash = sha256Hex(input.body);
    if (input.id !== undefined) {
      const existing = this.getDatasetNow(input.id);
      if (existing) return strip(existing);
    }
    const bbox = input.kind === 'model' ? null : bodyBbox(input.body);
    const rec: DatasetRecord = {
      id: input.id ?? newId('ds_'),
      kind: input.kind,
      featureCount: input.featureCount,
      contentHash,
      createdAt: new Date().toISOString(),
      title: input.title ?? null,
      bbox,
      bytes: Buffer.byteLength(input.body, 'utf8'),
    };
    this.db
      .prepare('INSERT INTO datasets (id, kind, feature_count, content_hash, title, body, created_at, bbox) VALUES (?, ?, ?, ?, ?, ?, ?, ?)')
      .run(rec.id, rec.kind, rec.featureCount, rec.contentHash, rec.title, input.body, rec.createdAt, bbox === null ? null : JSON.stringify(bbox));
    return rec;
  }

  async getDataset(id: string): Promise<(DatasetRecord & { body: string }) | null> {
    return this.getDatasetNow(id);
  }

  private getDatasetNow(id: string): (DatasetRecord & { body: string }) | null {
    const row = this.db.prepare(`SELECT ${DATASET_COLUMNS}, body FROM datasets WHERE id = ?`).get(id) as (DatasetRow & { body: string }) | undefined;
    if (!row) return null;
    return { ...this.datasetFromRow(row), body: row.body };
  }

  async listDatasets(): Promise<DatasetRecord[]> {
    const rows = this.db.prepare(`SELECT ${DATASET_COLUMNS} FROM datasets ORDER BY created_at, id`).all() as DatasetRow[];
    return rows.map((r) => this.datasetFromRow(r));
  }

  async findDatasetByContent(kind: string, contentHash: string): Promise<DatasetRecord | null> {
    const row = this.db
      .prepare(`SELECT ${DATASET_COLUMNS} FROM datasets WHERE kind = ? AND content_hash = ? ORDER BY created_at LIMIT 1`)
      .get(kind, contentHash) as DatasetRow | undefined;
    return row ? this.datasetFromRow(row) : null;
  }

  /** A record from its row; a bbox missing from a row stored before bboxes were kept is computed once and saved. */
  private datasetFromRow(r: DatasetRow): DatasetRecord {
    let bbox: DatasetRecord['bbox'] = r.bbox === null ? null : (JSON.parse(r.bbox) as [number, number, number, number]);
    if (r.bbox === null && r.kind !== 'model') {
      const body = (this.db.prepare('SELECT body FROM datasets WHERE id = ?').get(r.id) as { body: string }).body;
      bbox = bodyBbox(body);
      if (bbox !== null) this.db.prepare('UPDATE datasets SET bbox = ? WHERE id = ?').run(JSON.stringify(bbox), r.id);
    }
    return {
      id: r.id,
      kind: r.kind,
      featureCount: r.feature_count,
      contentHash: r.content_hash,
      title: r.title,
      createdAt: r.created_at,
      bbox,
      bytes: r.bytes,
    };
  }

  async attachDataset(projectId: string, datasetId: string, name: string): Promise<ProjectDatasetRecord> {
    const now = new Date().toISOString();
    this.db
      .prepare(
        `INSERT INTO project_datasets (project_id, dataset_id, name, attached_at, detached_at) VALUES (?, ?, ?, ?, NULL)
         ON CONFLICT (project_id, dataset_id) DO UPDATE SET name = excluded.name, attached_at = excluded.attached_at, detached_at = NULL`,
      )
      .run(projectId, datasetId, name, now);
    return this.getProjectDatasetNow(projectId, datasetId)!;
  }

  async listProjectDatasets(projectId: string): Promise<ProjectDatasetRecord[]> {
    const rows = this.db
      .prepare(
        `SELECT ${DATASET_COLUMNS_D}, p.name, p.attached_at FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = ? AND p.detached_at IS NULL ORDER BY p.attached_at, d.id`,
      )
      .all(projectId) as (DatasetRow & { name: string; attached_at: string })[];
    return rows.map((r) => projectDataset(this.datasetFromRow(r), r.name, r.attached_at));
  }

  async getProjectDataset(projectId: string, datasetId: string): Promise<ProjectDatasetRecord | null> {
    return this.getProjectDatasetNow(projectId, datasetId);
  }

  private getProjectDatasetNow(projectId: string, datasetId: string): ProjectDatasetRecord | null {
    const r = this.db
      .prepare(
        `SELECT ${DATASET_COLUMNS_D}, p.name, p.attached_at FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = ? AND p.dataset_id = ? AND p.detached_at IS NULL`,
      )
      .get(projectId, datasetId) as (DatasetRow & { name: string; attached_at: string }) | undefined;
    return r ? projectDataset(this.datasetFromRow(r), r.name, r.attached_at) : null;
  }

  async renameProjectDataset(projectId: string, datasetId: string, name: string): Promise<boolean> {
    return (
      this.db.prepare('UPDATE project_datasets SET name = ? WHERE project_id = ? AND dataset_id = ? AND detached_at IS NULL').run(name, projectId, datasetId)
        .changes > 0
    );
  }

  async detachProjectDataset(projectId: string, datasetId: string): Promise<boolean> {
    return (
      this.db
        .prepare('UPDATE project_datasets SET detached_at = ? WHERE project_id = ? AND dataset_id = ? AND detached_at IS NULL')
        .run(new Date().toISOString(), projectId, datasetId).changes > 0
    );
  }

  async pruneDataset(datasetId: string): Promise<boolean> {
    return this.db
      .transaction(() => {
        const attached = this.db.prepare('SELECT 1 FROM project_datasets WHERE dataset_id = ? AND detached_at IS NULL LIMIT 1').get(datasetId);
        const byRun = this.db.prepare('SELECT 1 FROM run_datasets WHERE dataset_id = ? LIMIT 1').get(datasetId);
        // A saved state (any revision of any project) that names the id keeps the content: revisions are append-only.
        const byRevision = this.db.prepare('SELECT 1 FROM project_revisions WHERE instr(state, ?) > 0 LIMIT 1').get(JSON.stringify(datasetId));
        if (attached || byRun || byRevision) return false;
        this.db.prepare('DELETE FROM project_datasets WHERE dataset_id = ?').run(datasetId);
        return this.db.prepare('DELETE FROM datasets WHERE id = ?').run(datasetId).changes > 0;
      })
      .immediate();
  }

  async projectStorageBytes(projectId: string): Promise<number> {
    const ds = this.db
      .prepare(
        'SELECT COALESCE(SUM(length(CAST(d.body AS BLOB))), 0) AS n FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = ? AND p.detached_at IS NULL',
      )
      .get(projectId) as { n: number };
    const t = this.db
      .prepare('SELECT COALESCE(SUM(b.size), 0) AS n FROM project_terrain t JOIN blobs b ON b.hash = t.blob_hash WHERE t.project_id = ?')
      .get(projectId) as { n: number };
    return ds.n + t.n;
  }

  async linkRunDatasets(runId: string, datasetIds: string[]): Promise<void> {
    const ins = this.db.prepare('INSERT OR IGNORE INTO run_datasets (run_id, dataset_id) VALUES (?, ?)');
    this.db.transaction(() => {
      for (const id of datasetIds) ins.run(runId, id);
    })();
  }

  async linkProjectRun(projectId: string, runId: string): Promise<void> {
    this.db.prepare('INSERT OR IGNORE INTO project_runs (project_id, run_id, created_at) VALUES (?, ?, ?)').run(projectId, runId, new Date().toISOString());
  }

  async listProjectRuns(projectId: string): Promise<ProjectRunInfo[]> {
    const rows = this.db
      .prepare(
        'SELECT r.id, r.status, r.request, p.created_at FROM project_runs p JOIN runs r ON r.id = p.run_id WHERE p.project_id = ? ORDER BY p.created_at, r.id',
      )
      .all(projectId) as { id: string; status: RunStatus; request: string; created_at: string }[];
    return rows.map((r) => {
      const title = (JSON.parse(r.request) as { title?: unknown }).title;
      return { id: r.id, status: r.status, title: typeof title === 'string' ? title : null, createdAt: r.created_at };
    });
  }

  async runProjects(runId: string): Promise<string[]> {
    return (this.db.prepare('SELECT project_id FROM project_runs WHERE run_id = ? ORDER BY created_at').all(runId) as { project_id: string }[]).map(
      (r) => r.project_id,
    );
  }

  async putProjectTerrain(projectId: string, values: Float32Array, meta: ProjectTerrainRecord['meta']): Promise<ProjectTerrainRecord> {
    const createdAt = new Date().toISOString();
    const blobHash = this.db.transaction(() => {
      const hash = this.putBlobNow(new Uint8Array(values.buffer, values.byteOffset, values.byteLength));
      this.db
        .prepare('INSERT OR REPLACE INTO project_terrain (project_id, blob_hash, meta, created_at) VALUES (?, ?, ?, ?)')
        .run(projectId, hash, JSON.stringify(meta), createdAt);
      return hash;
    })();
    return { blobHash, meta, createdAt };
  }

  async getProjectTerrain(projectId: string): Promise<(ProjectTerrainRecord & { values: Float32Array }) | null> {
    const row = this.db
      .prepare('SELECT t.blob_hash, t.meta, t.created_at, b.bytes FROM project_terrain t JOIN blobs b ON b.hash = t.blob_hash WHERE t.project_id = ?')
      .get(projectId) as { blob_hash: string; meta: string; created_at: string; bytes: Buffer } | undefined;
    if (!row) return null;
    const values = new Float32Array(row.bytes.byteLength / 4);
    new Uint8Array(values.buffer).set(row.bytes);
    return { blobHash: row.blob_hash, meta: JSON.parse(row.meta) as ProjectTerrainRecord['meta'], createdAt: row.created_at, values };
  }

  async createProject(input: { id: string; title: string; stateJson: string; tokenHash: string }): Promise<ProjectRecord> {
    const now = new Date().toISOString();
    this.db.transaction(() => {
      this.db.prepare('INSERT INTO projects (id, token_hash, created_at) VALUES (?, ?, ?)').run(input.id, input.tokenHash, now);
      this.db
        .prepare('INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES (?, 1, ?, ?, ?)')
        .run(input.id, input.title, input.stateJson, now);
    })();
    return { id: input.id, title: input.title, state: JSON.parse(input.stateJson), revision: 1, updatedAt: now, createdAt: now };
  }

  async getProject(id: string, revision?: number): Promise<ProjectRecord | null> {
    const row = (
      revision === undefined
        ? this.db
            .prepare(
              'SELECT r.revision, r.title, r.state, r.created_at, p.created_at AS p_created FROM project_revisions r JOIN projects p ON p.id = r.project_id WHERE r.project_id = ? ORDER BY r.revision DESC LIMIT 1',
            )
            .get(id)
        : this.db
            .prepare(
              'SELECT r.revision, r.title, r.state, r.created_at, p.created_at AS p_created FROM project_revisions r JOIN projects p ON p.id = r.project_id WHERE r.project_id = ? AND r.revision = ?',
            )
            .get(id, revision)
    ) as { revision: number; title: string; state: string; created_at: string; p_created: string } | undefined;
    if (!row) return null;
    return { id, title: row.title, state: JSON.parse(row.state), revision: row.revision, updatedAt: row.created_at, createdAt: row.p_created };
  }

  async getProjectTokenHash(id: string): Promise<string | null> {
    return this.getProjectTokenHashNow(id);
  }

  private getProjectTokenHashNow(id: string): string | null {
    const row = this.db.prepare('SELECT token_hash FROM projects WHERE id = ?').get(id) as { token_hash: string } | undefined;
    return row?.token_hash ?? null;
  }

  async appendRevision(id: string, input: { title?: string; stateJson: string }): Promise<number> {
    // IMMEDIATE takes the write lock before reading the head, so two saves never compute the same number.
    return this.db
      .transaction(() => {
        const head = this.db.prepare('SELECT revision, title FROM project_revisions WHERE project_id = ? ORDER BY revision DESC LIMIT 1').get(id) as
          { revision: number; title: string } | undefined;
        if (!head) throw new Error(`no project ${id}`);
        const next = head.revision + 1;
        this.db
          .prepare('INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES (?, ?, ?, ?, ?)')
          .run(id, next, input.title ?? head.title, input.stateJson, new Date().toISOString());
        return next;
      })
      .immediate();
  }

  async listRevisions(id: string): Promise<RevisionInfo[] | null> {
    if (this.getProjectTokenHashNow(id) === null) return null;
    const rows = this.db
      .prepare('SELECT revision, title, created_at, length(state) AS n FROM project_revisions WHERE project_id = ? ORDER BY revision')
      .all(id) as {
      revision: number;
      title: string;
      created_at: string;
      n: number;
    }[];
    return rows.map((r) => ({ revision: r.revision, title: r.title, createdAt: r.created_at, stateBytes: r.n }));
  }

  async putRun(run: RunRecord): Promise<void> {
    this.db
      .prepare(
        `INSERT INTO runs (id, cache_key, request, status, progress, message, layers, summary, warnings, model, grids, client, created_at, updated_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(
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
      );
  }

  async updateRun(
    id: string,
    patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>,
  ): Promise<void> {
    return this.updateRunNow(id, patch);
  }

  private updateRunNow(
    id: string,
    patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>,
  ): void {
    const sets: string[] = [];
    const vals: unknown[] = [];
    const json = new Set(['layers', 'summary', 'warnings', 'model', 'grids']);
    for (const [k, v] of Object.entries(patch)) {
      if (v === undefined) continue;
      sets.push(`${k} = ?`);
      vals.push(json.has(k) ? (v === null ? null : JSON.stringify(v)) : v);
    }
    sets.push('updated_at = ?');
    vals.push(new Date().toISOString());
    this.db.prepare(`UPDATE runs SET ${sets.join(', ')} WHERE id = ?`).run(...vals, id);
  }

  async getRun(id: string): Promise<RunRecord | null> {
    const row = this.db.prepare('SELECT * FROM runs WHERE id = ?').get(id) as RunRow | undefined;
    return row ? runFromRow(row) : null;
  }

  async findRunByCacheKey(cacheKey: string, statuses: RunStatus[]): Promise<RunRecord | null> {
    if (statuses.length === 0) return null;
    const row = this.db
      .prepare(`SELECT * FROM runs WHERE cache_key = ? AND status IN (${statuses.map(() => '?').join(', ')}) ORDER BY created_at DESC LIMIT 1`)
      .get(cacheKey, ...statuses) as RunRow | undefined;
    return row ? runFromRow(row) : null;
  }

  async failInterruptedRuns(message: string): Promise<number> {
    return this.db
      .prepare("UPDATE runs SET status = 'failed', message = ?, updated_at = ? WHERE status IN ('queued', 'running')")
      .run(message, new Date().toISOString()).changes;
  }

  async putBlob(bytes: Uint8Array): Promise<string> {
    return this.putBlobNow(bytes);
  }

  private putBlobNow(bytes: Uint8Array): string {
    const hash = sha256Hex(bytes);
    this.db
      .prepare('INSERT OR IGNORE INTO blobs (hash, size, bytes) VALUES (?, ?, ?)')
      .run(hash, bytes.byteLength, Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength));
    return hash;
  }

  async getBlob(hash: string): Promise<Uint8Array | null> {
    const row = this.db.prepare('SELECT bytes FROM blobs WHERE hash = ?').get(hash) as { bytes: Buffer } | undefined;
    return row ? new Uint8Array(row.bytes.buffer, row.bytes.byteOffset, row.bytes.byteLength) : null;
  }

  async putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
    return this.putRunFileNow(runId, name, ext, hash, contentType);
  }

  private putRunFileNow(runId: string, name: string, ext: string, hash: string, contentType: string): void {
    this.db
      .prepare('INSERT OR REPLACE INTO run_files (run_id, name, ext, blob_hash, content_type) VALUES (?, ?, ?, ?, ?)')
      .run(runId, name, ext, hash, contentType);
  }

  async getRunFile(runId: string, name: string, ext: string): Promise<{ bytes: Uint8Array; contentType: string; hash: string } | null> {
    const row = this.db
      .prepare(
        'SELECT f.content_type, f.blob_hash, b.bytes FROM run_files f JOIN blobs b ON b.hash = f.blob_hash WHERE f.run_id = ? AND f.name = ? AND f.ext = ?',
      )
      .get(runId, name, ext) as { content_type: string; blob_hash: string; bytes: Buffer } | undefined;
    if (!row) return null;
    return { bytes: new Uint8Array(row.bytes.buffer, row.bytes.byteOffset, row.bytes.byteLength), contentType: row.content_type, hash: row.blob_hash };
  }

  async putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): Promise<void> {
    return this.putRunGridNow(runId, name, meta, hash);
  }

  private putRunGridNow(runId: string, name: string, meta: StoredGridMeta, hash: string): void {
    this.db.prepare('INSERT OR REPLACE INTO run_grids (run_id, name, meta, blob_hash) VALUES (?, ?, ?, ?)').run(runId, name, JSON.stringify(meta), hash);
  }

  async getRunGrid(runId: string, name: string): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    const row = this.db
      .prepare('SELECT g.meta, b.bytes FROM run_grids g JOIN blobs b ON b.hash = g.blob_hash WHERE g.run_id = ? AND g.name = ?')
      .get(runId, name) as { meta: string; bytes: Buffer } | undefined;
    if (!row) return null;
    // Copy into an aligned buffer: a Buffer's offset inside its pool need not be a multiple of 4.
    const values = new Float32Array(row.bytes.byteLength / 4);
    new Uint8Array(values.buffer).set(row.bytes);
    return { meta: JSON.parse(row.meta) as StoredGridMeta, values };
  }

  async storeRunResult(
    runId: string,
    result: {
      files: { name: string; ext: string; bytes: Uint8Array; contentType: string }[];
      grids: { name: string; meta: StoredGridMeta; values: Float32Array }[];
      record: Partial<Pick<RunRecord, 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>;
    },
  ): Promise<void> {
    this.db.transaction(() => {
      for (const f of result.files) this.putRunFileNow(runId, f.name, f.ext, this.putBlobNow(f.bytes), f.contentType);
      for (const g of result.grids) {
        const bytes = new Uint8Array(g.values.buffer, g.values.byteOffset, g.values.byteLength);
        this.putRunGridNow(runId, g.name, g.meta, this.putBlobNow(bytes));
      }
      this.updateRunNow(runId, result.record);
    })();
  }

  async close(): Promise<void> {
    this.db.close();
  }
}

const DATASET_COLUMNS = 'id, kind, feature_count, content_hash, title, created_at, bbox, length(CAST(body AS BLOB)) AS bytes';
const DATASET_COLUMNS_D = 'd.id, d.kind, d.feature_count, d.content_hash, d.title, d.created_at, d.bbox, length(CAST(d.body AS BLOB)) AS bytes';

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

function strip(r: DatasetRecord & { body?: string }): DatasetRecord {
  const { body: _body, ...rest } = r;
  return rest;
}
