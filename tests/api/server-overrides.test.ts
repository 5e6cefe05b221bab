// Columns and sections inside a region whose `layers` override the model use the overridden model, as the run's
// grids do, so the inspector and the map agree.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DEMO_DIR } from '../../server/demo.ts';
import { ROCK_SOLIDUS } from '../../shared/petrology/solidus.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';
import { cellIndexFromXY, xFromCol, yFromRow } from '../../shared/grid/grid.ts';
import { startTestApp, type TestApp } from '../helpers/app.ts';

let t: TestApp;
const post = (path: string, body: unknown) => t.post(path, body);

beforeAll(async () => {
  t = await startTestApp('overrides');
});
afterAll(() => t.close());

describe('model overrides in columns and sections', () => {
  it('a column inside an override region uses its model and matches the run grid cell', async () => {
    // A basin of low-conductivity fill over the south-east of the demo region (invented).
    const basin = {
      type: 'Polygon',
      coordinates: [
        [
          [-127.6, -38.6],
          [-127.0, -38.6],
          [-127.0, -38.1],
          [-127.6, -38.1],
          [-127.6, -38.6],
        ],
      ],
    };
    const regions = {
      type: 'FeatureCollection',
      features: [
        {
          type: 'Feature',
          geometry: basin,
          properties: { id: 'basin', layers: [{ name: 'basin fill', bottomKm: 4, conductivityWmK: 1.6, heatProductionUWm3: 1.0, densityKgM3: 2300 }] },
        },
      ],
    };
    const up = await post('/api/datasets?kind=regions', regions);
    expect(up.status).toBe(201);
    const regionsId = ((await up.json()) as { id: string }).id;
    const res = await post('/api/runs', {
      sites: 'demo-sites',
      model: 'demo-model',
      regions: regionsId,
      isothermsC: [300],
      depthsKm: [5],
      grid: { cellKm: 6 },
    });
    const id = ((await res.json()) as { id: string }).id;
    expect((await t.waitEnd(id)).status).toBe('done');
    const tif = (await readGeoTiff(await (await t.app.request(`/api/runs/${id}/layers/depth-300C.tif`)).arrayBuffer())).grid;
    // A cell centre inside the basin and one outside: the column at each equals the grid's value there.
    for (const [lon, lat, inside] of [
      [-127.3, -38.35, true],
      [-128.4, -37.6, false],
    ] as const) {
      const k = cellIndexFromXY(tif, lon, lat);
      const c = k % tif.width,
        r = Math.floor(k / tif.width);
      const cx = xFromCol(tif, c),
        cy = yFromRow(tif, r);
      const colRes = await post('/api/column', { runId: id, lon: cx, lat: cy, isothermsC: [300] });
      const col = (await colRes.json()) as { isothermDepthsKm: Record<string, number>; modelRegion: string | null };
      expect(colRes.status, JSON.stringify(col)).toBe(200);
      expect(col.modelRegion === null, `inside ${inside}`).toBe(!inside);
      expect(col.isothermDepthsKm['300']).toBeCloseTo(tif.values[k], 3); // Float32 grid vs the column, 1 m
    }
    // The same heat flow gives a shallower 300 °C under the insulating fill than under the base model.
    const demoModel = JSON.parse(readFileSync(join(DEMO_DIR, 'model.json'), 'utf8'));
    const base = (await (await post('/api/column', { model: demoModel, heatFlowMWm2: 60, isothermsC: [300] })).json()) as {
      isothermDepthsKm: Record<string, number>;
    };
    const withFill = {
      ...demoModel,
      layers: [{ name: 'basin fill', bottomKm: 4, conductivityWmK: 1.6, heatProductionUWm3: 1.0, densityKgM3: 2300 }, ...demoModel.layers],
    };
    const filled = (await (await post('/api/column', { model: withFill, heatFlowMWm2: 60, isothermsC: [300] })).json()) as {
      isothermDepthsKm: Record<string, number>;
    };
    expect(filled.isothermDepthsKm['300']).toBeLessThan(base.isothermDepthsKm['300']);
    // A section across the basin edge names the zone of each column.
    const sec = (await (
      await post('/api/section', {
        runId: id,
        line: [
          [-127.9, -38.35],
          [-127.2, -38.35],
        ],
        maxDepthKm: 20,
      })
    ).json()) as { modelZone: (string | null)[] };
    expect(sec.modelZone[0]).toBeNull();
    expect(sec.modelZone[sec.modelZone.length - 1]).toBe('regions[0] (basin)');
  }, 60_000);
  it("a column inside a region that changes a layer's rock reports that rock's solidus curves", async () => {
    // The demo model's lower crust (25–35 km) is mafic; this invented region makes it felsic.
    const regions = {
      type: 'FeatureCollection',
      features: [
        {
          type: 'Feature',
          geometry: {
            type: 'Polygon',
            coordinates: [
              [
                [-127.6, -38.6],
                [-127.0, -38.6],
                [-127.0, -38.1],
                [-127.6, -38.1],
                [-127.6, -38.6],
              ],
            ],
          },
          properties: { id: 'felsic root', layers: [{ name: 'lower crust', rock: 'felsic-crust' }] },
        },
      ],
    };
    const up = await post('/api/datasets?kind=regions', regions);
    expect(up.status).toBe(201);
    const regionsId = ((await up.json()) as { id: string }).id;
    const res = await post('/api/runs', { sites: 'demo-sites', model: 'demo-model', regions: regionsId, isothermsC: [300], grid: { cellKm: 8 } });
    const id = ((await res.json()) as { id: string }).id;
    expect((await t.waitEnd(id)).status).toBe('done');
    type Layer = { name: string; topKm: number; bottomKm: number; rock: string; wetSolidus: string; drySolidus: string };
    const lowerCrust = async (lon: number, lat: number) => {
      const r = await post('/api/column', { runId: id, lon, lat, maxDepthKm: 40 });
      const col = (await r.json()) as { modelRegion: string | null; layers: Layer[] };
      expect(r.status, JSON.stringify(col)).toBe(200);
      return { region: col.modelRegion, layer: col.layers.find((l) => l.name === 'lower crust')! };
    };
    const inside = await lowerCrust(-127.3, -38.35);
    const outside = await lowerCrust(-128.4, -37.6);
    expect(inside.region).toBe('regions[0] (felsic root)');
    expect(outside.region).toBeNull();
    expect(inside.layer).toMatchObject({ topKm: 25, bottomKm: 35, rock: 'felsic-crust', wetSolidus: 'wet-granite', drySolidus: 'fluid-absent-felsic' });
    expect(outside.layer).toMatchObject({ topKm: 25, bottomKm: 35, rock: 'mafic-crust', wetSolidus: 'wet-basalt', drySolidus: 'dry-basalt' });
    // The curve named inside is the water-saturated granite solidus: near 680 °C at 2 kbar and 620 °C at 10 kbar
    // (docs/sources.md#solidus-granite-wet); outside, the water-saturated gabbro one, near 720 °C at 2 kbar
    // (docs/sources.md#solidus-other-rocks, from memory).
    const curve = (cid: string) =>
      Object.values(ROCK_SOLIDUS)
        .flatMap((p) => [p.wet, p.dry])
        .find((c) => c.id === cid)!;
    expect(curve(inside.layer.wetSolidus).temperatureC(200)).toBeCloseTo(680, -1);
    expect(curve(inside.layer.wetSolidus).temperatureC(1000)).toBeCloseTo(620, -1);
    expect(curve(outside.layer.wetSolidus).temperatureC(200)).toBeCloseTo(720, -1);
  }, 60_000);
});
