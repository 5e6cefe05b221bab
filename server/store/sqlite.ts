import Database from 'better-sqlite3';
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
import type { DatasetRecord, ProjectRecord, ProjectTerrainRecord, RunRecord, RunResultWrite, Store, StoredGridMeta } from './types.ts';
import { bodyBbox } from './bbox.ts';
import { sha256Hex } from './ids.ts';
import { MIGRATIONS } from './sqlite-schema.ts';
import { isLargeParam, SqliteWriter } from './sqlite-offthread.ts';
import { bboxOf, datasetRecord, float32Of, runRowValues, runPatchColumns, type DatasetRow, type RunPatch } from './rows.ts';
import { SqlStore, blobChunks, type TxStatement } from './sql-store.ts';

export { newId, sha256Hex } from './ids.ts';

/**
 * The embedded store: one SQLite file in WAL mode (better-sqlite3), created and migrated on open. better-sqlite3 is
 * synchronous: each method does its work before it returns, and is `async` only so that a failure reaches the caller
 * as a rejected Promise, as the Store interface promises. Transactions use the `…Now` helpers, which stay synchronous.
 * The methods of one statement are shared with the PostgreSQL store (sql-store.ts). Large writes run on the writer
 * thread (sqlite-offthread.ts); every other write first awaits `writable()`, so it never waits for the writer's
 * lock inside SQLite, on the request thread.
 */
export class SqliteStore extends SqlStore implements Store {
  readonly kind = 'sqlite' as const;
  readonly db: Database.Database;
  private readonly writer: SqliteWriter | null;

  constructor(path: string) {
    super();
    if (path !== ':memory:') mkdirSync(dirname(path), { recursive: true });
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    // FULL: a save acknowledged to a client is on disk even after a power cut, not only after a process kill.
    this.db.pragma('synchronous = FULL');
    this.db.pragma('foreign_keys = ON');
    this.db.pragma('busy_timeout = 5000');
    this.migrate();
    this.writer = this.db.memory ? null : new SqliteWriter(this.db.name);
  }

  /** Settles when a write on this connection will not meet the writer thread's lock (at once when it is idle). */
  private async writable(): Promise<void> {
    if (this.writer) await this.writer.idle();
  }

  /**
   * Applies the migrations not yet applied, each in a transaction, with foreign keys off while they run (so a table
   * can be rebuilt: SQLite's documented way to change one) and checked before each commits.
   */
  private migrate(): void {
    const version = this.db.pragma('user_version', { simple: true }) as number;
    if (version >= MIGRATIONS.length) return;
    this.db.pragma('foreign_keys = OFF');
    try {
      for (let v = version; v < MIGRATIONS.length; v++) {
        this.db.transaction(() => {
          this.db.exec(MIGRATIONS[v]);
          const broken = this.db.pragma('foreign_key_check') as unknown[];
          if (broken.length > 0) throw new Error(`migration ${v + 1} left ${broken.length} rows whose references do not resolve`);
          this.db.pragma(`user_version = ${v + 1}`);
        })();
      }
    } finally {
      this.db.pragma('foreign_keys = ON');
    }
  }

  protected async rows<T>(sql: string, params: unknown[] = []): Promise<T[]> {
    return this.db.prepare(sql).all(...params) as T[];
  }

  protected async exec(sql: string, params: unknown[] = []): Promise<number> {
    await this.writable();
    return this.db.prepare(sql).run(...params).changes;
  }

  protected async execAll(statements: TxStatement[]): Promise<void> {
    await this.writable();
    this.db
      .transaction(() => {
        for (const [sql, params, unlessChanged] of statements) if (this.db.prepare(sql).run(...params).changes === 0 && unlessChanged) throw unlessChanged;
      })
      .immediate();
  }

  /**
   * A statement writing a string or bytes of OFF_THREAD_WRITE_CHARS or more (a large data set body) runs on the
   * writer thread (sqlite-offthread.ts), so its commit never holds the request thread; smaller ones run here.
   * Bytes are UTF-8 text, stored as text.
   */
  protected override async execLarge(sql: string, params: unknown[]): Promise<number> {
    if (this.writer && params.some(isLargeParam)) return await this.writer.write(sql, params);
    return await super.execLarge(sql, params);
  }

  /**
   * A record from its row; a bbox missing from a row stored before bboxes were kept is computed and saved (not
   * while the writer thread holds the lock: then it is saved on a later read).
   */
  protected override datasetFromRow(r: DatasetRow): DatasetRecord {
    let bbox = bboxOf(r);
    if (r.bbox === null && r.kind !== 'model') {
      const body = (this.db.prepare('SELECT body FROM datasets WHERE id = ?').get(r.id) as { body: string }).body;
      bbox = bodyBbox(body);
      if (bbox !== null && !this.writer?.busy) this.db.prepare('UPDATE datasets SET bbox = ? WHERE id = ?').run(JSON.stringify(bbox), r.id);
    }
    return datasetRecord(r, bbox);
  }

