/** GET /api/openapi.json: an OpenAPI 3.1 description of the API, its request bodies generated from the zod schemas. */
import type { Hono } from 'hono';
import { z } from 'zod';
import { interpolationOptionsSchema } from '../../shared/schema/interp.ts';
import { runEndEventSchema, runProgressEventSchema, runRequestSchema, runSummarySchema } from '../../shared/schema/run.ts';
import { thermalModelSchema } from '../../shared/schema/model.ts';
import { VERSION } from '../../shared/version.ts';
import { VECTOR_MEDIA_TYPES } from '../io/vector-input.ts';
import { columnAnswerSchema } from '../../shared/schema/column.ts';
import { heatFlowCorrectionRequestSchema } from '../../shared/heatflow/dataset-corrections.ts';
import { CLIENT_ERROR_STATUSES, RUN_LAYER_TEXT, clientErrorResponses, clientErrorText, sectionAnswerSchema, PROJECT_UPLOAD_QUERY } from './openapi-answers.ts';
import { columnAtRunSchema, columnOfModelSchema, datasetPatchSchema, projectCreateSchema, projectUpdateSchema, sectionSchema } from './schemas.ts';

const json = (schema: z.ZodType) => z.toJSONSchema(schema, { io: 'input', unrepresentable: 'any', target: 'draft-2020-12' });
/** The JSON Schema (2020-12, the dialect of OpenAPI 3.1) of what the server sends: a zod schema's output side. */
function sent(schema: z.ZodType): Record<string, unknown> {
  const { $schema: _dialect, ...rest } = z.toJSONSchema(schema, { io: 'output', unrepresentable: 'any', target: 'draft-2020-12' });
  return rest;
}
const ref = (name: string) => ({ $ref: `#/components/schemas/${name}` });

/** GET /api/runs/:id (server/routes/runs.ts runView): the run's state, its layers and, once done, its summary. */
const runViewSchema = {
  type: 'object',
  required: ['id', 'status', 'progress', 'message', 'layers', 'summary'],
  properties: {
    id: { type: 'string' },
    status: { type: 'string', enum: ['queued', 'running', 'done', 'failed', 'cancelled'] },
    progress: { type: 'number', minimum: 0, maximum: 1 },
    message: { type: 'string' },
    position: { type: 'integer', minimum: 1, description: 'while queued: 1-based place in the fair start order' },
    estimateSeconds: { type: ['number', 'null'], minimum: 0, description: 'while queued or running: seconds to the end; null until measured' },
    layers: { type: 'array', items: { type: 'object', description: RUN_LAYER_TEXT } },
    summary: {
      anyOf: [ref('RunSummary'), { type: 'null' }],
      description: 'the run summary (the run contract of shared/schema/run.ts); null until the run is done',
    },
    warnings: { type: 'array', items: { type: 'string' } },
    request: { type: 'object', description: 'the run request as queued' },
    createdAt: { type: 'string' },
    updatedAt: { type: 'string' },
  },
};

const errorSchema = {
  type: 'object',
  required: ['error'],
  properties: {
    error: {
      type: 'object',
      required: ['code', 'message', 'details'],
      properties: {
        code: { type: 'string' },
        message: { type: 'string' },
        details: {
          type: 'array',
          items: { type: 'object', properties: { feature: { type: ['string', 'number'] }, field: { type: 'string' }, problem: { type: 'string' } } },
        },
      },
    },
  },
};

