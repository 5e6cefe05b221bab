/**
 * HTTP routes of the heat-in-place assessment, as a Hono sub-app to mount at /api:
 *   POST /runs/:runId/heat-in-place            body { polygon?, zones?, zoneProperty?, options? } → the JSON report
 *                                              (shared/resource/assess.ts) plus `links` to the exports below
 *   GET  /runs/:runId/heat-in-place.html?request=…   the printable HTML report
 *   GET  /runs/:runId/heat-in-place.csv?request=…    the CSV totals (leading `# caution` line)
 *   GET  /runs/:runId/heat-in-place.json?request=…   the JSON report
 * `request` is the POST body as base64url JSON, so a link reproduces the same seeded result on any later visit.
 * polygon: a GeoJSON Polygon/MultiPolygon, Feature or FeatureCollection (drawn on the map or uploaded); zones: a
 * FeatureCollection of region polygons named by `zoneProperty`; options: shared/resource/schema.ts (defaults of
 * SOURCES.md). Errors are `{ error: { code, message, details } }`, 4xx for the caller's fault.
 */
import { Hono } from 'hono';
import { z } from 'zod';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import {
  assessHeatInPlace,
  parseAreaPolygon,
  parseHeatInPlaceOptions,
  parseZonePolygons,
  polygonsOf,
  reportCsv,
  zonesFromPolygons,
  type AreaGeometry,
  type HeatInPlaceResult,
} from '../../shared/resource/index.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { gridGeometry, outlineInGrid, resultHtml } from '../io/resource-output.ts';

type AnyGrid = Grid<Float32Array | Float64Array>;

export interface ResourceRouteDeps {
  /** The grids and the validated model JSON of a finished run, or null when there is no such run. */
  loadRunGrids(runId: string): Promise<{ heatFlow: AnyGrid; heatFlowSd?: AnyGrid; model: unknown } | null>;
  /** Most realizations one request may ask for (default 2000): the work runs on the request's thread. */
  maxRealizations?: number;
  /** Most cells × realizations one request may ask for (default 2×10⁸). */
  maxCellRealizations?: number;
}

const bodySchema = z
  .object({
    polygon: z.unknown().optional(),
    zones: z.unknown().optional(),
    zoneProperty: z.string().max(200).optional(),
    options: z.record(z.string(), z.unknown()).optional(),
  })
  .strict();

type Body = z.infer<typeof bodySchema>;

