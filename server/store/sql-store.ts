/**
 * What the SQLite and PostgreSQL stores share: every Store method that is one statement (or a few, outside any
 * transaction) is written once here, in SQL both engines read alike (`?` placeholders, `ON CONFLICT`, `octet_length`).
 * Each store supplies `rows` and `exec` for its engine and keeps its own transactions (SQLite's are synchronous,
 * PostgreSQL's hold a pooled client), its run ownership and its grid layout.
 *
 * Blobs (layer files, terrain pixels, grids) are kept in chunks of BLOB_CHUNK_BYTES (`blob_chunks`, keyed by the
 * blob's hash and the chunk's index), so a reader takes only the chunks a byte range covers: a map tile reads the
 * COG's header and the tiles it samples, never the whole file.
 */
import type {
  DatasetInput,
  DatasetRecord,
  ProjectDatasetRecord,
  ProjectRecord,
  ProjectRunInfo,
  ProjectTerrainRecord,
  RevisionInfo,
  RunRecord,
  RunStatus,
  StoredFileInfo,
} from './types.ts';
import { datasetChangedError } from './errors.ts';
import { bodyBbox } from './bbox.ts';
import { newId, sha256Hex } from './ids.ts';
import { bboxOf, datasetRecord, float32Of, projectDataset, runFromRow, runPatchColumns, type DatasetRow, type RunPatch, type RunRow } from './rows.ts';

/** Bytes per stored blob chunk (the last chunk of a blob may be shorter). */
export const BLOB_CHUNK_BYTES = 16 * 1024;

/** A blob's bytes cut into its stored chunks. */
export function blobChunks(bytes: Uint8Array): Buffer[] {
  const out: Buffer[] = [];
  for (let at = 0; at < bytes.byteLength; at += BLOB_CHUNK_BYTES) {
    const end = Math.min(bytes.byteLength, at + BLOB_CHUNK_BYTES);
    out.push(Buffer.from(bytes.buffer, bytes.byteOffset + at, end - at));
  }
  return out;
}

/** A data set body as text (bytes are its UTF-8). */
export function textOf(body: string | Uint8Array): string {
  return typeof body === 'string' ? body : new TextDecoder().decode(body);
}

const DATASET_COLUMNS = 'id, kind, feature_count, content_hash, title, created_at, bbox, octet_length(body) AS bytes';
const DATASET_COLUMNS_D = 'd.id, d.kind, d.feature_count, d.content_hash, d.title, d.created_at, d.bbox, octet_length(d.body) AS bytes';
const PROJECT_DATASETS = `SELECT ${DATASET_COLUMNS_D}, p.name, p.attached_at FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = ?`;
const PROJECT_HEAD =
  'SELECT r.revision, r.title, r.state, r.created_at, p.created_at AS p_created FROM project_revisions r JOIN projects p ON p.id = r.project_id WHERE r.project_id = ?';

/** One statement of a transaction: SQL, parameters and, when it must change a row, the error to throw otherwise. */
export type TxStatement = [sql: string, params: unknown[], unlessChanged?: Error];

type AttachedRow = DatasetRow & { name: string; attached_at: string };

export abstract class SqlStore {
  /** Rows of one statement (`?` placeholders). */
  protected abstract rows<T>(sql: string, params?: unknown[]): Promise<T[]>;
  /** Runs one statement (`?` placeholders); returns how many rows it changed. */
  protected abstract exec(sql: string, params?: unknown[]): Promise<number>;
  /**
   * Runs statements (`?` placeholders) in one transaction: all of them, or none when one fails. A statement given an
   * error as its third member must change a row: when it changes none, that error is thrown and nothing is written.
   */
  protected abstract execAll(statements: TxStatement[]): Promise<void>;

  /** A data set's record from its row (a store may complete what older rows lack). */
  protected datasetFromRow(r: DatasetRow): DatasetRecord {
    return datasetRecord(r, bboxOf(r));
  }

  private async one<T>(sql: string, params: unknown[]): Promise<T | null> {
    return (await this.rows<T>(sql, params))[0] ?? null;
  }