/** Upload bodies: one entry per accepted media type (server/io/vector-input.ts), each described. */
const UPLOAD_FORMATS: Record<keyof typeof VECTOR_MEDIA_TYPES, { schema: Record<string, unknown> }> = {
  geojson: {
    schema: { type: 'object', description: 'GeoJSON FeatureCollection in WGS 84 longitude/latitude (RFC 7946); for kind=model, the thermal model JSON' },
  },
  csv: {
    schema: {
      type: 'string',
      description:
        'point CSV, header on line 1: longitude,latitude (or lon,lat), or x,y / easting,northing with crs=EPSG:nnnn; a CSV whose numbers look projected and comes without crs is refused with a message saying so',
    },
  },
  gpkg: {
    schema: {
      type: 'string',
      format: 'binary',
      description: "OGC GeoPackage: a point or line feature table (layer=NAME when there are several), reprojected to WGS 84 from the table's own CRS",
    },
  },
  shapefile: {
    schema: {
      type: 'string',
      format: 'binary',
      description: 'zipped Shapefile (.shp, .shx, .dbf and .prj; layer=NAME when the zip holds several), reprojected to WGS 84 from its .prj',
    },
  },
};
const GRID_UPLOAD = "kind=grid: a one-band GeoTIFF covariate, checked before decoding; a run names it as interpolation.trend 'drift:<id>'";
const UPLOAD_CONTENT: Record<string, { schema: Record<string, unknown> }> = Object.fromEntries<{ schema: Record<string, unknown> }>([
  ...Object.entries(VECTOR_MEDIA_TYPES).flatMap(([f, types]) => types.map((t) => [t, UPLOAD_FORMATS[f as keyof typeof VECTOR_MEDIA_TYPES]] as const)),
  ['image/tiff', { schema: { type: 'string', format: 'binary', description: GRID_UPLOAD } }] as const,
]);
/** Query parameters every vector upload reads besides its own (server/routes/datasets.ts). */
const UPLOAD_QUERY = {
  crs: "EPSG:nnnn of a CSV's x,y / easting,northing columns (reprojected to WGS 84 with the offline EPSG definitions)",
  layer: 'the GeoPackage table or the Shapefile in a zip to read, when the file holds several',
  filename: "the file's name, used in messages about it",
};

/** Errors whose meaning is the same on every route. */
const ERROR_DESCRIPTIONS: Record<number, string> = {
  503: 'come back later: server_busy (a queue is full) or deadline_exceeded (the work did not finish within its limit, named in details, waiting included: every deadline of the server answers this way)',
  507: 'insufficient_storage: the disk or database is full; nothing was saved, reads go on working',
};

function op(
  summary: string,
  opts: {
    body?: Record<string, unknown>;
    bodyType?: string;
    contents?: Record<string, { schema: Record<string, unknown> }>;
    ok?: string;
    okType?: string;
    okSchema?: Record<string, unknown>;
    errors?: number[];
    params?: string[];
    query?: Record<string, string>;
    auth?: boolean;
  } = {},
) {
  const o: Record<string, unknown> = { summary };
  const params: unknown[] = (opts.params ?? []).map((name) => ({ name, in: 'path', required: true, schema: { type: 'string' } }));
  for (const [name, description] of Object.entries(opts.query ?? {}))
    params.push({ name, in: 'query', required: false, description, schema: { type: 'string' } });
  if (params.length) o.parameters = params;
  if (opts.body) o.requestBody = { required: true, content: { [opts.bodyType ?? 'application/json']: { schema: opts.body } } };
  if (opts.contents) o.requestBody = { required: true, content: opts.contents };
  if (opts.auth) o.security = [{ editToken: [] }];
  const responses: Record<string, unknown> = {
    [opts.ok ?? '200']: { description: 'success', content: { [opts.okType ?? 'application/json']: opts.okSchema ? { schema: opts.okSchema } : {} } },
  };
  for (const e of opts.errors ?? [])
    responses[String(e)] = {
      description: [ERROR_DESCRIPTIONS[e] ?? 'error', clientErrorText(e)].filter(Boolean).join('; '),
      content: { 'application/json': { schema: { $ref: '#/components/schemas/Error' } } },
      ...(e === 429 || e === 503 ? { headers: { 'Retry-After': { description: 'seconds to wait before asking again', schema: { type: 'integer' } } } } : {}),
    };
  // Answers of the HTTP server itself, before any route (guards.ts answerClientError): possible on every operation.
  for (const s of CLIENT_ERROR_STATUSES) responses[String(s)] ??= { $ref: `#/components/responses/ClientError${s}` };
  o.responses = responses;
  return o;
}

let cached: unknown = null;