function parseBody(raw: unknown): Body {
  const r = bodySchema.safeParse(raw);
  if (!r.success) {
    const details = r.error.issues.map((i) => ({ field: i.path.map(String).join('.') || '(body)', problem: i.message }));
    throw new InputError(`bad heat-in-place request: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_request');
  }
  return r.data;
}

/** base64url of a JSON value (RFC 4648 §5), and back. */
export function encodeRequest(body: unknown): string {
  return Buffer.from(JSON.stringify(body), 'utf8').toString('base64url');
}

function decodeRequest(s: string | undefined): unknown {
  if (s === undefined || s === '') return {};
  try {
    return JSON.parse(Buffer.from(s, 'base64url').toString('utf8'));
  } catch {
    throw new InputError('the request parameter is not base64url JSON', [{ field: 'request', problem: 'expected the POST body as base64url-encoded JSON' }], 'invalid_request');
  }
}

/** Builds the sub-app; mount it with `app.route('/api', resourceRoutes(deps))`. */
export function resourceRoutes(deps: ResourceRouteDeps): Hono {
  const app = new Hono();
  const maxR = deps.maxRealizations ?? 2000;
  const maxWork = deps.maxCellRealizations ?? 2e8;

  app.onError((err, c) => {
    if (err instanceof InputError) return c.json({ error: { code: err.code, message: err.message, details: err.details } }, err.status as 400);
    console.error(`[${new Date().toISOString()}] ${c.req.method} ${new URL(c.req.url).pathname}: ${err.stack ?? err.message}`);
    return c.json({ error: { code: 'internal', message: 'internal server error', details: [] } }, 500);
  });

  async function run(runId: string, body: Body): Promise<{ res: HeatInPlaceResult; polygon?: AreaGeometry; toGrid?: (lon: number, lat: number) => [number, number] }> {
    const grids = await deps.loadRunGrids(runId);
    if (grids === null) throw new InputError(`no finished run with id "${runId}"`, [{ field: 'runId', problem: 'not found, or the run has not finished' }], 'not_found', 404);
    const options = parseHeatInPlaceOptions(body.options ?? {}, 'options');
    if (options.realizations > maxR) throw new InputError(`at most ${maxR} realizations per request`, [{ field: 'options.realizations', problem: `got ${options.realizations}; use the CLI for larger runs` }], 'over_limit', 422);
    const cells = grids.heatFlow.width * grids.heatFlow.height;
    if (cells * Math.max(1, options.realizations) > maxWork) throw new InputError('the run is too large for one request', [{ field: 'options.realizations', problem: `${cells} cells × ${options.realizations} realizations exceeds ${maxWork}` }], 'over_limit', 422);
    const model = parseThermalModel(grids.model, 'run model');
    const polygon = body.polygon !== undefined ? parseAreaPolygon(body.polygon, 'polygon') : undefined;
    const regions = body.zones !== undefined ? parseZonePolygons(body.zones, body.zoneProperty, 'zones') : undefined;
    const geo = await gridGeometry(grids.heatFlow, polygon !== undefined || regions !== undefined);
    const zones = regions !== undefined ? { ...zonesFromPolygons(grids.heatFlow, regions.map((r) => ({ name: r.name, polygons: polygonsOf(r.geometry) })), geo.centresLonLat), source: 'polygons' } : undefined;
    const label = (body.polygon as { properties?: { name?: unknown } } | undefined)?.properties?.name;
    const res = assessHeatInPlace({
      heatFlow: grids.heatFlow,
      heatFlowSd: grids.heatFlowSd,
      model,
      polygon,
      polygonLabel: typeof label === 'string' ? label : undefined,
      zones,
      centresLonLat: geo.centresLonLat,
      metresPerUnit: geo.metresPerUnit,
      options,
      inputHashes: { run: runId },
    });
    return { res, polygon, toGrid: geo.toGrid };
  }

  app.post('/runs/:runId/heat-in-place', async (c) => {
    let raw: unknown;
    try {
      raw = await c.req.json();
    } catch {
      throw new InputError('the request body is not JSON', [{ field: '(body)', problem: 'expected a JSON object' }], 'invalid_request');
    }
    const body = parseBody(raw);
    const runId = c.req.param('runId');
    const { res } = await run(runId, body);
    const q = encodeRequest(body);
    const base = `/api/runs/${encodeURIComponent(runId)}/heat-in-place`;
    return c.json({ ...res.report, links: { html: `${base}.html?request=${q}`, csv: `${base}.csv?request=${q}`, json: `${base}.json?request=${q}` } });
  });

  app.get('/runs/:runId/heat-in-place.html', async (c) => {
    const { res, polygon, toGrid } = await run(c.req.param('runId'), parseBody(decodeRequest(c.req.query('request'))));
    return c.body(resultHtml(res, outlineInGrid(polygon, toGrid)), 200, { 'content-type': 'text/html; charset=utf-8' });
  });

  app.get('/runs/:runId/heat-in-place.csv', async (c) => {
    const { res } = await run(c.req.param('runId'), parseBody(decodeRequest(c.req.query('request'))));
    return c.body(reportCsv(res.report), 200, { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': 'attachment; filename="heat-in-place.csv"' });
  });

  app.get('/runs/:runId/heat-in-place.json', async (c) => {
    const { res } = await run(c.req.param('runId'), parseBody(decodeRequest(c.req.query('request'))));
    return c.json(res.report);
  });

  return app;
}
