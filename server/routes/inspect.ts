/** POST /api/column (the map inspector's click) and POST /api/section (a vertical section along a line). */
import type { Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import type { RunRequest } from '../../shared/schema/run.ts';
import { computeColumn, type ColumnQuery } from '../../shared/products/column.ts';
import type { ColumnAnswer } from '../../shared/schema/column.ts';
import { sampleAtLonLat, type RunGrid } from '../runs/grids.ts';
import { parseModelDocument } from '../../shared/products/model-input.ts';
import type { RunRecord } from '../store/types.ts';
import { jsonBody, notFound, requireJsonType, type AppContext } from './context.ts';
import { columnAtRunSchema, columnOfModelSchema, parseWith, sectionSchema } from './schemas.ts';
import { modelZones, type ModelAt } from '../runs/zones.ts';
import { noHeatFlowError, type FaultPathsTask } from '../runs/column-reason.ts';
import type { FaultPaths } from '../../shared/interp/fault-paths.ts';

/** Realizations of the column band for a run with realizations (seeded by the run's seed). */
export const COLUMN_BAND_REALIZATIONS = 200;

/**
 * Largest column band sent to the short pool, in realizations × layers × depth samples. A run's map click (200
 * realizations of a 4-layer model, 81 samples: 64,800) takes about 25 ms on one core of the reference machine; this
 * bound (about 0.6 s there) keeps every short task well under a second.
 */
export const SHORT_COLUMN_WORK = 1_000_000;

/** Realizations × layers × depth samples of a column query (the work of its Monte Carlo band). */
export function columnWork(q: Pick<ColumnQuery, 'realizations' | 'model' | 'maxDepthKm' | 'stepKm'>): number {
  return q.realizations * Math.max(1, q.model.layers.length) * (Math.floor(q.maxDepthKm / q.stepKm) + 1);
}

/** A finished run with its heat-flow grid (and sd grid when it has one); 404/409 otherwise. */
async function doneRun(ctx: AppContext, runId: string): Promise<{ run: RunRecord; heat: RunGrid; sd: RunGrid | null }> {
  const run = await ctx.store.getRun(runId);
  if (!run) throw notFound('run', runId, 'run_not_found');
  if (run.status !== 'done')
    throw new InputError(
      `run ${runId} is ${run.status}: columns and sections need a finished run`,
      [{ field: 'runId', problem: `status ${run.status}` }],
      'run_not_done',
    );
  const heat = await ctx.grids.get(runId, 'heatFlow');
  if (!heat) throw new InputError(`run ${runId} stored no heat-flow grid`, [{ field: 'runId', problem: 'no heat-flow grid' }], 'run_without_grid');
  return { run, heat, sd: await ctx.grids.get(runId, 'heatFlowSd') };
}

/** The model a run was made with (its stored model, else its request's inline model or model data set). */
async function runModel(ctx: AppContext, run: RunRecord): Promise<ThermalModelInput> {
  if (run.model !== null && run.model !== undefined) return parseModelDocument(run.model, `run ${run.id} model`).model;
  const m = (run.request as RunRequest).model;
  if (typeof m !== 'string') return parseModelDocument(m, 'model').model;
  const rec = await ctx.store.getDataset(m);
  if (!rec) throw new InputError(`the model data set ${m} of run ${run.id} is gone`, [{ field: 'model', problem: 'not found' }], 'dataset_not_found');
  return parseModelDocument(JSON.parse(rec.body), `model ${m}`).model;
}

/** The model named by a column request: a stored model data set or an inline model. */
async function requestModel(ctx: AppContext, model: unknown): Promise<ThermalModelInput> {
  if (typeof model !== 'string') return parseModelDocument(model, 'model').model;
  const rec = await ctx.store.getDataset(model);
  if (!rec) throw notFound('data set', model, 'dataset_not_found');
  if (rec.kind !== 'model')
    throw new InputError(
      `data set ${model} holds ${rec.kind}, not a model`,
      [{ field: 'model', problem: `expected a model, got ${rec.kind}` }],
      'wrong_dataset_kind',
    );
  return parseModelDocument(JSON.parse(rec.body), `model ${model}`).model;
}

/**
 * The model of a run at a point (server/runs/zones.ts). The parsed regions are kept per run and regions content
 * hash, so a click does not parse the run's regions again (a large region set took seconds each time).
 */
function zoneLookup(ctx: AppContext): (run: RunRecord) => Promise<ModelAt> {
  const cache = new Map<string, ModelAt>();
  return async (run) => {
    const regionsId = (run.request as RunRequest).regions;
    const rec = regionsId === undefined ? null : await ctx.store.getDataset(regionsId);
    if (regionsId !== undefined && !rec)
      throw new InputError(`the regions data set ${regionsId} of run ${run.id} is gone`, [{ field: 'regions', problem: 'not found' }], 'dataset_not_found');
    const key = `${run.id}\u0000${rec?.contentHash ?? ''}`;
    const hit = cache.get(key);
    if (hit) return hit;
    const at = modelZones(await runModel(ctx, run), rec?.body ?? null);
    cache.set(key, at);
    while (cache.size > 16) cache.delete(cache.keys().next().value as string);
    return at;
  };
}

/**
 * A column with a Monte Carlo band goes to a worker pool: the short pool when its work is small (a click on a
 * run's map), else the long pool, so a long band never holds short ones behind it. A plain column (bounded
 * layers and samples) is cheap and computed here.
 */
async function column(ctx: AppContext, query: ColumnQuery): Promise<ColumnAnswer> {
  const q: ColumnQuery = { ...query, profileBand: true };
  if (!(q.realizations > 0)) return computeColumn(q);
  const pool = columnWork(q) <= SHORT_COLUMN_WORK ? ctx.compute.short : ctx.compute.long;
  return await pool.run<ColumnAnswer>({ kind: 'column', query: q }, ctx.limits.computeDeadlineSeconds * 1000);
}

/** The column at a point of a finished run: its heat flow there, its model (region) there, its seed. */
async function columnAtRun(ctx: AppContext, body: unknown, zonesOf: (run: RunRecord) => Promise<ModelAt>): Promise<Record<string, unknown>> {
  const q = parseWith(columnAtRunSchema, body, 'column request', 'invalid_column');
  checkSamples(q.maxDepthKm, q.stepKm);
  const { run, heat, sd } = await doneRun(ctx, q.runId);
  const req = run.request as RunRequest;
  const q0 = sampleAtLonLat(heat, q.lon, q.lat);
  if (!Number.isFinite(q0)) {
    // Why there is no value here (server/runs/column-reason.ts); naming the faults in the way runs on the short pool.
    const faultPaths = (task: FaultPathsTask) => ctx.compute.short.run<FaultPaths>(task, ctx.limits.computeDeadlineSeconds * 1000);
    throw await noHeatFlowError({ store: ctx.store, faultPaths }, run, heat, q.lon, q.lat);
  }
  const s = sd ? sampleAtLonLat(sd, q.lon, q.lat) : NaN;
  const here = (await zonesOf(run))(q.lon, q.lat);
  const out = await column(ctx, {
    model: here.model,
    heatFlowMWm2: q0,
    heatFlowSdMWm2: Number.isFinite(s) ? s : undefined,
    isothermsC: q.isothermsC ?? req.isothermsC ?? [300, 500],
    depthsKm: q.depthsKm ?? req.depthsKm ?? [5, 10],
    maxDepthKm: q.maxDepthKm,
    stepKm: q.stepKm,
    realizations: (req.realizations ?? 0) > 0 ? COLUMN_BAND_REALIZATIONS : 0,
    seed: req.seed ?? 0, // the pipeline's default seed
    porePressure: q.porePressure,
    fluidDensityKgM3: q.fluidDensityKgM3,
  });
  return { runId: run.id, lon: q.lon, lat: q.lat, modelRegion: here.region, ...out };
}

/** The column of a model (inline or a stored data set) at a given heat flow. */
async function columnOfModel(ctx: AppContext, body: unknown): Promise<ColumnAnswer> {
  const q = parseWith(columnOfModelSchema, body, 'column request', 'invalid_column');
  checkSamples(q.maxDepthKm, q.stepKm);
  return await column(ctx, {
    model: await requestModel(ctx, q.model),
    heatFlowMWm2: q.heatFlowMWm2,
    heatFlowSdMWm2: q.heatFlowSdMWm2,
    isothermsC: q.isothermsC ?? [300, 500],
    depthsKm: q.depthsKm ?? [5, 10],
    maxDepthKm: q.maxDepthKm,
    stepKm: q.stepKm,
    realizations: q.realizations,
    seed: q.seed,
    porePressure: q.porePressure,
    fluidDensityKgM3: q.fluidDensityKgM3,
  });
}

/** A vertical section along a line through a finished run, computed on the long pool. */
async function section(ctx: AppContext, body: unknown): Promise<Record<string, unknown>> {
  const q = parseWith(sectionSchema, body, 'section request', 'invalid_section');
  const { run, heat } = await doneRun(ctx, q.runId);
  const req = run.request as RunRequest;
  const faultsRec = req.faults !== undefined ? await ctx.store.getDataset(req.faults) : null;
  const iso = await ctx.store.getRunFile(run.id, 'isograds', 'geojson');
  const regionsRec = req.regions !== undefined ? await ctx.store.getDataset(req.regions) : null;
  const out = await ctx.compute.long.run<Record<string, unknown>>(
    {
      kind: 'section',
      heatFlow: heat.grid,
      model: await runModel(ctx, run),
      regionsBody: regionsRec?.body ?? null,
      faultsBody: faultsRec?.body ?? null,
      isogradsText: iso ? new TextDecoder().decode(iso.bytes) : null,
      line: q.line,
      maxDepthKm: q.maxDepthKm,
      samples: q.samples,
      depthSamples: q.depthSamples,
      isothermsC: req.isothermsC ?? [300, 500],
    },
    ctx.limits.computeDeadlineSeconds * 1000,
  );
  return { runId: run.id, ...out };
}

export function inspectRoutes(app: Hono, ctx: AppContext): void {
  const zonesOf = zoneLookup(ctx);

  app.post('/api/column', async (c) => {
    requireJsonType(c);
    const body = await jsonBody(c);
    const hasRun = body !== null && typeof body === 'object' && !Array.isArray(body) && 'runId' in body;
    return c.json(hasRun ? await columnAtRun(ctx, body, zonesOf) : await columnOfModel(ctx, body));
  });

  app.post('/api/section', async (c) => {
    requireJsonType(c);
    return c.json(await section(ctx, await jsonBody(c)));
  });
}

function checkSamples(maxDepthKm: number, stepKm: number): void {
  if (maxDepthKm / stepKm > 3000) {
    throw new InputError(
      `too many depth samples: maxDepthKm / stepKm = ${Math.ceil(maxDepthKm / stepKm)} (limit 3000)`,
      [{ field: 'stepKm', problem: 'use a larger step' }],
      'invalid_column',
    );
  }
}
