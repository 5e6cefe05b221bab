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

export function inspectRoutes(app: Hono, ctx: AppContext): void {
  const doneRun = async (runId: string): Promise<{ run: RunRecord; heat: RunGrid; sd: RunGrid | null }> => {
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
  };
  const runModel = async (run: RunRecord): Promise<ThermalModelInput> => {
    if (run.model !== null && run.model !== undefined) return parseModelDocument(run.model, `run ${run.id} model`).model;
    const m = (run.request as RunRequest).model;
    if (typeof m !== 'string') return parseModelDocument(m, 'model').model;
    const rec = await ctx.store.getDataset(m);
    if (!rec) throw new InputError(`the model data set ${m} of run ${run.id} is gone`, [{ field: 'model', problem: 'not found' }], 'dataset_not_found');
    return parseModelDocument(JSON.parse(rec.body), `model ${m}`).model;
  };

  /**
   * The model of a run at a point (server/runs/zones.ts). The parsed regions are kept per run and regions content
   * hash, so a click does not parse the run's regions again (a large region set took seconds each time).
   */
  const zoneCache = new Map<string, ModelAt>();
  const runZones = async (run: RunRecord): Promise<ModelAt> => {
    const regionsId = (run.request as RunRequest).regions;
    const rec = regionsId === undefined ? null : await ctx.store.getDataset(regionsId);
    if (regionsId !== undefined && !rec)
      throw new InputError(`the regions data set ${regionsId} of run ${run.id} is gone`, [{ field: 'regions', problem: 'not found' }], 'dataset_not_found');
    const key = `${run.id}\u0000${rec?.contentHash ?? ''}`;
    const hit = zoneCache.get(key);
    if (hit) return hit;
    const at = modelZones(await runModel(run), rec?.body ?? null);
    zoneCache.set(key, at);
    while (zoneCache.size > 16) zoneCache.delete(zoneCache.keys().next().value as string);
    return at;
  };
  const deadlineMs = ctx.limits.computeDeadlineSeconds * 1000;
  /**
   * A column with a Monte Carlo band goes to a worker pool: the short pool when its work is small (a click on a
   * run's map), else the long pool, so a long band never holds short ones behind it. A plain column (bounded
   * layers and samples) is cheap and computed here.
   */
  const column = async (query: ColumnQuery): Promise<ColumnAnswer> => {
    const q: ColumnQuery = { ...query, profileBand: true };
    if (!(q.realizations > 0)) return computeColumn(q);
    const pool = columnWork(q) <= SHORT_COLUMN_WORK ? ctx.compute.short : ctx.compute.long;
    return await pool.run<ColumnAnswer>({ kind: 'column', query: q }, deadlineMs);
  };

  app.post('/api/column', async (c) => {
    requireJsonType(c);
    const body = await jsonBody(c);
    const hasRun = body !== null && typeof body === 'object' && !Array.isArray(body) && 'runId' in body;
    if (hasRun) {
      const q = parseWith(columnAtRunSchema, body, 'column request', 'invalid_column');
      checkSamples(q.maxDepthKm, q.stepKm);
      const { run, heat, sd } = await doneRun(q.runId);
      const req = run.request as RunRequest;
      const q0 = sampleAtLonLat(heat, q.lon, q.lat);
      if (!Number.isFinite(q0)) {
        throw new InputError(
          `no heat-flow value at ${q.lon}, ${q.lat}: outside the run's grid or in a no-data cell`,
          [{ field: 'lon,lat', problem: 'no data at this point' }],
          'no_data_here',
        );
      }
      const s = sd ? sampleAtLonLat(sd, q.lon, q.lat) : NaN;
      const realizations = (req.realizations ?? 0) > 0 ? COLUMN_BAND_REALIZATIONS : 0;
      const here = (await runZones(run))(q.lon, q.lat);
      const out = await column({
        model: here.model,
        heatFlowMWm2: q0,
        heatFlowSdMWm2: Number.isFinite(s) ? s : undefined,
        isothermsC: q.isothermsC ?? req.isothermsC ?? [300, 500],
        depthsKm: q.depthsKm ?? req.depthsKm ?? [5, 10],
        maxDepthKm: q.maxDepthKm,
        stepKm: q.stepKm,
        realizations,
        seed: req.seed ?? 0, // the pipeline's default seed
        porePressure: q.porePressure,
        fluidDensityKgM3: q.fluidDensityKgM3,
      });
      return c.json({ runId: run.id, lon: q.lon, lat: q.lat, modelRegion: here.region, ...out });
    }
    const q = parseWith(columnOfModelSchema, body, 'column request', 'invalid_column');
    checkSamples(q.maxDepthKm, q.stepKm);
    let model: ThermalModelInput;
    if (typeof q.model === 'string') {
      const rec = await ctx.store.getDataset(q.model);
      if (!rec) throw notFound('data set', q.model, 'dataset_not_found');
      if (rec.kind !== 'model')
        throw new InputError(
          `data set ${q.model} holds ${rec.kind}, not a model`,
          [{ field: 'model', problem: `expected a model, got ${rec.kind}` }],
          'wrong_dataset_kind',
        );
      model = parseModelDocument(JSON.parse(rec.body), `model ${q.model}`).model;
    } else {
      model = parseModelDocument(q.model, 'model').model;
    }
    const out = await column({
      model,
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
    return c.json(out);
  });

  app.post('/api/section', async (c) => {
    requireJsonType(c);
    const q = parseWith(sectionSchema, await jsonBody(c), 'section request', 'invalid_section');
    const { run, heat } = await doneRun(q.runId);
    const req = run.request as RunRequest;
    const faultsRec = req.faults !== undefined ? await ctx.store.getDataset(req.faults) : null;
    const iso = await ctx.store.getRunFile(run.id, 'isograds', 'geojson');
    const regionsRec = req.regions !== undefined ? await ctx.store.getDataset(req.regions) : null;
    const model = await runModel(run);
    const out = await ctx.compute.long.run<Record<string, unknown>>(
      {
        kind: 'section',
        heatFlow: heat.grid,
        model,
        regionsBody: regionsRec?.body ?? null,
        faultsBody: faultsRec?.body ?? null,
        isogradsText: iso ? new TextDecoder().decode(iso.bytes) : null,
        line: q.line,
        maxDepthKm: q.maxDepthKm,
        samples: q.samples,
        depthSamples: q.depthSamples,
        isothermsC: req.isothermsC ?? [300, 500],
      },
      deadlineMs,
    );
    return c.json({ runId: run.id, ...out });
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