  /**
   * Runs one statement that writes a large value (a data set body); a store may move it off the request thread.
   * A Uint8Array parameter is UTF-8 text and is stored as text.
   */
  protected async execLarge(sql: string, params: unknown[]): Promise<number> {
    return await this.exec(
      sql,
      params.map((p) => (p instanceof Uint8Array ? textOf(p) : p)),
    );
  }

  async putDataset(input: DatasetInput): Promise<DatasetRecord> {
    if (input.id !== undefined) {
      const existing = await this.getDataset(input.id);
      if (existing) {
        const { body: _body, ...rest } = existing;
        return rest;
      }
    }
    const bbox = input.kind === 'model' ? null : input.bbox !== undefined ? input.bbox : bodyBbox(textOf(input.body));
    const rec: DatasetRecord = {
      id: input.id ?? newId('ds_'),
      kind: input.kind,
      featureCount: input.featureCount,
      contentHash: input.contentHash ?? sha256Hex(input.body),
      createdAt: new Date().toISOString(),
      title: input.title ?? null,
      bbox,
      bytes: typeof input.body === 'string' ? Buffer.byteLength(input.body, 'utf8') : input.body.byteLength,
    };
    await this.execLarge('INSERT INTO datasets (id, kind, feature_count, content_hash, title, body, created_at, bbox) VALUES (?, ?, ?, ?, ?, ?, ?, ?)', [
      rec.id,
      rec.kind,
      rec.featureCount,
      rec.contentHash,
      rec.title,
      input.body,
      rec.createdAt,
      bbox === null ? null : JSON.stringify(bbox),
    ]);
    return rec;
  }

  async getDataset(id: string): Promise<(DatasetRecord & { body: string }) | null> {
    const row = await this.one<DatasetRow & { body: string }>(`SELECT ${DATASET_COLUMNS}, body FROM datasets WHERE id = ?`, [id]);
    return row ? { ...this.datasetFromRow(row), body: row.body } : null;
  }

  async listDatasets(): Promise<DatasetRecord[]> {
    return (await this.rows<DatasetRow>(`SELECT ${DATASET_COLUMNS} FROM datasets ORDER BY created_at, id`)).map((r) => this.datasetFromRow(r));
  }

  async findDatasetByContent(kind: string, contentHash: string): Promise<DatasetRecord | null> {
    const sql = `SELECT ${DATASET_COLUMNS} FROM datasets WHERE kind = ? AND content_hash = ? ORDER BY created_at LIMIT 1`;
    const row = await this.one<DatasetRow>(sql, [kind, contentHash]);
    return row ? this.datasetFromRow(row) : null;
  }

  async attachDataset(projectId: string, datasetId: string, name: string): Promise<ProjectDatasetRecord> {
    await this.exec(
      `INSERT INTO project_datasets (project_id, dataset_id, name, attached_at, detached_at) VALUES (?, ?, ?, ?, NULL)
       ON CONFLICT (project_id, dataset_id) DO UPDATE SET name = excluded.name, attached_at = excluded.attached_at, detached_at = NULL`,
      [projectId, datasetId, name, new Date().toISOString()],
    );
    return (await this.getProjectDataset(projectId, datasetId))!;
  }

  async replaceProjectDataset(projectId: string, oldId: string, newId: string, name: string): Promise<ProjectDatasetRecord> {
    const now = new Date().toISOString();
    // Another request that replaced or removed `oldId` first leaves nothing to detach: this one then writes nothing.
    const gone = datasetChangedError(projectId, oldId);
    await this.execAll([
      ['UPDATE project_datasets SET detached_at = ? WHERE project_id = ? AND dataset_id = ? AND detached_at IS NULL', [now, projectId, oldId], gone],
      [
        `INSERT INTO project_datasets (project_id, dataset_id, name, attached_at, detached_at) VALUES (?, ?, ?, ?, NULL)
         ON CONFLICT (project_id, dataset_id) DO UPDATE SET name = excluded.name,
           attached_at = CASE WHEN project_datasets.detached_at IS NULL THEN project_datasets.attached_at ELSE excluded.attached_at END, detached_at = NULL`,
        [projectId, newId, name, now],
      ],
    ]);
    return (await this.getProjectDataset(projectId, newId))!;
  }