  async pruneDataset(datasetId: string): Promise<boolean> {
    await this.writable();
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

  async linkRunDatasets(runId: string, datasetIds: string[]): Promise<void> {
    await this.writable();
    const ins = this.db.prepare('INSERT OR IGNORE INTO run_datasets (run_id, dataset_id) VALUES (?, ?)');
    this.db.transaction(() => {
      for (const id of datasetIds) ins.run(runId, id);
    })();
  }

  async putProjectTerrain(projectId: string, values: Float32Array, meta: ProjectTerrainRecord['meta']): Promise<ProjectTerrainRecord> {
    await this.writable();
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

  async createProject(input: { id: string; title: string; stateJson: string; tokenHash: string }): Promise<ProjectRecord> {
    await this.writable();
    const now = new Date().toISOString();
    this.db.transaction(() => {
      this.db.prepare('INSERT INTO projects (id, token_hash, created_at) VALUES (?, ?, ?)').run(input.id, input.tokenHash, now);
      this.db
        .prepare('INSERT INTO project_revisions (project_id, revision, title, state, created_at) VALUES (?, 1, ?, ?, ?)')
        .run(input.id, input.title, input.stateJson, now);
    })();
    return { id: input.id, title: input.title, state: JSON.parse(input.stateJson), revision: 1, updatedAt: now, createdAt: now };
  }

  async appendRevision(id: string, input: { title?: string; stateJson: string }): Promise<number> {
    await this.writable();
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

  async putRun(run: RunRecord): Promise<void> {
    await this.writable();
    this.db
      .prepare(
        `INSERT INTO runs (id, cache_key, request, status, progress, message, layers, summary, warnings, model, grids, client, created_at, updated_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(...runRowValues(run));
  }

  private updateRunNow(id: string, patch: RunPatch): void {
    const cols = runPatchColumns(patch);
    this.db.prepare(`UPDATE runs SET ${cols.map((x) => `${x.column} = ?`).join(', ')} WHERE id = ?`).run(...cols.map((x) => x.value), id);
  }

  async failInterruptedRuns(message: string): Promise<number> {
    await this.writable();
    return this.db
      .prepare("UPDATE runs SET status = 'failed', message = ?, updated_at = ? WHERE status IN ('queued', 'running')")
      .run(message, new Date().toISOString()).changes;
  }

  async putBlob(bytes: Uint8Array): Promise<string> {
    await this.writable();
    return this.putBlobNow(bytes);
  }

  /** Stores a blob once, in chunks (a blob already stored under its hash is kept as it is). */
  private putBlobNow(bytes: Uint8Array): string {
    const hash = sha256Hex(bytes);
    this.db.transaction(() => {
      if (this.db.prepare('INSERT OR IGNORE INTO blobs (hash, size) VALUES (?, ?)').run(hash, bytes.byteLength).changes === 0) return;
      const ins = this.db.prepare('INSERT INTO blob_chunks (hash, idx, bytes) VALUES (?, ?, ?)');
      blobChunks(bytes).forEach((c, idx) => ins.run(hash, idx, c));
    })();
    return hash;
  }

  async putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
    await this.writable();
    return this.putRunFileNow(runId, name, ext, hash, contentType);
  }

  private putRunFileNow(runId: string, name: string, ext: string, hash: string, contentType: string): void {
    this.db
      .prepare('INSERT OR REPLACE INTO run_files (run_id, name, ext, blob_hash, content_type) VALUES (?, ?, ?, ?, ?)')
      .run(runId, name, ext, hash, contentType);
  }

  async putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): Promise<void> {
    await this.writable();
    return this.putRunGridNow(runId, name, meta, hash);
  }

  private putRunGridNow(runId: string, name: string, meta: StoredGridMeta, hash: string): void {
    this.db.prepare('INSERT OR REPLACE INTO run_grids (run_id, name, meta, blob_hash) VALUES (?, ?, ?, ?)').run(runId, name, JSON.stringify(meta), hash);
  }

  async getRunGrid(runId: string, name: string): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
    const row = this.db.prepare('SELECT meta, blob_hash FROM run_grids WHERE run_id = ? AND name = ?').get(runId, name) as
      { meta: string; blob_hash: string } | undefined;
    const bytes = row ? await this.getBlob(row.blob_hash) : null;
    if (!row || !bytes) return null;
    return { meta: JSON.parse(row.meta) as StoredGridMeta, values: float32Of(bytes) };
  }

  async storeRunResult(runId: string, result: RunResultWrite): Promise<void> {
    await this.writable();
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
    await this.writer?.close();
    this.db.close();
  }
}
