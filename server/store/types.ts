import type { GridSpec } from '../../shared/grid/grid.ts';

/**
 * Storage behind an asynchronous interface, so the embedded SQLite default can be joined by a server database for
 * larger teams (every method returns a Promise; the SQLite implementation does its work before it returns one).
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
  /** [west, south, east, north] of the geometry, degrees; null for a model. */
  bbox: [number, number, number, number] | null;
  /** Bytes of the stored body. */
  bytes: number;
}

/** A data set as one project holds it: the shared content plus the project's own name for it. */
export interface ProjectDatasetRecord {
  /** The content's id (what a run request names). */
  id: string;
  kind: string;
  name: string;
  featureCount: number;
  contentHash: string;
  bbox: [number, number, number, number] | null;
  bytes: number;
  /** When it was attached to this project (ISO 8601). */
  uploadedAt: string;
}

/** A run as its project lists it. */
export interface ProjectRunInfo {
  id: string;
  status: RunStatus;
  title: string | null;
  createdAt: string;
}

/** A project's terrain: the DEM reprojected to EPSG:4326 (Float32 values in a blob) and its description. */
export interface ProjectTerrainRecord {
  blobHash: string;
  meta: StoredGridMeta & { sourceCrs: string; sourceBytes: number; name: string };
  createdAt: string;
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

/** A stored file: the hash of its blob, its media type and its size in bytes. */
export interface StoredFileInfo {
  hash: string;
  contentType: string;
  size: number;
}

/** Grid metadata as stored beside its Float32 values (a blob): the grid's spec and units. */
export type StoredGridMeta = GridSpec & { units: string };

/** A data set to store (Store.putDataset). */
export interface DatasetInput {
  id?: string;
  kind: string;
  /** The content: text, or its UTF-8 bytes (a large upload's body, moved to the store's writer without a copy). */
  body: string | Uint8Array;
  featureCount: number;
  title?: string;
  contentHash?: string;
  bbox?: [number, number, number, number] | null;
}

/** A finished run's result as it is stored in one transaction (Store.storeRunResult). */
export interface RunResultWrite {
  files: { name: string; ext: string; bytes: Uint8Array; contentType: string }[];
  grids: { name: string; meta: StoredGridMeta; values: Float32Array }[];
  record: Partial<Pick<RunRecord, 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>;
}

export interface Store {
  /** Which engine holds the data (reported by /api/health). */
  readonly kind: 'sqlite' | 'postgresql';
  /**
   * Stores a data set; with `id` given (the demo's stable ids) an existing record of that id is kept. `contentHash`
   * (SHA-256 of `body`) and `bbox`, when the caller computed them off the request thread, are kept as given.
   */
  putDataset(input: DatasetInput): Promise<DatasetRecord>;
  getDataset(id: string): Promise<(DatasetRecord & { body: string }) | null>;
  listDatasets(): Promise<DatasetRecord[]>;
  /** The data set of this kind whose content hash is `contentHash` (uploads are de-duplicated by content). */
  findDatasetByContent(kind: string, contentHash: string): Promise<DatasetRecord | null>;

  /** Attaches a data set to a project under `name` (again, when it was detached); returns the attachment. */
  attachDataset(projectId: string, datasetId: string, name: string): Promise<ProjectDatasetRecord>;
  /** The data sets attached to a project, in upload order. */
  listProjectDatasets(projectId: string): Promise<ProjectDatasetRecord[]>;
  /** One attached data set of a project, or null. */
  getProjectDataset(projectId: string, datasetId: string): Promise<ProjectDatasetRecord | null>;
  renameProjectDataset(projectId: string, datasetId: string, name: string): Promise<boolean>;
  /**
   * In one transaction: detaches `oldId` from the project and attaches `newId` under `name` (renaming it when it was
   * already attached), so a replacement either happens whole or not at all. Returns the new attachment. Throws
   * `dataset_changed` (server/store/errors.ts) and writes nothing when `oldId` is no longer attached (another request
   * replaced or removed it first).
   */
  replaceProjectDataset(projectId: string, oldId: string, newId: string, name: string): Promise<ProjectDatasetRecord>;
  /** Detaches a data set from a project; false when it was not attached. */
  detachProjectDataset(projectId: string, datasetId: string): Promise<boolean>;
  /** Deletes a data set's content when no project, run or project revision refers to it any more; true if deleted. */
  pruneDataset(datasetId: string): Promise<boolean>;
  /** Bytes a project holds: its attached data sets' bodies and its terrain. */
  projectStorageBytes(projectId: string): Promise<number>;

