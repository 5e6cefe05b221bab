/**
 * Data set uploads: GeoJSON or point CSV (or a thermal model JSON), validated and stored content-addressed.
 * `parseUpload` is shared by POST /api/projects/:id/datasets (the page's route: data sets belong to a project) and
 * POST /api/datasets (a bare upload, for scripts that name data set ids in a run themselves).
 */
import type { Context, Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, parsePointCsv, type DatasetKind } from '../../shared/schema/features.ts';
import { modelFromJson } from '../runs/model-input.ts';
import { sha256Hex } from '../store/sqlite.ts';
import type { DatasetRecord } from '../store/types.ts';
import { bodyText, parseJsonText, singleQuery, type AppContext } from './context.ts';
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

/** Reads, validates and canonicalizes an upload of `kind` from the request body (415/400/413/422 on bad input). */
export async function parseUpload(c: Context, ctx: AppContext, kind: DatasetKind | 'model'): Promise<ParsedUpload> {
  const type = (c.req.header('content-type') ?? '').split(';')[0].trim().toLowerCase();
  const isJson = type === 'application/json' || type === 'application/geo+json';
  const isCsv = type === 'text/csv';
  if (!isJson && !isCsv) {
    throw new InputError(
      `unsupported content-type "${type || '(none)'}": send application/geo+json, application/json or text/csv`,
      [{ field: 'content-type', problem: 'expected application/geo+json, application/json or text/csv' }],
      'unsupported_media_type',
      415,
    );
  }
  const text = await bodyText(c);
  if (text.trim() === '') throw new InputError('the request body is empty', [{ field: '(body)', problem: 'empty' }], 'empty_body', 400);
  if (kind === 'model') {
    if (!isJson) throw new InputError('a thermal model is JSON: send it as application/json', [{ field: 'content-type', problem: 'expected application/json' }], 'unsupported_media_type', 415);
    const { model, name } = modelFromJson(parseJsonText(text), 'model');
    // The name is the data set's (editable per project), not part of the content: two uploads of the same layers
    // under different names are one stored model, and a renamed model never carries its old name into exports.
    const { name: _name, ...content } = model as typeof model & { name?: unknown };
    return { kind, body: JSON.stringify(content), featureCount: model.layers.length, warnings: [], suggestedName: name };
  }
  const opts = { maxFeatures: ctx.limits.maxFeatures };
  const parsed = isCsv ? parsePointCsv(kind, text, opts) : parseFeatureCollection(kind, parseJsonText(text), opts);
  return { kind, body: JSON.stringify(parsed.collection), featureCount: parsed.collection.features.length, warnings: parsed.warnings, suggestedName: null };
}

/** Stores an upload, or finds the stored data set with the same kind and content. */
export function storeUpload(ctx: AppContext, up: ParsedUpload, title?: string): { rec: DatasetRecord; existing: boolean } {
  const found = ctx.store.findDatasetByContent(up.kind, sha256Hex(up.body));
  if (found) return { rec: found, existing: true };
  return { rec: ctx.store.putDataset({ kind: up.kind, body: up.body, featureCount: up.featureCount, title }), existing: false };
}

export function datasetRoutes(app: Hono, ctx: AppContext): void {
  app.post('/api/datasets', async (c) => {
    const q = parseWith(datasetQuerySchema, singleQuery(c), 'query', 'bad_query', 400);
    const up = await parseUpload(c, ctx, q.kind);
    const { rec, existing } = storeUpload(ctx, up, q.title ?? up.suggestedName ?? undefined);
    return c.json({ id: rec.id, kind: rec.kind, featureCount: rec.featureCount, contentHash: rec.contentHash, bbox: rec.bbox, deduplicated: existing, warnings: up.warnings }, existing ? 200 : 201);
  });
}
