/**
 * Heat in place over a finished run, as a job on the worker pool (never on the request thread):
 *   POST /api/runs/:runId/heat-in-place            JSON body { polygon?, zones?, zoneProperty?, options? }
 *                                                   → 202 { jobId, status, position, url, links }
 *   GET  /api/runs/:runId/heat-in-place/:jobId       the report (the CLI's `heat-in-place --json` object) once done;
 *                                                   202 with the job's status while queued or running
 *   GET  /api/runs/:runId/heat-in-place/:jobId.html  the printable HTML report
 *   GET  /api/runs/:runId/heat-in-place/:jobId.csv   the CSV totals (leading `# caution` line)
 * The three exports are rendered once, when the job runs, and served as kept. polygon: a GeoJSON Polygon or
 * MultiPolygon, Feature or FeatureCollection; zones: a FeatureCollection of region polygons named by
 * `zoneProperty`; options: shared/resource/schema.ts (numbers or distributions, as the CLI takes). Every bound
 * (vertices, realizations, cells × realizations, jobs in flight) is checked before the job is queued.
 */
import type { Context, Hono } from 'hono';
import type { Limits } from '../limits.ts';
import type { RunRecord } from '../store/types.ts';
import { readRunRecord } from '../runs/realizations.ts';
import { z } from 'zod';
import { InputError } from '../../shared/errors.ts';
import { parseAreaPolygon, parseHeatInPlaceOptions, parseZonePolygons } from '../../shared/resource/index.ts';
import type { HeatJob } from '../runs/heat-jobs.ts';
import { clientAddress, errorBody, jsonBody, requireJsonType, type AppContext } from './context.ts';
import { idSchema } from './schemas.ts';
import { retryAfterSecondsOf } from '../http-status.ts';

const bodySchema = z
  .object({
    polygon: z.unknown().optional(),
    zones: z.unknown().optional(),
    zoneProperty: z.string().max(200).optional(),
    options: z.record(z.string(), z.unknown()).optional(),
  })
  .strict();

/** Number of coordinate pairs anywhere inside a GeoJSON value (counted without building anything). */
export function countVertices(v: unknown, stopAt = Infinity): number {
  let n = 0;
  const walk = (x: unknown): void => {
    if (n > stopAt || x === null || typeof x !== 'object') return;
    if (Array.isArray(x)) {
      if (x.length >= 2 && typeof x[0] === 'number' && typeof x[1] === 'number') {
        n++;
        return;
      }
      for (const e of x) walk(e);
      return;
    }
    for (const e of Object.values(x)) walk(e);
  };
  walk(v);
  return n;
}

function jobView(runId: string, job: HeatJob, position: number) {
  const url = `/api/runs/${encodeURIComponent(runId)}/heat-in-place/${job.id}`;
  return {
    jobId: job.id,
    runId,
    status: job.status,
    position,
    createdAt: job.createdAt,
    finishedAt: job.finishedAt,
    url,
    links: { json: url, html: `${url}.html`, csv: `${url}.csv` },
  };
}

type HeatInPlaceRequest = z.infer<typeof bodySchema>;

