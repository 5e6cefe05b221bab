/**
 * Uncertainty layers of a finished run, read from its realizations (server/runs/realizations.ts):
 *   GET /api/runs/:id/spread?isothermC=300                          → P90 − P10 of the depth to 300 °C, km
 *   GET /api/runs/:id/probability?isothermC=300&shallowerThanKm=5   → P(depth to 300 °C < 5 km)
 *   GET /api/runs/:id/probability?depthKm=5&exceedsC=150            → P(temperature at 5 km > 150 °C)
 * Each answers the layer as GET /api/runs/:id lists layers (name, units, title, legend, stats, urls) plus `tiles`,
 * the raster-dem source of GET /api/runs/:id/tiles/:layer.json. A layer is computed once, on the layers worker pool
 * (server/runs/derived-layer.ts: never on the request thread), stored with the run (GeoTIFF and PNG with the caution
 * and provenance) and listed among its layers from then on. Requests for a layer being computed wait for that one
 * computation; a computation outlives a client that gives up, so asking again later finds the layer stored.
 */
import type { Hono } from 'hono';
import { z } from 'zod';
import { InputError } from '../../shared/errors.ts';
import type { RunLayerInfo } from '../../shared/schema/run.ts';
import { derivedLayerSpec, type DerivedLayerOutput, type DerivedLayerQuery } from '../runs/derived-layer.ts';
import { readRunRecord } from '../runs/realizations.ts';
import { LAYER_CONTENT_TYPES } from '../runs/types.ts';
import { notFound, singleQuery, type AppContext } from './context.ts';
import { withUrls } from './runs.ts';
import { idSchema, parseWith } from './schemas.ts';

const num = (what: string, lo: number, hi: number) =>
  z
    .string()
    .regex(/^-?\d+(\.\d+)?$/, `${what} is a decimal number`)
    .transform(Number)
    .refine((v) => v > lo && v <= hi, `${what} must be within (${lo}, ${hi}]`);

const spreadQuery = z.strictObject({ isothermC: num('isothermC (°C)', -50, 2000) });
const probabilityQuery = z.union(
  [
    z.strictObject({ isothermC: num('isothermC (°C)', -50, 2000), shallowerThanKm: num('shallowerThanKm (km)', 0, 300) }),
    z.strictObject({ depthKm: num('depthKm (km)', 0, 300), exceedsC: num('exceedsC (°C)', -50, 2000) }),
  ],
  {
    error: 'give isothermC with shallowerThanKm (depth to an isotherm shallower than a depth), or depthKm with exceedsC (temperature at a depth above a value)',
  },
);

export function uncertaintyRoutes(app: Hono, ctx: AppContext): void {
  const inFlight = new Map<string, Promise<RunLayerInfo>>();
  const deadlineMs = ctx.limits.runWallClockSeconds * 1000;

  /** Computes the layer on the layers pool and stores it with the run (once, however many ask at the same time). */
  async function derive(runId: string, query: DerivedLayerQuery): Promise<{ info: RunLayerInfo; cached: boolean }> {
    const name = derivedLayerSpec(query).name;
    const run = (await ctx.store.getRun(runId))!;
    const known = (run.layers as RunLayerInfo[]).find((l) => l.name === name);
    if (known && (await ctx.store.getRunFile(runId, name, 'tif'))) return { info: known, cached: true };
    const key = `${runId}/${name}`;
    let p = inFlight.get(key);
    if (!p) {
      p = (async () => {
        // Store reads only here; the realizations, the layer and its files are built on a worker thread.
        const record = await readRunRecord(ctx.store, runId);
        const out = await ctx.compute.layers.run<DerivedLayerOutput>({ kind: 'derived-layer', record, query }, deadlineMs);
        await ctx.store.storeRunResult(runId, {
          files: [
            { name, ext: 'tif', bytes: out.tif, contentType: LAYER_CONTENT_TYPES.tif },
            { name, ext: 'png', bytes: out.png, contentType: LAYER_CONTENT_TYPES.png },
          ],
          grids: [],
          record: { layers: [...((await ctx.store.getRun(runId))!.layers as RunLayerInfo[]).filter((l) => l.name !== name), out.info] },
        });
        return out.info;
      })().finally(() => inFlight.delete(key));
      inFlight.set(key, p);
    }
    return { info: await p, cached: false };
  }

  const doneRun = async (raw: string) => {
    const id = idSchema.safeParse(raw);
    const run = id.success ? await ctx.store.getRun(id.data) : null;
    if (!run) throw notFound('run', raw, 'run_not_found');
    if (run.status !== 'done')
      throw new InputError(
        `run ${run.id} is ${run.status}; its uncertainty layers exist when it is done`,
        [{ field: 'id', problem: `status ${run.status}` }],
        'run_not_done',
      );
    return run;
  };

  const answer = (runId: string, r: { info: RunLayerInfo; cached: boolean }) => ({
    ...withUrls(runId, r.info),
    tiles: `/api/runs/${encodeURIComponent(runId)}/tiles/${encodeURIComponent(r.info.name)}.json`,
    cached: r.cached,
  });

  app.get('/api/runs/:id/spread', async (c) => {
    const run = await doneRun(c.req.param('id'));
    const { isothermC } = parseWith(spreadQuery, singleQuery(c), 'query', 'bad_query');
    return c.json(answer(run.id, await derive(run.id, { kind: 'spread', isothermC })));
  });

  app.get('/api/runs/:id/probability', async (c) => {
    const run = await doneRun(c.req.param('id'));
    const q = parseWith(probabilityQuery, singleQuery(c), 'query', 'bad_query');
    const query: DerivedLayerQuery =
      'isothermC' in q
        ? { kind: 'probability', query: { kind: 'isotherm-shallower', isothermC: q.isothermC, depthKm: q.shallowerThanKm } }
        : { kind: 'probability', query: { kind: 'temperature-exceeds', depthKm: q.depthKm, temperatureC: q.exceedsC } };
    return c.json(answer(run.id, await derive(run.id, query)));
  });
}
