// Spread and probability layers of a finished run, read from the run's own realizations: the spread equals the
// run's stored P90 − P10 maps cell for cell (same streams), the probability layer is a tiled raster in [0, 1], and
// bad questions get 4xx answers.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';

let t: TestApp;
let runId: string;

const tif = async (url: string) => (await readGeoTiff(await (await t.app.request(url)).arrayBuffer())).grid.values;

beforeAll(async () => {
  t = await startTestApp('uncertainty');
  const res = await t.post('/api/runs', { sites: 'demo-sites', faults: 'demo-faults', model: 'demo-model', realizations: 20, seed: 3, grid: { cellKm: 10 } });
  runId = ((await res.json()) as { id: string }).id;
  const run = await t.waitEnd(runId);
  expect(run.status).toBe('done');
}, 120_000);
afterAll(() => t.close());

describe("uncertainty layers from the run's realizations", () => {
  it("simulates the run's heat-flow fields conditionally, and heat in place over the run reads those same fields", async () => {
    const run = (await (await t.app.request(`/api/runs/${runId}`)).json()) as {
      summary: {
        monteCarlo: {
          heatFlow: string;
          heatFlowErrorCorrelation: unknown;
          heatFlowSimulation: {
            checksum: number;
            faultBarriers: boolean;
            method: string;
            variogram: { space: string };
            regionalMeanMWm2: number;
            regionalMeanSdMWm2: number;
            krigedRegionalMeanMWm2: number;
          };
        };
      };
    };
    const mc = run.summary.monteCarlo;
    expect(mc.heatFlow).toMatch(/conditional simulations of the sites/);
    expect(mc.heatFlowErrorCorrelation).toBeNull();
    expect(mc.heatFlowSimulation.variogram.space).toBe('normal scores');
    expect(Number.isFinite(mc.heatFlowSimulation.checksum)).toBe(true);
    // The run's faults are barriers to the conditioning as they are to the kriged map (the spread layer below
    // re-simulates with them and must match the stored checksum).
    expect(mc.heatFlowSimulation.faultBarriers).toBe(true);
    expect(mc.heatFlowSimulation.method).toMatch(/across a fault/);
    // The regional mean of 20 coherent fields spreads far less than the cells' kriging sd (a few mW/m²), and its
    // average lies near the kriged map's regional mean.
    expect(mc.heatFlowSimulation.regionalMeanSdMWm2).toBeGreaterThan(0);
    const hip = await t.post(`/api/runs/${runId}/heat-in-place`, { options: { realizations: 20, seed: 99, minTempC: 100 } });
    expect(hip.status).toBe(202);
    const { url } = (await hip.json()) as { url: string };
    let report: Response = await t.app.request(url);
    for (let i = 0; i < 3000 && report.status === 202; i++) {
      await new Promise((res) => setTimeout(res, 20));
      report = await t.app.request(url);
    }
    expect(report.status).toBe(200);
    const r = (await report.json()) as {
      monteCarlo: { seed: number; heatFlow: string; heatFlowErrorCorrelation: unknown };
      heatInPlaceEJ: { p10: number; p90: number };
      warnings: string[];
    };
    expect(r.monteCarlo.seed).toBe(3);
    expect(r.monteCarlo.heatFlow).toMatch(/conditional simulations of the sites/);
    expect(r.monteCarlo.heatFlowErrorCorrelation).toBeNull();
    expect(r.warnings.some((w) => /seed 99 was replaced by the run's seed 3/.test(w))).toBe(true);
    expect(r.heatInPlaceEJ.p90).toBeGreaterThan(r.heatInPlaceEJ.p10);
  }, 120_000);

  it("gives the spread P90 − P10 equal to the run's own P10 and P90 maps", async () => {
    const res = await t.app.request(`/api/runs/${runId}/spread?isothermC=300`);
    expect(res.status).toBe(200);
    const layer = (await res.json()) as { name: string; units: string; urls: { tif: string }; tiles: string; cached: boolean; legend: { units: string } };
    expect(layer).toMatchObject({ name: 'depth-300C.spread', units: 'km', cached: false });
    const spread = await tif(layer.urls.tif);
    const p10 = await tif(`/api/runs/${runId}/layers/depth-300C.p10.tif`);
    const p90 = await tif(`/api/runs/${runId}/layers/depth-300C.p90.tif`);
    let compared = 0;
    for (let i = 0; i < spread.length; i++) {
      const want = p90[i] - p10[i];
      if (Number.isNaN(want)) {
        expect(Number.isNaN(spread[i])).toBe(true);
        continue;
      }
      expect(Math.abs(spread[i] - want)).toBeLessThan(1e-4);
      compared++;
    }
    expect(compared).toBeGreaterThan(100);
    // Tiled like every raster layer, listed among the run's layers, and computed once.
    expect((await t.app.request(layer.tiles)).status).toBe(200);
    const run = (await (await t.app.request(`/api/runs/${runId}`)).json()) as { layers: { name: string }[] };
    expect(run.layers.map((l) => l.name)).toContain('depth-300C.spread');
    expect(((await (await t.app.request(`/api/runs/${runId}/spread?isothermC=300`)).json()) as { cached: boolean }).cached).toBe(true);
  }, 60_000);

  it('gives exceedance probabilities in [0, 1] that grow with the depth asked', async () => {
    const a = (await (await t.app.request(`/api/runs/${runId}/probability?isothermC=300&shallowerThanKm=8`)).json()) as {
      name: string;
      units: string;
      urls: { tif: string };
    };
    const b = (await (await t.app.request(`/api/runs/${runId}/probability?isothermC=300&shallowerThanKm=14`)).json()) as { urls: { tif: string } };
    expect(a).toMatchObject({ name: 'depth-300C.prob-lt-8km', units: 'probability' });
    const pa = await tif(a.urls.tif),
      pb = await tif(b.urls.tif);
    let some = 0;
    for (let i = 0; i < pa.length; i++) {
      if (Number.isNaN(pa[i])) continue;
      expect(pa[i]).toBeGreaterThanOrEqual(0);
      expect(pb[i]).toBeLessThanOrEqual(1);
      expect(pb[i]).toBeGreaterThanOrEqual(pa[i]);
      some++;
    }
    expect(some).toBeGreaterThan(100);
    const c = await t.app.request(`/api/runs/${runId}/probability?depthKm=5&exceedsC=150`);
    expect(((await c.json()) as { name: string }).name).toBe('temperature-5km.prob-gt-150C');
  }, 60_000);

  it('answers bad questions with 4xx JSON', async () => {
    const code = async (path: string) => ((await (await t.app.request(path)).json()) as { error: { code: string } }).error.code;
    expect((await t.app.request(`/api/runs/${runId}/probability?isothermC=300`)).status).toBe(400);
    expect(await code(`/api/runs/${runId}/spread?isothermC=abc`)).toBe('bad_query');
    expect((await t.app.request(`/api/runs/run_nope/spread?isothermC=300`)).status).toBe(404);
    const noMc = ((await (await t.post('/api/runs', { sites: 'demo-sites', model: 'demo-model', grid: { cellKm: 20 } })).json()) as { id: string }).id;
    await t.waitEnd(noMc);
    const r = await t.app.request(`/api/runs/${noMc}/spread?isothermC=300`);
    expect(r.status).toBe(409);
    expect(await code(`/api/runs/${noMc}/spread?isothermC=300`)).toBe('run_without_realizations');
  }, 60_000);
});