/** The request body, read as the schema says (422 naming each wrong field). */
async function readBody(c: Context): Promise<HeatInPlaceRequest> {
  requireJsonType(c);
  const parsed = bodySchema.safeParse(await jsonBody(c));
  if (!parsed.success) {
    const details = parsed.error.issues.map((i) => ({ field: i.path.map(String).join('.') || '(body)', problem: i.message }));
    throw new InputError(`bad heat-in-place request: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_request');
  }
  return parsed.data;
}

/** 422 when the polygons together have more than maxPolygonVertices vertices (counted before anything is built). */
function checkVertices(body: HeatInPlaceRequest, L: Limits): void {
  const vertices = countVertices(body.polygon, L.maxPolygonVertices) + countVertices(body.zones, L.maxPolygonVertices);
  if (vertices > L.maxPolygonVertices) {
    throw new InputError(
      `the polygons have more than ${L.maxPolygonVertices} vertices (limit maxPolygonVertices): simplify them first`,
      [
        {
          field: body.polygon !== undefined ? 'polygon' : 'zones',
          problem: `more than ${L.maxPolygonVertices} vertices (limit maxPolygonVertices = ${L.maxPolygonVertices})`,
        },
      ],
      'over_limit',
    );
  }
}

/** 422 when the job asks more realizations, or more cells × realizations, than the limits allow. */
function checkWork(realizations: number, cells: number, L: Limits): number {
  if (realizations > L.maxHeatInPlaceRealizations) {
    throw new InputError(
      `at most ${L.maxHeatInPlaceRealizations} realizations per heat-in-place job (limit maxHeatInPlaceRealizations), got ${realizations}`,
      [
        {
          field: 'options.realizations',
          problem: `${realizations} > maxHeatInPlaceRealizations = ${L.maxHeatInPlaceRealizations}; use the CLI for larger runs`,
        },
      ],
      'over_limit',
    );
  }
  const work = cells * Math.max(1, realizations);
  if (work > L.maxHeatInPlaceCellRealizations) {
    throw new InputError(
      `${cells} cells × ${realizations} realizations = ${work} is over the limit maxHeatInPlaceCellRealizations = ${L.maxHeatInPlaceCellRealizations}: ask for fewer realizations`,
      [{ field: 'options.realizations', problem: `cells × realizations = ${work} > maxHeatInPlaceCellRealizations = ${L.maxHeatInPlaceCellRealizations}` }],
      'over_limit',
    );
  }
  return work;
}

/** A finished run (404 / 409 otherwise). */
async function finishedRun(ctx: AppContext, runId: string): Promise<RunRecord> {
  const id = idSchema.safeParse(runId);
  const run = id.success ? await ctx.store.getRun(id.data) : null;
  if (!run) throw new InputError(`no run with id "${runId}"`, [{ field: 'runId', problem: 'not found' }], 'run_not_found');
  if (run.status !== 'done')
    throw new InputError(
      `run ${run.id} is ${run.status}: heat in place needs a finished run`,
      [{ field: 'runId', problem: `status ${run.status}` }],
      'run_not_done',
    );
  return run;
}

/** Checks every bound of a heat-in-place request, then queues its job. */
async function submitJob(ctx: AppContext, runId: string, body: HeatInPlaceRequest, client: string): Promise<HeatJob> {
  checkVertices(body, ctx.limits);
  const run = await finishedRun(ctx, runId);
  // Everything the caller can get wrong is checked now (bounded above, so cheap), not in the job.
  const options = parseHeatInPlaceOptions(body.options ?? {}, 'options');
  if (body.polygon !== undefined) parseAreaPolygon(body.polygon, 'polygon');
  if (body.zones !== undefined) parseZonePolygons(body.zones, body.zoneProperty, 'zones');
  const heat = await ctx.grids.get(run.id, 'heatFlow');
  if (!heat) throw new InputError(`run ${run.id} stored no heat-flow grid`, [{ field: 'runId', problem: 'no heat-flow grid' }], 'run_without_grid');
  const sd = await ctx.grids.get(run.id, 'heatFlowSd');
  const work = checkWork(options.realizations, heat.grid.width * heat.grid.height, ctx.limits);
  return ctx.heatJobs.submit({
    runId: run.id,
    client,
    work,
    // With realizations, the job reads the run's own (server/runs/realizations.ts): the worker builds them from this record.
    task: {
      kind: 'heat-in-place',
      runId: run.id,
      heatFlow: heat.grid,
      heatFlowSd: sd?.grid ?? null,
      model: run.model,
      body,
      record: options.realizations > 0 ? await readRunRecord(ctx.store, run.id) : null,
    },
  });
}

/** A job's answer: 202 while it waits or runs, its error once failed, else the report or one of its exports. */
function jobAnswer(c: Context, ctx: AppContext, runId: string, file: string): Response {
  const m = /^(hip_[A-Za-z0-9_-]{1,64})(?:\.(html|csv|json))?$/.exec(file);
  const job = m ? ctx.heatJobs.get(runId, m[1]) : null;
  if (!m || !job) {
    throw new InputError(
      `no heat-in-place job "${file}" for run "${runId}" (jobs are kept for a day, and not across a server restart: POST again, the result is seeded)`,
      [{ field: 'jobId', problem: 'not found' }],
      'job_not_found',
    );
  }
  if (job.status === 'queued' || job.status === 'running') return c.json(jobView(runId, job, ctx.heatJobs.position(job)), 202, { 'retry-after': '1' });
  if (job.status === 'failed' || job.output === null) {
    const e = job.error ?? { code: 'internal', message: 'the job failed', details: [], status: 500 };
    const retry = retryAfterSecondsOf(e.code);
    return c.json(
      { ...errorBody(e.code, e.message, e.details), job: jobView(runId, job, 0) },
      e.status as 400,
      retry !== null ? { 'retry-after': String(retry) } : {},
    );
  }
  const out = job.output;
  if (m[2] === 'html') return c.body(out.html, 200, { 'content-type': 'text/html; charset=utf-8', 'cache-control': 'private, max-age=86400' });
  if (m[2] === 'csv')
    return c.body(out.csv, 200, {
      'content-type': 'text/csv; charset=utf-8',
      'content-disposition': `attachment; filename="heat-in-place-${job.id}.csv"`,
      'cache-control': 'private, max-age=86400',
    });
  return c.json(out.report as Record<string, unknown>, 200, { 'cache-control': 'private, max-age=86400' });
}

export function resourceRoutes(app: Hono, ctx: AppContext): void {
  app.post('/api/runs/:runId/heat-in-place', async (c) => {
    const body = await readBody(c);
    const job = await submitJob(ctx, c.req.param('runId'), body, clientAddress(c, ctx.trustedProxies));
    return c.json(jobView(job.runId, job, ctx.heatJobs.position(job)), 202, { location: `/api/runs/${encodeURIComponent(job.runId)}/heat-in-place/${job.id}` });
  });
  app.get('/api/runs/:runId/heat-in-place/:file', (c) => jobAnswer(c, ctx, c.req.param('runId'), c.req.param('file')));
}
