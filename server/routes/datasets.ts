/**
 * Data set uploads: GeoJSON or point CSV (or a thermal model JSON), validated and stored content-addressed.
 * `parseUpload` is shared by POST /api/projects/:id/datasets (the page's route: data sets belong to a project) and
 * POST /api/datasets (a bare upload, for scripts that name data set ids in a run themselves). GET /api/datasets/:id
 * serves a stored body; data sets are listed only through their project (GET /api/datasets is 410).
 */
import { gridDatasetBytes, gridDatasetFromUpload } from '../io/grid-dataset.ts';
import type { Context, Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import type { DatasetKind } from '../../shared/schema/features.ts';
import type { DatasetInput, DatasetRecord } from '../store/types.ts';
import { bodyBytes, errorBody, singleQuery, type AppContext } from './context.ts';
import { z } from 'zod';
import { formatFromMediaType, VECTOR_MEDIA_TYPES } from '../io/vector-input.ts';
import { INLINE_UPLOAD_BYTES, parseUploadBytes, type ParsedUpload, type UploadInput } from '../io/dataset-upload.ts';

import { datasetQuerySchema, parseWith } from './schemas.ts';

export type { ParsedUpload };

/**
 * Query parameters every upload route reads besides its own: `crs` (EPSG:nnnn) of a CSV's x,y / easting,northing
 * columns, `layer` (the GeoPackage table or the Shapefile in a zip, when there are several) and `filename` (named in
 * error messages).
 */
export const uploadFormatQuery = z.object({
  crs: z
    .string()
    .trim()
    .regex(/^EPSG:\d{4,6}$/i, 'crs must be EPSG:nnnn')
    .optional(),
  layer: z.string().trim().min(1).max(200).optional(),
  filename: z.string().trim().min(1).max(200).optional(),
});

/**
 * Reads, validates and canonicalizes an upload of `kind` from the request body (415/400/413/422 on bad input):
 * GeoJSON, point CSV (lon/lat, or projected x,y with `crs`), a GeoPackage or a zipped Shapefile (reprojected to
 * WGS 84 from the file's own CRS), or a thermal model JSON (server/io/dataset-upload.ts). A body larger than
 * INLINE_UPLOAD_BYTES is parsed on the data pool's worker thread, so the request thread stays free.
 */
export async function parseUpload(c: Context, ctx: AppContext, kind: DatasetKind | 'model' | 'grid'): Promise<ParsedUpload> {
  const type = (c.req.header('content-type') ?? '').split(';')[0].trim().toLowerCase();
  if (kind === 'grid') return await gridUpload(c, ctx, type);
  const format = formatFromMediaType(type);
  if (format === null) {
    const all = Object.values(VECTOR_MEDIA_TYPES).flat().join(', ');
    throw new InputError(
      `unsupported content-type "${type || '(none)'}": send one of ${all}`,
      [{ field: 'content-type', problem: `expected ${all}` }],
      'unsupported_media_type',
    );
  }
  const fq = parseWith(uploadFormatQuery, singleQuery(c), 'query', 'bad_query');
  const label = { gpkg: 'GeoPackage', shapefile: 'zipped Shapefile', csv: 'CSV', geojson: 'GeoJSON' }[format];
  const bytes = await bodyBytes(c);
  const input: UploadInput = {
    kind,
    format,
    bytes,
    crs: fq.crs,
    layer: fq.layer,
    source: fq.filename ?? `the ${label} upload`,
    maxBytes: ctx.limits.maxBodyBytes,
    maxFeatures: ctx.limits.maxFeatures,
  };
  if (bytes.length <= INLINE_UPLOAD_BYTES) return await parseUploadBytes(input);
  return await ctx.compute.data.run<ParsedUpload>({ kind: 'upload', input }, ctx.limits.computeDeadlineSeconds * 1000, undefined, [bytes.buffer]);
}

/** A covariate grid (kind `grid`): a single-band GeoTIFF, checked before decoding (server/io/grid-dataset.ts). */
async function gridUpload(c: Context, ctx: AppContext, type: string): Promise<ParsedUpload> {
  if (type !== 'image/tiff' && type !== 'image/geotiff' && type !== 'application/octet-stream')
    throw new InputError(
      `a grid data set is a GeoTIFF: send it as image/tiff, got "${type || '(none)'}"`,
      [{ field: 'content-type', problem: 'expected image/tiff' }],
      'unsupported_media_type',
    );
  const fq = parseWith(uploadFormatQuery, singleQuery(c), 'query', 'bad_query');
  return await gridDatasetFromUpload(new Uint8Array(await c.req.arrayBuffer()), ctx.limits.maxTerrainBytes, fq.filename ?? 'the GeoTIFF upload');
}

/** What the store keeps of an upload (its hash and bounding box as computed where it was parsed). */
export function storedOf(up: ParsedUpload): DatasetInput {
  return { kind: up.kind, body: up.body, featureCount: up.featureCount, contentHash: up.contentHash, bbox: up.bbox };
}

/** Stores an upload, or finds the stored data set with the same kind and content. */
export async function storeUpload(ctx: AppContext, up: ParsedUpload, title?: string): Promise<{ rec: DatasetRecord; existing: boolean }> {
  const found = await ctx.store.findDatasetByContent(up.kind, up.contentHash);
  if (found) return { rec: found, existing: true };
  return { rec: await ctx.store.putDataset({ ...storedOf(up), title }), existing: false };
}

export function datasetRoutes(app: Hono, ctx: AppContext): void {
  // Data sets are listed through the project that holds them.
  app.get('/api/datasets', (c) =>
    c.json(
      errorBody('listed_per_project', 'data sets are listed per project: GET /api/projects/{id}/datasets', [
        { field: 'path', problem: 'use /api/projects/{id}/datasets' },
      ]),
      410,
    ),
  );

  app.get('/api/datasets/:id', async (c) => {
    const rec = await ctx.store.getDataset(c.req.param('id'));
    if (!rec) throw new InputError(`no data set with id "${c.req.param('id')}"`, [{ field: 'id', problem: 'not found' }], 'not_found');
    if (rec.kind === 'grid') return c.body(gridDatasetBytes(rec.body), 200, { 'content-type': 'image/tiff', etag: `"${rec.contentHash}"` });
    const type = rec.kind === 'model' ? 'application/json' : 'application/geo+json';
    return c.body(rec.body, 200, { 'content-type': type, etag: `"${rec.contentHash}"` });
  });

  app.post('/api/datasets', async (c) => {
    const q = parseWith(datasetQuerySchema, singleQuery(c), 'query', 'bad_query');
    const up = await parseUpload(c, ctx, q.kind);
    const { rec, existing } = await storeUpload(ctx, up, q.title ?? up.suggestedName ?? undefined);
    return c.json(
      {
        id: rec.id,
        kind: rec.kind,
        featureCount: rec.featureCount,
        contentHash: rec.contentHash,
        bbox: rec.bbox,
        deduplicated: existing,
        warnings: up.warnings,
      },
      existing ? 200 : 201,
    );
  });
}
