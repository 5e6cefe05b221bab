/** POST /api/datasets?kind=…: GeoJSON or point CSV (or a thermal model JSON), validated and stored. */
import type { Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, parsePointCsv, type DatasetKind } from '../../shared/schema/features.ts';
import { modelFromJson } from '../runs/model-input.ts';
import { bodyText, parseJsonText, singleQuery, type AppContext } from './context.ts';
import { datasetQuerySchema, parseWith } from './schemas.ts';

export function datasetRoutes(app: Hono, ctx: AppContext): void {
  app.post('/api/datasets', async (c) => {
    const q = parseWith(datasetQuerySchema, singleQuery(c), 'query', 'bad_query', 400);
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
    if (q.kind === 'model') {
      if (!isJson) throw new InputError('a thermal model is JSON: send it as application/json', [{ field: 'content-type', problem: 'expected application/json' }], 'unsupported_media_type', 415);
      const { model, name } = modelFromJson(parseJsonText(text), 'model');
      const rec = ctx.store.putDataset({ kind: 'model', body: JSON.stringify(model), featureCount: model.layers.length, title: q.title ?? name ?? undefined });
      return c.json({ id: rec.id, kind: 'model', featureCount: rec.featureCount, contentHash: rec.contentHash, warnings: [] }, 201);
    }
    const kind = q.kind as DatasetKind;
    const opts = { maxFeatures: ctx.limits.maxFeatures };
    const parsed = isCsv ? parsePointCsv(kind, text, opts) : parseFeatureCollection(kind, parseJsonText(text), opts);
    const rec = ctx.store.putDataset({ kind, body: JSON.stringify(parsed.collection), featureCount: parsed.collection.features.length, title: q.title });
    return c.json({ id: rec.id, kind, featureCount: rec.featureCount, contentHash: rec.contentHash, warnings: parsed.warnings }, 201);
  });
}