  async listProjectDatasets(projectId: string): Promise<ProjectDatasetRecord[]> {
    const rows = await this.rows<AttachedRow>(`${PROJECT_DATASETS} AND p.detached_at IS NULL ORDER BY p.attached_at, d.id`, [projectId]);
    return rows.map((r) => projectDataset(this.datasetFromRow(r), r.name, r.attached_at));
  }

  async getProjectDataset(projectId: string, datasetId: string): Promise<ProjectDatasetRecord | null> {
    const r = await this.one<AttachedRow>(`${PROJECT_DATASETS} AND p.dataset_id = ? AND p.detached_at IS NULL`, [projectId, datasetId]);
    return r ? projectDataset(this.datasetFromRow(r), r.name, r.attached_at) : null;
  }

  async renameProjectDataset(projectId: string, datasetId: string, name: string): Promise<boolean> {
    const sql = 'UPDATE project_datasets SET name = ? WHERE project_id = ? AND dataset_id = ? AND detached_at IS NULL';
    return (await this.exec(sql, [name, projectId, datasetId])) > 0;
  }

  async detachProjectDataset(projectId: string, datasetId: string): Promise<boolean> {
    const sql = 'UPDATE project_datasets SET detached_at = ? WHERE project_id = ? AND dataset_id = ? AND detached_at IS NULL';
    return (await this.exec(sql, [new Date().toISOString(), projectId, datasetId])) > 0;
  }

  async projectStorageBytes(projectId: string): Promise<number> {
    const ds = await this.one<{ n: string | number }>(
      'SELECT COALESCE(SUM(octet_length(d.body)), 0) AS n FROM project_datasets p JOIN datasets d ON d.id = p.dataset_id WHERE p.project_id = ? AND p.detached_at IS NULL',
      [projectId],
    );
    const t = await this.one<{ n: string | number }>(
      'SELECT COALESCE(SUM(b.size), 0) AS n FROM project_terrain t JOIN blobs b ON b.hash = t.blob_hash WHERE t.project_id = ?',
      [projectId],
    );
    return Number(ds!.n) + Number(t!.n);
  }

  async linkProjectRun(projectId: string, runId: string): Promise<void> {
    const sql = 'INSERT INTO project_runs (project_id, run_id, created_at) VALUES (?, ?, ?) ON CONFLICT DO NOTHING';
    await this.exec(sql, [projectId, runId, new Date().toISOString()]);
  }

  async listProjectRuns(projectId: string): Promise<ProjectRunInfo[]> {
    const rows = await this.rows<{ id: string; status: RunStatus; request: string; created_at: string }>(
      'SELECT r.id, r.status, r.request, p.created_at FROM project_runs p JOIN runs r ON r.id = p.run_id WHERE p.project_id = ? ORDER BY p.created_at, r.id',
      [projectId],
    );
    return rows.map((r) => {
      const title = (JSON.parse(r.request) as { title?: unknown }).title;
      return { id: r.id, status: r.status, title: typeof title === 'string' ? title : null, createdAt: r.created_at };
    });
  }

  async runProjects(runId: string): Promise<string[]> {
    const rows = await this.rows<{ project_id: string }>('SELECT project_id FROM project_runs WHERE run_id = ? ORDER BY created_at', [runId]);
    return rows.map((r) => r.project_id);
  }

  async getProjectTerrain(projectId: string): Promise<(ProjectTerrainRecord & { values: Float32Array }) | null> {
    const sql = 'SELECT blob_hash, meta, created_at FROM project_terrain WHERE project_id = ?';
    const row = await this.one<{ blob_hash: string; meta: string; created_at: string }>(sql, [projectId]);
    const bytes = row ? await this.getBlob(row.blob_hash) : null;
    if (!row || !bytes) return null;
    return { blobHash: row.blob_hash, meta: JSON.parse(row.meta) as ProjectTerrainRecord['meta'], createdAt: row.created_at, values: float32Of(bytes) };
  }

  async deleteProjectTerrain(projectId: string): Promise<boolean> {
    return (await this.exec('DELETE FROM project_terrain WHERE project_id = ?', [projectId])) > 0;
  }