  /** Records the data sets a run reads (so their content outlives a detach). */
  linkRunDatasets(runId: string, datasetIds: string[]): Promise<void>;
  /** Lists a run under a project (idempotent). */
  linkProjectRun(projectId: string, runId: string): Promise<void>;
  listProjectRuns(projectId: string): Promise<ProjectRunInfo[]>;
  /** The projects a run is listed under. */
  runProjects(runId: string): Promise<string[]>;

  putProjectTerrain(projectId: string, values: Float32Array, meta: ProjectTerrainRecord['meta']): Promise<ProjectTerrainRecord>;
  getProjectTerrain(projectId: string): Promise<(ProjectTerrainRecord & { values: Float32Array }) | null>;
  /** Removes the project's terrain (its content-addressed pixels stay stored); false when it had none. */
  deleteProjectTerrain(projectId: string): Promise<boolean>;

  /** Creates a project with its first revision, atomically. */
  createProject(input: { id: string; title: string; stateJson: string; tokenHash: string }): Promise<ProjectRecord>;
  /** The latest revision, or revision `revision` when given; null when absent. */
  getProject(id: string, revision?: number): Promise<ProjectRecord | null>;
  /** The stored SHA-256 of the project's edit token (never sent to a client). */
  getProjectTokenHash(id: string): Promise<string | null>;
  /** Appends the next revision in one transaction; returns its number. Title defaults to the previous one. */
  appendRevision(id: string, input: { title?: string; stateJson: string }): Promise<number>;
  listRevisions(id: string): Promise<RevisionInfo[] | null>;

  putRun(run: RunRecord): Promise<void>;
  /** Updates the mutable fields of a run record (status, progress, message and, when done, its results). */
  updateRun(
    id: string,
    patch: Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>,
  ): Promise<void>;
  getRun(id: string): Promise<RunRecord | null>;
  /** The newest run with this cache key whose status is one of `statuses`. */
  findRunByCacheKey(cacheKey: string, statuses: RunStatus[]): Promise<RunRecord | null>;
  /** Marks runs left queued or running by a stopped server as failed; returns how many. */
  failInterruptedRuns(message: string): Promise<number>;

  /** Stores bytes under their SHA-256 (kept once); returns the hash. */
  putBlob(bytes: Uint8Array): Promise<string>;
  getBlob(hash: string): Promise<Uint8Array | null>;
  /** A stored blob's size in bytes, or null when absent. Its bytes are kept in chunks of BLOB_CHUNK_BYTES. */
  blobSize(hash: string): Promise<number | null>;
  /** Chunks `first`…`last` (inclusive, 0-based) of a stored blob, in order, reading only those chunks. */
  readBlobChunks(hash: string, first: number, last: number): Promise<Uint8Array[]>;
  /** Links a run's output file (layer name + extension) to a blob. */
  putRunFile(runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void>;
  getRunFile(runId: string, name: string, ext: string): Promise<{ bytes: Uint8Array; contentType: string; hash: string } | null>;
  /** A run's output file without its bytes (its blob is read by range), or null. */
  findRunFile(runId: string, name: string, ext: string): Promise<StoredFileInfo | null>;
  putRunGrid(runId: string, name: string, meta: StoredGridMeta, hash: string): Promise<void>;
  getRunGrid(runId: string, name: string): Promise<{ meta: StoredGridMeta; values: Float32Array } | null>;
  /**
   * Stores a finished run's whole result atomically: its files and grids as content-addressed blobs linked to the
   * run, and the final fields of its record (status itself is set by the caller afterwards).
   */
  storeRunResult(runId: string, result: RunResultWrite): Promise<void>;

  close(): Promise<void>;
}