/** The OpenAPI document (built once). */
export function openApiDocument(): unknown {
  cached ??= {
    openapi: '3.1.0',
    info: {
      title: 'subtherm HTTP API',
      version: VERSION,
      description: 'Screening estimates from steady-state conduction; see the caution in GET /api/config.',
    },
    components: {
      schemas: {
        Error: errorSchema,
        RunSummary: sent(runSummarySchema),
        RunProgressEvent: sent(runProgressEventSchema),
        RunEndEvent: sent(runEndEventSchema),
      },
      responses: clientErrorResponses(),
      securitySchemes: { editToken: { type: 'http', scheme: 'bearer', description: 'the editToken returned by POST /api/projects' } },
    },
    paths: {
      '/api/health': {
        get: op(
          "server health and version; store (sqlite | postgresql); queue (in-process | redis) with workers (run slots: this server's threads, or those of the queue workers heard from lately) and workerProcesses (redis only); eventLoopDelayMs { p50, p99, max } of the request thread (Node event-loop delay histogram, current window), runs and compute tasks in flight",
        ),
      },
      '/api/limits': {
        get: op('every server limit { name, value, units, env } and the thermal-model bounds (layers, name length, plausible ranges with their sources)'),
      },
      '/api/config': { get: op('caution text, demo data set ids, terrain tile source') },
      '/api/openapi.json': { get: op('this document') },
      '/api/datasets': {
        get: op('gone: data sets are listed per project (GET /api/projects/{id}/datasets)', { ok: '410' }),
        post: op(
          'store a data set outside any project (GeoJSON, point CSV, GeoPackage, zipped Shapefile or a thermal model); 200 with the existing id when the same content is stored',
          {
            query: { kind: 'sites | samples | faults | wells | regions | model | grid', title: 'optional title', ...UPLOAD_QUERY },
            contents: UPLOAD_CONTENT,
            ok: '201',
            errors: [400, 413, 415, 422],
          },
        ),
      },
      '/api/datasets/{id}': {
        get: op('a stored data set (a grid data set as its GeoTIFF, image/tiff)', { params: ['id'], okType: 'application/geo+json', errors: [404] }),
      },
      '/api/runs': {
        post: op('queue a run (202), or get the cached run with the same inputs (200)', {
          body: json(runRequestSchema),
          ok: '202',
          errors: [400, 404, 413, 415, 422, 429, 503],
        }),
      },
      '/api/runs/{id}': {
        get: op('a run: status, progress, message, layers with URLs, summary', { params: ['id'], okSchema: runViewSchema, errors: [404] }),
        delete: op(
          'cancel a queued or running run (Authorization: Bearer <runToken returned by POST /api/runs, or the editToken of the project that started it>)',
          { params: ['id'], auth: true, errors: [401, 403, 404, 409] },
        ),
      },
      '/api/runs/{id}/events': {
        get: op(
          'progress as Server-Sent Events: `event: progress` (data: RunProgressEvent) while queued or running, then one `event: end` (data: RunEndEvent)',
          {
            params: ['id'],
            okType: 'text/event-stream',
            okSchema: { type: 'string', 'x-event-data': { progress: ref('RunProgressEvent'), end: ref('RunEndEvent') } },
            errors: [404],
          },
        ),
      },
      '/api/runs/{id}/layers/{file}': {
        get: op('a layer file: <name>.tif | .png | .geojson | .csv', { params: ['id', 'file'], okType: 'application/octet-stream', errors: [400, 404] }),
      },
      '/api/runs/{id}/tiles/{layer}.json': { get: op('raster-dem source description of a raster layer', { params: ['id', 'layer'], errors: [400, 404, 422] }) },
      '/api/runs/{id}/tiles/{layer}/{z}/{x}/{y}.png': {
        get: op('raster-dem tile of a raster layer', { params: ['id', 'layer', 'z', 'x', 'y'], okType: 'image/png', errors: [400, 404] }),
      },
      '/api/runs/{id}/heat-in-place': {
        post: op(
          'queue a heat-in-place job over a finished run (application/json only) → 202 { jobId, runId, status, position, url, links: { json, html, csv } }',
          {
            params: ['id'],
            body: {
              type: 'object',
              additionalProperties: false,
              properties: {
                polygon: { description: 'GeoJSON Polygon/MultiPolygon, Feature or FeatureCollection' },
                zones: { description: 'FeatureCollection of region polygons' },
                zoneProperty: { type: 'string' },
                options: {
                  type: 'object',
                  description: 'depth window, minimum temperature, recovery, efficiencies (numbers or distributions), realizations, seed: as the CLI takes',
                },
              },
            },
            ok: '202',
            errors: [400, 404, 409, 415, 422, 429, 503],
          },
        ),
      },
      '/api/runs/{id}/heat-in-place/{jobId}': {
        get: op(
          'the job: 202 { jobId, status: queued|running, position } until done, then the report (the CLI heat-in-place --json object); a failed job answers its error (503 deadline_exceeded with Retry-After names heatInPlaceDeadlineSeconds: every deadline of the server answers 503 deadline_exceeded)',
          { params: ['id', 'jobId'], errors: [400, 404, 422, 500, 503] },
        ),
      },
      '/api/runs/{id}/heat-in-place/{jobId}.html': {
        get: op("the job's printable HTML report (rendered once, when the job ran)", { params: ['id', 'jobId'], okType: 'text/html', errors: [404, 422] }),
      },
      '/api/runs/{id}/heat-in-place/{jobId}.csv': {
        get: op("the job's CSV totals, leading # caution line", { params: ['id', 'jobId'], okType: 'text/csv', errors: [404, 422] }),
      },
      '/api/runs/{id}/spread': {
        get: op("spread (P90 − P10, km) of the depth to an isotherm over the run's realizations: the layer with urls and tiles", {
          params: ['id'],
          query: { isothermC: 'isotherm, °C (required)' },
          errors: [400, 404, 409, 503],
        }),
      },
      '/api/runs/{id}/probability': {
        get: op(
          "probability layer (0–1) from the run's realizations: isothermC + shallowerThanKm (depth to the isotherm shallower than that depth), or depthKm + exceedsC (temperature at the depth above that value)",
          {
            params: ['id'],
            query: {
              isothermC: 'isotherm, °C',
              shallowerThanKm: 'depth, km (with isothermC)',
              depthKm: 'depth, km (with exceedsC)',
              exceedsC: 'temperature, °C (with depthKm)',
            },
            errors: [400, 404, 409, 503],
          },
        ),
      },
      '/api/column': {
        post: op('geotherm column at a point of a run or of a model; a 422 no_data_here says why the run has no value there', {
          body: { oneOf: [json(columnAtRunSchema), json(columnOfModelSchema)] },
          okSchema: z.toJSONSchema(columnAnswerSchema, { io: 'output', unrepresentable: 'any', target: 'draft-2020-12' }),
          errors: [400, 404, 409, 415, 422, 503],
        }),
      },
      '/api/section': {
        post: op('vertical temperature section along a line through a run', {
          body: json(sectionSchema),
          okSchema: sectionAnswerSchema,
          errors: [400, 404, 409, 415, 422, 503],
        }),
      },
      '/api/projects': {
        post: op('create a shared project; returns its edit token once', { body: json(projectCreateSchema), ok: '201', errors: [400, 413, 415, 422] }),
      },
      '/api/projects/{id}': {
        get: op('a project (latest revision, or ?revision=N)', { params: ['id'], query: { revision: 'revision number' }, errors: [400, 404] }),
        put: op('save a new revision (Authorization: Bearer <editToken>)', {
          params: ['id'],
          body: json(projectUpdateSchema),
          auth: true,
          errors: [400, 401, 403, 404, 413, 415, 422],
        }),
      },
      '/api/projects/{id}/revisions': { get: op('list revisions', { params: ['id'], errors: [404] }) },
      '/api/projects/{id}/datasets': {
        get: op(
          "the project's data sets: { id, datasets: [{ id, kind, name, featureCount, bbox [W,S,E,N] | null, bytes, contentHash, uploadedAt, url }], terrain, storage: { bytes, limitBytes } }",
          { params: ['id'], errors: [404] },
        ),
        post: op(
          'upload a data set into the project (edit token); 201 new, 200 when the project already holds the same content (deduplicated: true); with replace, 409 dataset_changed when another request replaced or removed that data set first',
          {
            params: ['id'],
            query: { ...PROJECT_UPLOAD_QUERY, ...UPLOAD_QUERY },
            contents: UPLOAD_CONTENT,
            ok: '201',
            auth: true,
            errors: [400, 401, 403, 404, 409, 413, 415, 422],
          },
        ),
      },
      '/api/projects/{id}/datasets/{dsId}': {
        get: op("download a data set of the project (GeoJSON, or the model JSON under the project's name for it)", {
          params: ['id', 'dsId'],
          okType: 'application/geo+json',
          errors: [404],
        }),
        patch: op('rename a data set in the project (edit token)', {
          params: ['id', 'dsId'],
          body: json(datasetPatchSchema),
          auth: true,
          errors: [400, 401, 403, 404, 409, 415, 422],
        }),
        delete: op(
          'detach a data set from the project (edit token) → { id, detached, contentKept }; the content stays while a project, run or revision names it',
          { params: ['id', 'dsId'], auth: true, errors: [401, 403, 404] },
        ),
      },
      '/api/projects/{id}/datasets/{dsId}/corrections': {
        post: op(
          "heat-flow corrections of a sites or wells data set (edit token) → { dataset, source, method, reports, warnings, caution }: paleoclimatic (surface-temperature steps, κ), topographic (the project's terrain, lapse rate) and, for wells, a BHT method; the result is a new sites data set whose sites carry uncorrectedHeatFlowMWm2, paleoclimateCorrectionMWm2, topographicCorrectionMWm2 and heatFlowCorrections (404 terrain_not_found without terrain, 422 nothing_to_correct)",
          { params: ['id', 'dsId'], body: json(heatFlowCorrectionRequestSchema), ok: '201', auth: true, errors: [400, 401, 403, 404, 413, 415, 422] },
        ),
      },
      '/api/projects/{id}/terrain': {
        post: op(
          "upload the project's terrain (edit token): a one-band DEM GeoTIFF in metres, EPSG:4326 or a projected EPSG CRS; checked before decoding (415 not a TIFF, 413 too large, 422 truncated or no CRS)",
          {
            params: ['id'],
            query: { name: "the terrain's name" },
            body: { type: 'string', format: 'binary' },
            bodyType: 'image/tiff',
            ok: '201',
            auth: true,
            errors: [400, 401, 403, 404, 413, 415, 422],
          },
        ),
        get: op("the terrain's description and MapLibre raster-dem source", { params: ['id'], errors: [404] }),
        delete: op("remove the project's terrain (edit token) → { id, terrain: null, removed: true }; 404 when it has none", {
          params: ['id'],
          auth: true,
          errors: [401, 403, 404],
        }),
      },
      '/api/projects/{id}/terrain/{z}/{x}/{y}.png': {
        get: op("raster-dem tile of the project's terrain (mapbox encoding)", { params: ['id', 'z', 'x', 'y'], okType: 'image/png', errors: [400, 404] }),
      },
      '/api/projects/{id}/runs': {
        get: op("the project's runs: { id, runs: [{ id, status, title, createdAt, url }] }", { params: ['id'], errors: [404] }),
        post: op(
          'start a run of the project (edit token): the run request names every data set id, each one the project holds; 202 { id, status, cached, url, events, datasets, warnings }',
          { params: ['id'], body: json(runRequestSchema), ok: '202', auth: true, errors: [400, 401, 403, 404, 415, 422, 429, 503] },
        ),
      },
      '/api/projects/{id}/runs/check': {
        post: op('the checks of a run without starting it: 422 run_needs_input saying what to add, or { ok, datasets, warnings } (data sets far apart)', {
          params: ['id'],
          body: json(runRequestSchema),
          errors: [400, 404, 415, 422],
        }),
      },
      '/api/terrain/{z}/{x}/{y}.png': { get: op('terrain raster-dem tile', { params: ['z', 'x', 'y'], okType: 'image/png', errors: [400, 404] }) },
    },
    'x-thermal-model': json(thermalModelSchema),
    /** The run request's `interpolation` member (runs validate it with this schema): method, variogram, trend, …. */
    'x-interpolation-options': json(interpolationOptionsSchema),
  };
  return cached;
}

export function openApiRoutes(app: Hono): void {
  app.get('/api/openapi.json', (c) => c.json(openApiDocument()));
}
