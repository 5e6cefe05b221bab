/**
 * Uncertainty layers of a finished run, read from its realizations (server/runs/realizations.ts):
 *   GET /api/runs/:id/spread?isothermC=300                          → P90 − P10 of the depth to 300 °C, km
 *   GET /api/runs/:id/probability?isothermC=300&shallowerThanKm=5   → P(depth to 300 °C < 5 km)
 *   GET /api/runs/:id/probability?depthKm=5&exceedsC=150            → P(temperature at 5 km > 150 °C)
 * Each answers the layer as GET /api/runs/:id lists layers (name, units, title, legend, stats, urls) plus `tiles`,
 * the raster-dem source of GET /api/runs/:id/tiles/:layer.json. A layer is computed once, stored with the run
 * (GeoTIFF and PNG with the caution and provenance) and listed among its layers from then on.
 */
import type { Hono } from 'hono';
import { z } from 'zod';
import { InputError } from '../../shared/errors.ts';
import { rampLegend } from '../../shared/grid/colorize.ts';
import { EMBER, HAZE } from '../../shared/grid/ramps.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { buildProvenance } from '../../shared/products/provenance.ts';
import { depthProductName, temperatureProductName } from '../../shared/products/names.ts';
import { layerStats } from '../../shared/products/stats.ts';
import type { Legend, RunLayerInfo } from '../../shared/schema/run.ts';
import { geotiffBytes, pngBytes, sha256Hex } from '../io/export.ts';
import { loadRunRealizations } from '../runs/realizations.ts';
import { exceedanceProbability, isothermSpreadKm, type ProbabilityQuery } from '../runs/uncertainty-layers.ts';
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

const fmt = (v: number) => String(+v.toPrecision(12));

interface DerivedSpec {
  name: string;
  title: string;
  units: string;
  method: string;
  legend: (values: Float32Array) => Legend;
  ramp: typeof EMBER;
  compute: (rr: Awaited<ReturnType<typeof loadRunRealizations>>) => Promise<Float32Array>;
}

export function uncertaintyRoutes(app: Hono, ctx: AppContext): void {
  const inFlight = new Map<string, Promise<RunLayerInfo>>();

  async function derive(runId: string, spec: DerivedSpec): Promise<{ info: RunLayerInfo; cached: boolean }> {
    const run = (await ctx.store.getRun(runId))!;
    const known = (run.layers as RunLayerInfo[]).find((l) => l.name === spec.name);
    if (known && (await ctx.store.getRunFile(runId, spec.name, 'tif'))) return { info: known, cached: true };
    const key = `${runId}/${spec.name}`;
    let p = inFlight.get(key);
    if (!p) {
      p = (async () => {
        const rr = await loadRunRealizations(ctx.store, runId);
        const values = await spec.compute(rr);
        const grid: Grid<Float32Array> = { ...rr.grid, units: spec.units, values };
        const summary = (run.summary ?? {}) as { provenance?: { inputs?: Record<string, string> } };
        const provenance = buildProvenance(
          {
            method: `${spec.method}; ${rr.source}`,
            model: run.model,
            inputs: { ...(summary.provenance?.inputs ?? {}), run: runId },
            parameters: { layer: spec.name, realizations: rr.count, seed: rr.seed },
          },
          sha256Hex,
        );
        const legend = spec.legend(values);
        const stats = layerStats(values);
        const info: RunLayerInfo = { name: spec.name, kind: 'raster', units: spec.units, title: spec.title, legend, formats: ['tif', 'png'], stats };
        await ctx.store.storeRunResult(runId, {
          files: [
            { name: spec.name, ext: 'tif', bytes: geotiffBytes(grid, `${spec.title} (${spec.units})`, provenance), contentType: LAYER_CONTENT_TYPES.tif },
            { name: spec.name, ext: 'png', bytes: pngBytes(grid, legend, spec.ramp, provenance, spec.title), contentType: LAYER_CONTENT_TYPES.png },
          ],
          grids: [],
          record: { layers: [...((await ctx.store.getRun(runId))!.layers as RunLayerInfo[]).filter((l) => l.name !== spec.name), info] },
        });
        return info;
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
    const T = fmt(isothermC);
    const r = await derive(run.id, {
      name: `${depthProductName(isothermC)}.spread`,
      title: `Depth to the ${T} °C isotherm, spread (P90 − P10)`,
      units: 'km',
      method: `P90 − P10 (Hyndman & Fan type 7) of the depth to the ${T} °C isotherm over the run's realizations; NoData where a percentile is not reached`,
      ramp: HAZE,
      legend: (v) => {
        const s = layerStats(v);
        return rampLegend(HAZE, 'km', 0, s.max !== null && s.max > 0 ? s.max : 1);
      },
      compute: (rr) => isothermSpreadKm(rr, isothermC),
    });
    return c.json(answer(run.id, r));
  });

  app.get('/api/runs/:id/probability', async (c) => {
    const run = await doneRun(c.req.param('id'));
    const q = parseWith(probabilityQuery, singleQuery(c), 'query', 'bad_query');
    let query: ProbabilityQuery, name: string, title: string;
    if ('isothermC' in q) {
      query = { kind: 'isotherm-shallower', isothermC: q.isothermC, depthKm: q.shallowerThanKm };
      name = `${depthProductName(q.isothermC)}.prob-lt-${fmt(q.shallowerThanKm)}km`;
      title = `Probability that the ${fmt(q.isothermC)} °C isotherm lies shallower than ${fmt(q.shallowerThanKm)} km`;
    } else {
      query = { kind: 'temperature-exceeds', depthKm: q.depthKm, temperatureC: q.exceedsC };
      name = `${temperatureProductName(q.depthKm)}.prob-gt-${fmt(q.exceedsC)}C`;
      title = `Probability that the temperature at ${fmt(q.depthKm)} km exceeds ${fmt(q.exceedsC)} °C`;
    }
    const r = await derive(run.id, {
      name,
      title,
      units: 'probability',
      method: `${title.toLowerCase()}: the fraction of the run's valid realizations where it holds (an isotherm not reached counts as deeper than any depth; invalid columns are left out)`,
      ramp: EMBER,
      legend: () => rampLegend(EMBER, 'probability', 0, 1),
      compute: (rr) => exceedanceProbability(rr, query),
    });
    return c.json(answer(run.id, r));
  });
}
