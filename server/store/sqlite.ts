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
import { MIGRATIONS } from './sqlite-schema.ts';
import {
  bboxOf,
  datasetRecord,
  float32Of,
  projectDataset,
  runFromRow,
  runRowValues,
  runPatchColumns,
  type DatasetRow,
  type RunPatch,
  type RunRow,
} from './rows.ts';

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
    let bbox = bboxOf(r);
    if (r.bbox === null && r.kind !== 'model') {
      const body = (this.db.prepare('SELECT body FROM datasets WHERE id = ?').get(r.id) as { body: string }).body;
      bbox = bodyBbox(body);
      if (bbox !== null) this.db.prepare('UPDATE datasets SET bbox = ? WHERE id = ?').run(JSON.stringify(bbox), r.id);
    }
    return datasetRecord(r, bbox);
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
    const values = float32Of(row.bytes);
    return { blobHash: row.blob_hash, meta: JSON.parse(row.meta) as ProjectTerrainRecord['meta'], createdAt: row.created_at, values };
  }

  async deleteProjectTerrain(projectId: string): Promise<boolean> {
    return this.db.prepare('DELETE FROM project_terrain WHERE project_id = ?').run(projectId).changes > 0;
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
      .run(...runRowValues(run));
  }

  async updateRun(id: string, patch: RunPatch): Promise<void> {
    return this.updateRunNow(id, patch);
  }

  private updateRunNow(id: string, patch: RunPatch): void {
    const cols = runPatchColumns(patch);
    this.db.prepare(`UPDATE runs SET ${cols.map((x) => `${x.column} = ?`).join(', ')} WHERE id = ?`).run(...cols.map((x) => x.value), id);
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
    return { meta: JSON.parse(row.meta) as StoredGridMeta, values: float32Of(row.bytes) };
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

function strip(r: DatasetRecord & { body?: string }): DatasetRecord {
  const { body: _body, ...rest } = r;
  return rest;
}
