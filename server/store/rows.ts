/**
 * What the SQLite and PostgreSQL stores share: the row shapes of their (identical) tables, the records built from
 * them, and how a run record's patch becomes column assignments.
 */
import type { DatasetRecord, ProjectDatasetRecord, RunRecord, RunStatus } from './types.ts';

export interface DatasetRow {
  id: string;
  kind: string;
  feature_count: number;
  content_hash: string;
  title: string | null;
  created_at: string;
  bbox: string | null;
  bytes: number;
}

/** A data set's record from its row, with its bbox (parsed from the row, or computed by the caller). */
export function datasetRecord(r: DatasetRow, bbox: DatasetRecord['bbox']): DatasetRecord {
  return { id: r.id, kind: r.kind, featureCount: r.feature_count, contentHash: r.content_hash, title: r.title, createdAt: r.created_at, bbox, bytes: r.bytes };
}

/** The bbox column of a data set row ([west, south, east, north] degrees as JSON), or null. */
export function bboxOf(r: DatasetRow): DatasetRecord['bbox'] {
  return r.bbox === null ? null : (JSON.parse(r.bbox) as [number, number, number, number]);
}

export function projectDataset(d: DatasetRecord, name: string, attachedAt: string): ProjectDatasetRecord {
  return { id: d.id, kind: d.kind, name, featureCount: d.featureCount, contentHash: d.contentHash, bbox: d.bbox, bytes: d.bytes, uploadedAt: attachedAt };
}

export interface RunRow {
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

export function runFromRow(r: RunRow): RunRecord {
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

/** The columns of a new run row, in the order both stores insert them (id … updated_at). */
export function runRowValues(run: RunRecord): unknown[] {
  return [
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
  ];
}

export type RunPatch = Partial<Pick<RunRecord, 'status' | 'progress' | 'message' | 'layers' | 'summary' | 'warnings' | 'model' | 'grids'>>;

const RUN_JSON_COLUMNS: ReadonlySet<string> = new Set(['layers', 'summary', 'warnings', 'model', 'grids']);
const RUN_PATCH_COLUMNS: ReadonlySet<string> = new Set(['status', 'progress', 'message', ...RUN_JSON_COLUMNS]);

/**
 * The column assignments of a run patch (fields left undefined are kept; JSON fields serialized), ending with
 * `updated_at` = now. Column names come from a fixed list, never from the caller.
 */
export function runPatchColumns(patch: RunPatch): { column: string; value: unknown }[] {
  const out: { column: string; value: unknown }[] = [];
  for (const [k, v] of Object.entries(patch)) {
    if (v === undefined || !RUN_PATCH_COLUMNS.has(k)) continue;
    out.push({ column: k, value: RUN_JSON_COLUMNS.has(k) ? (v === null ? null : JSON.stringify(v)) : v });
  }
  out.push({ column: 'updated_at', value: new Date().toISOString() });
  return out;
}

/** Float32 values of stored bytes, copied into an aligned buffer (a Buffer's offset need not be a multiple of 4). */
export function float32Of(bytes: Uint8Array): Float32Array {
  const values = new Float32Array(bytes.byteLength / 4);
  new Uint8Array(values.buffer).set(bytes);
  return values;
}
