import type { GridSpec } from '../../shared/grid/grid.ts';

/**
 * Storage behind an interface, so the embedded SQLite default can be joined by a server database for larger teams.
 * Everything stored is content-addressed by the SHA-256 of its canonical bytes where that makes sense: data set
 * bodies carry their hash, run outputs (layer files, grids) live in a blob table keyed by their hash, and a run is
 * found again by the hash of its canonical request and its inputs' hashes.
 */
export interface DatasetRecord {
  id: string;
  kind: string;
  featureCount: number;
  contentHash: string;
  createdAt: string;
  title: string | null;
}

/** A shared map state; revisions are append-only (revision 1 is the creation). */
export interface ProjectRecord {
  id: string;
  title: string;
  /** Parsed saved state (any JSON object the client keeps). */
  state: unknown;
  revision: number;
  /** Time of this revision (ISO 8601). */
  updatedAt: string;
  createdAt: string;
}

export interface RevisionInfo {
  revision: number;
  title: string;
  createdAt: string;
  stateBytes: number;
}

export type RunStatus = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface RunRecord {
  id: string;
  /** SHA-256 of the canonical request plus the content hashes of the data sets it names. */
  cacheKey: string;
  /** The validated request (defaults filled in). */
  request: unknown;
  status: RunStatus;
  progress: number;
  message: string;
  /** Layer descriptions (RunLayerInfo[]) once done. */
  layers: unknown[];
  summary: Record<string, unknown> | null;
  warnings: string[];
  /** Validated model the run used (set when done). */
  model: unknown;
  /** Names of the stored grids of the run (e.g. heatFlow, heatFlowSd). */
  grids: string[];
  client: string;
  createdAt: string;
  updatedAt: string;
}

/** Grid metadata as stored beside its Float32 values (a blob): the grid's spec and units. */
export type StoredGridMeta = GridSpec & { units: string };

export interface Store {
  /** Stores a data set; with `id` given (the demo's stable ids) an existing record of that id is kept. */
  putDataset(input: { id?: string; kind: string; body: string; featureCount: number; title?: string }): DatasetRecord;
  getDataset(id: string): (DatasetRecord & { body: string }) | null;
  listDatasets(): DatasetRecord[];

  /** Creates a project with its first revision, atomically. */
  createProject(input: { id: string; title: string; stateJson: string; tokenHash: string }): ProjectRecord;
  /** The latest revision, or revision `revision` when given; null when absent. */
  getProject(id: string, revision?: number): ProjectRecord | null;
  /** The stored SHA-256 of the project's edit token (never sent to a client). */
  getProjectTokenHash(id: string): string | null;
  /** Appends the next revision in one transaction; returns its number. Title defaults to the previous one. */
  appendRevision(id: string, input: { title?: string; stateJson: string }): number;
  listRevisions(id: string): RevisionInfo[] | null;

  putRun(run: RunRecord): void;
  /** Updates the mutable fields of a run record (status, progress, message and, when done, its results). */
  updateRun(id: string, patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>): void;
  getRun(id: string): RunRecord | null;
  /** The newest run with this cache key whose status is one of `statuses`. */
  findRunByCacheKey(cacheKey: string, statuses: RunStatus[]): RunRecord | null;
  /** Marks runs left queued or running by a stopped server as failed; returns how many. */
  failInterruptedRuns(message: string): number;

  /** Stores bytes under their SHA-256 (kept once); returns the hash. */
  putBlob(bytes: Uint8Array): string;
  getBlob(hash: string): Uint8Array | null;
  /** Links a run's output file (layer name + extension) to a blob. */
  putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): void;
  getRunFile(runId: string, name: string, ext: string): { bytes: Uint8Array; contentType: string; hash: string } | null;
  putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): void;
  getRunGrid(runId: string, name: string): { meta: StoredGridMeta; values: Float32Array } | null;
  /**
   * Stores a finished run's whole result atomically: its files and grids as content-addressed blobs linked to the
   * run, and the final fields of its record (status itself is set by the caller afterwards).
   */
  storeRunResult(runId: string, result: {
    files: { name: string; ext: string; bytes: Uint8Array; contentType: string }[];
    grids: { name: string; meta: StoredGridMeta; values: Float32Array }[];
    record: Partial<Pick<RunRecord, 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>;
  }): void;

  close(): void;
}
