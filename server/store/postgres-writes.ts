/**
 * The PostgreSQL store's writes that run inside a caller's transaction or on the pool, and its grid bands: a grid's
 * Float32 values are kept in bands of whole rows (`grid_chunks`, bytea), so a reader takes only the bands a window
 * covers (a tile of a large grid without the whole grid).
 */
import type pg from 'pg';
import { sha256Hex } from './ids.ts';
import { blobChunks } from './sql-store.ts';
import { float32Of, runPatchColumns, type RunPatch } from './rows.ts';
import type { StoredGridMeta } from './types.ts';

/** A pooled client inside a transaction, or the pool itself. */
export type Client = pg.PoolClient | pg.Pool;

/** Rows of a grid kept per chunk: bands of at most this many bytes (whole rows). */
const BAND_BYTES = 256 * 1024;

/** Stores a blob once, in chunks, inside the caller's transaction (a blob already stored under its hash is kept). */
export async function putBlobWith(c: pg.PoolClient, bytes: Uint8Array): Promise<string> {
  const hash = sha256Hex(bytes);
  const added = await c.query('INSERT INTO blobs (hash, size) VALUES ($1, $2) ON CONFLICT (hash) DO NOTHING', [hash, bytes.byteLength]);
  if ((added.rowCount ?? 0) > 0 && bytes.byteLength > 0)
    await c.query('INSERT INTO blob_chunks (hash, idx, bytes) SELECT $1, t.i - 1, t.b FROM unnest($2::bytea[]) WITH ORDINALITY AS t(b, i)', [
      hash,
      blobChunks(bytes),
    ]);
  return hash;
}

export async function putRunFileWith(c: Client, runId: string, name: string, ext: string, hash: string, contentType: string): Promise<void> {
  await c.query(
    `INSERT INTO run_files (run_id, name, ext, blob_hash, content_type) VALUES ($1, $2, $3, $4, $5)
     ON CONFLICT (run_id, name, ext) DO UPDATE SET blob_hash = excluded.blob_hash, content_type = excluded.content_type`,
    [runId, name, ext, hash, contentType],
  );
}

export async function updateRunWith(c: Client, id: string, patch: RunPatch): Promise<void> {
  const cols = runPatchColumns(patch);
  const vals = cols.map((x) => x.value);
  const sets = cols.map((x, i) => `${x.column} = $${i + 1}`);
  await c.query(`UPDATE runs SET ${sets.join(', ')} WHERE id = $${vals.length + 1}`, [...vals, id]);
}

/** Stores a grid's values in bands of whole rows (replacing a grid of the same name). */
export async function putGridWith(c: pg.PoolClient, runId: string, name: string, meta: StoredGridMeta, values: Float32Array): Promise<void> {
  const bandRows = Math.max(1, Math.floor(BAND_BYTES / (4 * Math.max(1, meta.width))));
  await c.query('DELETE FROM run_grids WHERE run_id = $1 AND name = $2', [runId, name]);
  await c.query('INSERT INTO run_grids (run_id, name, meta, band_rows) VALUES ($1, $2, $3, $4)', [runId, name, JSON.stringify(meta), bandRows]);
  for (let band = 0, row = 0; row < meta.height; band++, row += bandRows) {
    const part = values.subarray(row * meta.width, Math.min(meta.height, row + bandRows) * meta.width);
    await c.query('INSERT INTO grid_chunks (run_id, name, band, bytes) VALUES ($1, $2, $3, $4)', [
      runId,
      name,
      band,
      Buffer.from(part.buffer, part.byteOffset, part.byteLength),
    ]);
  }
}

/** Rows [row0, row1) of a stored grid (clamped to its height), reading only the bands that hold them; null when absent. */
export async function readGridRows(
  c: Client,
  runId: string,
  name: string,
  row0: number,
  row1: number,
): Promise<{ meta: StoredGridMeta; values: Float32Array } | null> {
  const g = await c.query<{ meta: string; band_rows: number }>('SELECT meta, band_rows FROM run_grids WHERE run_id = $1 AND name = $2', [runId, name]);
  if (!g.rows[0]) return null;
  const meta = JSON.parse(g.rows[0].meta) as StoredGridMeta;
  const bandRows = g.rows[0].band_rows;
  const a = Math.max(0, Math.min(meta.height, row0)),
    b = Math.max(a, Math.min(meta.height, row1));
  const out = new Float32Array((b - a) * meta.width);
  if (b <= a) return { meta, values: out };
  const r = await c.query<{ band: number; bytes: Buffer }>(
    'SELECT band, bytes FROM grid_chunks WHERE run_id = $1 AND name = $2 AND band BETWEEN $3 AND $4 ORDER BY band',
    [runId, name, Math.floor(a / bandRows), Math.floor((b - 1) / bandRows)],
  );
  for (const { band, bytes } of r.rows) {
    const values = float32Of(bytes);
    const bandStart = band * bandRows;
    const from = Math.max(a, bandStart),
      to = Math.min(b, bandStart + values.length / meta.width);
    if (to > from) out.set(values.subarray((from - bandStart) * meta.width, (to - bandStart) * meta.width), (from - a) * meta.width);
  }
  return { meta, values: out };
}
