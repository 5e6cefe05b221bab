// Runs through the real run worker (server/workers/run-worker.ts and the pipeline), in-process: queue → worker
// thread → stored layers and grids → column and section read from the stored grids; real progress, cancel of a
// real run, and the cache.
import Ajv from 'ajv';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import type { ColumnAnswer } from '../../shared/schema/column.ts';
import { RUN_EVENTS, runSummarySchema } from '../../shared/schema/run.ts';
import { referenceCellSideRangeKm } from '../helpers/ground-cell.ts';

let t: TestApp;
let store: TestApp['store'];
let app: TestApp['app'];
let runId: string;
const REQUEST = { sites: 'demo-sites', faults: 'demo-faults', model: 'demo-model', realizations: 20, seed: 5, grid: { cellKm: 8 } };
const post = (path: string, body: unknown) => t.post(path, body);
const waitEnd = (id: string) => t.waitEnd(id);

beforeAll(async () => {
  t = await startTestApp('pipeline');
  ({ store, app } = t);
});
afterAll(() => t.close());

describe('runs with the real pipeline', () => {
  it('runs the demo, streaming real progress, and stores its layers and grids', async () => {
    const res = await post('/api/runs', REQUEST);
    expect(res.status).toBe(202);
    runId = ((await res.json()) as { id: string }).id;
    const sse = await (await app.request(`/api/runs/${runId}/events`)).text();
    const messages = new Set([...sse.matchAll(/"message":"([^"]*)"/g)].map((m) => m[1]));
    expect(messages.size).toBeGreaterThan(3); // the pipeline's own stage messages, not only queued/done
    expect(sse).toMatch(/event: end\ndata: \{[^}]*"status":"done"/);
    // Every event follows the run contract (shared/schema/run.ts): progress events, then exactly one end event.
    const events = [...sse.matchAll(/event: (\w+)\ndata: (.*)\n/g)].map((m) => ({ event: m[1], data: JSON.parse(m[2]) as unknown }));
    expect(events.length).toBeGreaterThan(3);
    for (const e of events) {
      expect(Object.keys(RUN_EVENTS)).toContain(e.event);
      expect(RUN_EVENTS[e.event as keyof typeof RUN_EVENTS].safeParse(e.data).error).toBeUndefined();
    }
    expect(events.filter((e) => e.event === 'end')).toHaveLength(1);
    expect(events.at(-1)!.event).toBe('end');
    const run = await waitEnd(runId);
    expect(run.status).toBe('done');
    // The stored summary of a real run (kriging with faults and 20 realizations) parses with the contract's schema.
    const view = (await (await app.request(`/api/runs/${runId}`)).json()) as { summary: unknown };
    const summary = runSummarySchema.safeParse(view.summary);
    expect(summary.error).toBeUndefined();
    // The same summary and events validate against the schemas GET /api/openapi.json publishes (read by ajv, an
    // independent JSON Schema validator).
    const published = ((await (await app.request('/api/openapi.json')).json()) as { components: { schemas: Record<string, object> } }).components.schemas;
    const ajv = new Ajv({ allErrors: true });
    const checkSummary = ajv.compile(published.RunSummary);
    expect(checkSummary(view.summary), JSON.stringify(checkSummary.errors)).toBe(true);
    const checkEvent = { progress: ajv.compile(published.RunProgressEvent), end: ajv.compile(published.RunEndEvent) };
    for (const e of events) expect(checkEvent[e.event as keyof typeof checkEvent](e.data), `${e.event} ${JSON.stringify(e.data)}`).toBe(true);
    // The cells' ground size over the lon/lat grid: geographiclib geodesic lengths of every cell's sides, to 1e-4.
    const g = summary.data!.grid;
    const [lo, hi] = referenceCellSideRangeKm(g, null);
    expect(Math.abs(g.groundCellKmRange[0] - lo) / lo).toBeLessThan(1e-4);
    expect(Math.abs(g.groundCellKmRange[1] - hi) / hi).toBeLessThan(1e-4);
    expect(summary.data!.interpolation.method).toBe('kriging');
    expect(summary.data!.interpolation.variogram!.empirical.length).toBeGreaterThan(0);
    expect(summary.data!.crossValidation!.n).toBeGreaterThan(0);
    expect(summary.data!.monteCarlo).toMatchObject({ realizations: 20, seed: 5 });
    expect(Object.keys(summary.data!.layers)).toContain('heat-flow');
    const hf = run.layers.find((l) => l.name === 'heat-flow')!;
    expect(hf.formats).toContain('tif');
    const tif = await app.request(hf.urls.tif);
    expect(tif.headers.get('content-type')).toBe('image/tiff');
    expect((await tif.arrayBuffer()).byteLength).toBeGreaterThan(1000);
    expect(await store.getRunGrid(runId, 'heatFlow')).not.toBeNull();
  }, 60_000);

  it("a run with interpolation.trend auto records the chosen drift and every drift's leave-one-out RMSE in its summary", async () => {
    const res = await post('/api/runs', { ...REQUEST, seed: 13, realizations: 4, interpolation: { method: 'kriging', trend: 'auto', decluster: 'auto' } });
    expect(res.status).toBe(202);
    const posted = (await res.json()) as { id: string };
    const run = await waitEnd(posted.id);
    expect(run.status).toBe('done');
    const view = (await (await app.request(`/api/runs/${posted.id}`)).json()) as { summary: unknown; warnings: string[] };
    const summary = runSummarySchema.parse(view.summary);
    // The heat-flow realizations carry a drift too (conditioned by universal kriging) and decluster their histogram.
    const sim = summary.monteCarlo!.heatFlowSimulation!;
    expect(['none', 'linear', 'quadratic']).toContain(sim.trend);
    expect(sim.declustering!.selectedBy).toBe('minimum declustered mean');
    expect(sim.declustering!.cellKm).toBeGreaterThan(0);
    const trend = summary.interpolation.trend!;
    expect(trend.selectedBy).toBe('cross-validation');
    expect(trend.candidates!.map((c) => c.kind)).toEqual(['none', 'linear', 'quadratic']);
    const rmses = trend.candidates!.filter((c) => c.cvRmse !== null).map((c) => c.cvRmse!);
    expect(summary.crossValidation!.rmse).toBe(Math.min(...rmses));
    expect(trend.candidates!.find((c) => c.kind === trend.kind)!.cvRmse).toBe(summary.crossValidation!.rmse);
    // One drift for the run: the realizations are conditioned with the drift the kriged map chose, not a second choice.
    expect(sim.trend).toBe(trend.kind);
    const bad = await post('/api/runs', { ...REQUEST, seed: 14, interpolation: { method: 'kriging', trend: 'cubic' } });
    expect(bad.status).toBe(422);
    expect(await bad.text()).toContain('"field":"trend"');
    // Declustering weights only the normal-score histogram; a fixed variogram simulates heat flow without it: refused.
    const fixed = { model: 'spherical', nugget: 2, partialSill: 40, rangeKm: 60 };
    const dc = await post('/api/runs', { ...REQUEST, seed: 15, realizations: 4, interpolation: { method: 'kriging', variogram: fixed, decluster: 'auto' } });
    expect(dc.status).toBe(422);
    const dcBody = (await dc.json()) as { error: { message: string; details: { field: string }[] } };
    expect(dcBody.error.details[0].field).toBe('interpolation.decluster');
    expect(dcBody.error.message).toMatch(/normal-score transform/);
  }, 90_000);

  it('serves raster-dem tiles of a run layer and a heat-in-place report over the run (mounted sub-apps)', async () => {
    const info = await app.request(`/api/runs/${runId}/tiles/heat-flow.json`);
    expect(info.status).toBe(200);
    const t = (await info.json()) as { tiles: string[]; bounds: number[]; minzoom: number; encoding: string };
    expect(t.encoding).toBe('custom');
    expect(t.tiles[0]).toContain(`/api/runs/${runId}/tiles/heat-flow/{z}/{x}/{y}.png`);
    // The tile under the grid's centre at the minimum zoom (Web Mercator tile scheme, OSM slippy-map formulas).
    const g = (await store.getRunGrid(runId, 'heatFlow'))!.meta;
    const lon = g.west + (g.width * g.dx) / 2,
      lat = g.north - (g.height * g.dy) / 2,
      z = t.minzoom;
    const x = Math.floor(((lon + 180) / 360) * 2 ** z);
    const y = Math.floor(((1 - Math.log(Math.tan((lat * Math.PI) / 180) + 1 / Math.cos((lat * Math.PI) / 180)) / Math.PI) / 2) * 2 ** z);
    const tile = await app.request(`/api/runs/${runId}/tiles/heat-flow/${z}/${x}/${y}.png`);
    expect(tile.status).toBe(200);
    expect(tile.headers.get('content-type')).toBe('image/png');
    expect((await app.request(`/api/runs/${runId}/tiles/no-such-layer.json`)).status).toBe(404);
    const hip = await post(`/api/runs/${runId}/heat-in-place`, { options: { realizations: 0 } });
    expect(hip.status).toBe(202);
    const { url } = (await hip.json()) as { url: string };
    let report: Response = await app.request(url);
    for (let i = 0; i < 1500 && report.status === 202; i++) {
      await new Promise((res) => setTimeout(res, 20));
      report = await app.request(url);
    }
    expect(report.status).toBe(200);
    expect(((await report.json()) as { area: string }).area).toBe('grid');
    expect((await post('/api/runs/run_nope/heat-in-place', {})).status).toBe(404);
  });

  it('returns the cached run for the same request', async () => {
    const again = await post('/api/runs', { ...REQUEST, grid: { cellKm: 8 } });
    expect(again.status).toBe(200);
    expect(((await again.json()) as { id: string }).id).toBe(runId);
  });

  it("answers a column at a cell centre with that cell's heat flow, and a P10–P90 band", async () => {
    const g = (await store.getRunGrid(runId, 'heatFlow'))!;
    const sd = await store.getRunGrid(runId, 'heatFlowSd');
    let col = -1,
      row = -1;
    for (let k = 0; k < g.values.length && col < 0; k++)
      if (Number.isFinite(g.values[k]) && k % g.meta.width > 2 && k > 2 * g.meta.width) {
        col = k % g.meta.width;
        row = Math.floor(k / g.meta.width);
      }
    const lon = g.meta.west + (col + 0.5) * g.meta.dx,
      lat = g.meta.north - (row + 0.5) * g.meta.dy;
    const res = await post('/api/column', { runId, lon, lat });
    expect(res.status).toBe(200);
    const b = (await res.json()) as ColumnAnswer;
    expect(b.surfaceHeatFlowMWm2).toBeCloseTo(g.values[row * g.meta.width + col], 3);
    if (sd) expect(b.heatFlowSdMWm2).toBeCloseTo(sd.values[row * g.meta.width + col], 3);
    expect(b.monteCarlo).not.toBeNull();
    expect(b.monteCarlo!.profileTemperatureC![20].p10!).toBeLessThan(b.monteCarlo!.profileTemperatureC![20].p90!);
    const sec = await post('/api/section', {
      runId,
      line: [
        [lon, lat],
        [lon + 5 * g.meta.dx, lat - 3 * g.meta.dy],
      ],
      samples: 50,
      depthSamples: 40,
    });
    expect(sec.status).toBe(200);
    const s = (await sec.json()) as { temperatureC: (number | null)[]; heatFlowMWm2: (number | null)[] };
    expect(s.heatFlowMWm2[0]).toBeCloseTo(b.surfaceHeatFlowMWm2, 1);
    expect(s.temperatureC.filter((t) => t !== null).length).toBeGreaterThan(0);
  });

  it('cancels a real run in progress; the next run still completes', async () => {
    const big = await post('/api/runs', { ...REQUEST, realizations: 2000, seed: 6, grid: { cellKm: 2 } });
    const { id, runToken } = (await big.json()) as { id: string; runToken: string };
    for (let i = 0; i < 1500; i++) {
      const s = (await (await app.request(`/api/runs/${id}`)).json()) as { status: string; progress: number };
      if (s.status === 'running' && s.progress > 0.05) break;
      await new Promise((res) => setTimeout(res, 20));
    }
    expect((await app.request(`/api/runs/${id}`, { method: 'DELETE', headers: { authorization: `Bearer ${runToken}` } })).status).toBe(200);
    const end = await waitEnd(id);
    expect(end.status).toBe('cancelled');
    expect(end.progress).toBeLessThan(1);
    const next = await post('/api/runs', { ...REQUEST, seed: 8 });
    expect((await waitEnd(((await next.json()) as { id: string }).id)).status).toBe('done');
  }, 90_000);

  it('fails a run the pipeline rejects, with its message, without affecting the server', async () => {
    const bad = await post('/api/runs', { ...REQUEST, seed: 9, maskToRegion: true }); // caught at the boundary
    expect(bad.status).toBe(422);
    // The pipeline grids heat flow only: another field passes the request schema but fails in the worker.
    const res = await post('/api/runs', { ...REQUEST, seed: 9, interpolation: { method: 'idw', field: 'uncertaintyMWm2' } });
    const id = ((await res.json()) as { id: string }).id;
    const end = await waitEnd(id);
    expect(end.status).toBe('failed');
    expect(end.message).toContain('heatFlowMWm2');
    expect((await app.request('/api/health')).status).toBe(200);
  }, 60_000);
});