  async getProject(id: string, revision?: number): Promise<ProjectRecord | null> {
    const row = await this.one<{ revision: number; title: string; state: string; created_at: string; p_created: string }>(
      revision === undefined ? `${PROJECT_HEAD} ORDER BY r.revision DESC LIMIT 1` : `${PROJECT_HEAD} AND r.revision = ?`,
      revision === undefined ? [id] : [id, revision],
    );
    if (!row) return null;
    return { id, title: row.title, state: JSON.parse(row.state), revision: row.revision, updatedAt: row.created_at, createdAt: row.p_created };
  }

  async getProjectTokenHash(id: string): Promise<string | null> {
    return (await this.one<{ token_hash: string }>('SELECT token_hash FROM projects WHERE id = ?', [id]))?.token_hash ?? null;
  }

  async listRevisions(id: string): Promise<RevisionInfo[] | null> {
    if ((await this.getProjectTokenHash(id)) === null) return null;
    const rows = await this.rows<{ revision: number; title: string; created_at: string; n: number }>(
      'SELECT revision, title, created_at, length(state) AS n FROM project_revisions WHERE project_id = ? ORDER BY revision',
      [id],
    );
    return rows.map((r) => ({ revision: r.revision, title: r.title, createdAt: r.created_at, stateBytes: Number(r.n) }));
  }

  async updateRun(id: string, patch: RunPatch): Promise<void> {
    const cols = runPatchColumns(patch);
    await this.exec(`UPDATE runs SET ${cols.map((x) => `${x.column} = ?`).join(', ')} WHERE id = ?`, [...cols.map((x) => x.value), id]);
  }

  async getRun(id: string): Promise<RunRecord | null> {
    const row = await this.one<RunRow>('SELECT * FROM runs WHERE id = ?', [id]);
    return row ? runFromRow(row) : null;
  }

  async findRunByCacheKey(cacheKey: string, statuses: RunStatus[]): Promise<RunRecord | null> {
    if (statuses.length === 0) return null;
    const sql = `SELECT * FROM runs WHERE cache_key = ? AND status IN (${statuses.map(() => '?').join(', ')}) ORDER BY created_at DESC LIMIT 1`;
    const row = await this.one<RunRow>(sql, [cacheKey, ...statuses]);
    return row ? runFromRow(row) : null;
  }

  async blobSize(hash: string): Promise<number | null> {
    const row = await this.one<{ size: number | string }>('SELECT size FROM blobs WHERE hash = ?', [hash]);
    return row ? Number(row.size) : null;
  }

  async readBlobChunks(hash: string, first: number, last: number): Promise<Uint8Array[]> {
    const sql = 'SELECT bytes FROM blob_chunks WHERE hash = ? AND idx BETWEEN ? AND ? ORDER BY idx';
    return (await this.rows<{ bytes: Buffer }>(sql, [hash, first, last])).map((r) => new Uint8Array(r.bytes.buffer, r.bytes.byteOffset, r.bytes.byteLength));
  }

  async getBlob(hash: string): Promise<Uint8Array | null> {
    const size = await this.blobSize(hash);
    if (size === null) return null;
    const out = new Uint8Array(size);
    let at = 0;
    for (const c of await this.readBlobChunks(hash, 0, Math.ceil(size / BLOB_CHUNK_BYTES) - 1)) {
      out.set(c, at);
      at += c.byteLength;
    }
    if (at !== size) throw new Error(`blob ${hash} is incomplete: ${at} of ${size} bytes stored`);
    return out;
  }

  async findRunFile(runId: string, name: string, ext: string): Promise<StoredFileInfo | null> {
    const row = await this.one<{ content_type: string; blob_hash: string; size: number | string }>(
      'SELECT f.content_type, f.blob_hash, b.size FROM run_files f JOIN blobs b ON b.hash = f.blob_hash WHERE f.run_id = ? AND f.name = ? AND f.ext = ?',
      [runId, name, ext],
    );
    return row ? { hash: row.blob_hash, contentType: row.content_type, size: Number(row.size) } : null;
  }

  async getRunFile(runId: string, name: string, ext: string): Promise<{ bytes: Uint8Array; contentType: string; hash: string } | null> {
    const info = await this.findRunFile(runId, name, ext);
    const bytes = info ? await this.getBlob(info.hash) : null;
    return info && bytes ? { bytes, contentType: info.contentType, hash: info.hash } : null;
  }
}
