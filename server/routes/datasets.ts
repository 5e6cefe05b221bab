/**
 * Data set uploads: GeoJSON or point CSV (or a thermal model JSON), validated and stored content-addressed.
 * `parseUpload` is shared by POST /api/projects/:id/datasets (the page's route: data sets belong to a project) and
 * POST /api/datasets (a bare upload, for scripts that name data set ids in a run themselves). GET /api/datasets/:id
 * serves a stored body; data sets are listed only through their project (GET /api/datasets is 410).
 */
import type { Context, Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, parsePointCsv, type DatasetKind } from '../../shared/schema/features.ts';
import { parseModelDocument } from '../../shared/products/model-input.ts';
import { sha256Hex } from '../store/sqlite.ts';
import type { DatasetRecord } from '../store/types.ts';
import { bodyText, errorBody, parseJsonText, singleQuery, type AppContext } from './context.ts';
import { z } from 'zod';
import { converter, loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { formatFromMediaType, inFileLayer, readVectorFile, VECTOR_MEDIA_TYPES } from '../io/vector-input.ts';

import { datasetQuerySchema, parseWith } from './schemas.ts';

export interface ParsedUpload {
  kind: DatasetKind | 'model';
  /** Canonical stored body: the validated GeoJSON, or the model without its descriptive name. */
  body: string;
  featureCount: number;
  warnings: string[];
  /** The model's own `name` (a model upload), offered as the data set's name when none is given. */
  suggestedName: string | null;
}

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
 * WGS 84 from the file's own CRS), or a thermal model JSON.
 */
export async function parseUpload(c: Context, ctx: AppContext, kind: DatasetKind | 'model'): Promise<ParsedUpload> {
  const type = (c.req.header('content-type') ?? '').split(';')[0].trim().toLowerCase();
  const format = formatFromMediaType(type);
  const isJson = format === 'geojson';
  const isCsv = format === 'csv';
  if (format === null) {
    const all = Object.values(VECTOR_MEDIA_TYPES).flat().join(', ');
    throw new InputError(
      `unsupported content-type "${type || '(none)'}": send one of ${all}`,
      [{ field: 'content-type', problem: `expected ${all}` }],
      'unsupported_media_type',
    );
  }
  const fq = parseWith(uploadFormatQuery, singleQuery(c), 'query', 'bad_query');
  const source =
    fq.filename ?? `the ${format === 'gpkg' ? 'GeoPackage' : format === 'shapefile' ? 'zipped Shapefile' : format === 'csv' ? 'CSV' : 'GeoJSON'} upload`;
  if (format === 'gpkg' || format === 'shapefile') {
    if (kind === 'model')
      throw new InputError(
        'a thermal model is JSON: send it as application/json',
        [{ field: 'content-type', problem: 'expected application/json' }],
        'unsupported_media_type',
      );
    const bytes = new Uint8Array(await c.req.arrayBuffer());
    if (bytes.length === 0) throw new InputError('the request body is empty', [{ field: '(body)', problem: 'empty' }], 'empty_body');
    const r = await readVectorFile(bytes, { format, source, layer: fq.layer, maxBytes: ctx.limits.maxBodyBytes, maxFeatures: ctx.limits.maxFeatures });
    const parsed = inFileLayer(source, r.layer, () => parseFeatureCollection(kind, r.collection, { maxFeatures: ctx.limits.maxFeatures }));
    const warnings =
      r.sourceCrs === 'EPSG:4326'
        ? parsed.warnings
        : [`${source}${r.layer ? `, layer "${r.layer}"` : ''}: reprojected from ${r.sourceCrs} to WGS 84 longitude/latitude`, ...parsed.warnings];
    return { kind, body: JSON.stringify(parsed.collection), featureCount: parsed.collection.features.length, warnings, suggestedName: r.layer };
  }
  const text = await bodyText(c);
  if (text.trim() === '') throw new InputError('the request body is empty', [{ field: '(body)', problem: 'empty' }], 'empty_body');
  if (kind === 'model') {
    if (!isJson)
      throw new InputError(
        'a thermal model is JSON: send it as application/json',
        [{ field: 'content-type', problem: 'expected application/json' }],
        'unsupported_media_type',
      );
    const { model, name } = parseModelDocument(parseJsonText(text), 'model');
    // The name is the data set's (editable per project), not part of the content: two uploads of the same layers
    // under different names are one stored model, and a renamed model never carries its old name into exports.
    const { name: _name, ...content } = model as typeof model & { name?: unknown };
    return { kind, body: JSON.stringify(content), featureCount: model.layers.length, warnings: [], suggestedName: name };
  }
  let toLonLat: ((x: number, y: number) => [number, number]) | undefined;
  if (fq.crs !== undefined) {
    const conv = converter(await loadCrsDefinition(fq.crs), WGS84_DEF);
    toLonLat = (x, y) => conv.forward([x, y]);
  }
  const opts = { maxFeatures: ctx.limits.maxFeatures, toLonLat, crsHint: 'give their CRS with the query parameter crs=EPSG:nnnn' };
  const parsed = isCsv ? parsePointCsv(kind, text, opts) : parseFeatureCollection(kind, parseJsonText(text), opts);
  return { kind, body: JSON.stringify(parsed.collection), featureCount: parsed.collection.features.length, warnings: parsed.warnings, suggestedName: null };
}

/** Stores an upload, or finds the stored data set with the same kind and content. */
export async function storeUpload(ctx: AppContext, up: ParsedUpload, title?: string): Promise<{ rec: DatasetRecord; existing: boolean }> {
  const found = await ctx.store.findDatasetByContent(up.kind, sha256Hex(up.body));
  if (found) return { rec: found, existing: true };
  return { rec: await ctx.store.putDataset({ kind: up.kind, body: up.body, featureCount: up.featureCount, title }), existing: false };
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
