// POST /api/section gives each column's lithosphere base and melt onset from the same column limits the column
// answer (POST /api/column) uses: at a point of the section both answers agree, and both agree with the depth where
// the conductive geotherm of a crust-over-mantle model with no heat production meets the mantle adiabat, found here
// from the closed forms alone (docs/sources.md#geotherm-constant, docs/sources.md#mantle-adiabat).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import Ajv from 'ajv';
import { runRequestSchema } from '../../shared/schema/run.ts';
import type { ColumnAnswer } from '../../shared/schema/column.ts';
import { putDoneRun } from '../helpers/stored-runs.ts';
import { startTestApp, type TestApp } from '../helpers/app.ts';

let t: TestApp;

/** Crust 0–30 km (k 2.5 W/m/K), mantle 30–200 km (k 3 W/m/K), no heat production, T0 = 10 °C, Tp = 1330 °C (the default). */
const MODEL = {
  surfaceTemperatureC: 10,
  layers: [
    { name: 'crust', rock: 'mafic-crust', bottomKm: 30, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2900 },
    { name: 'mantle', rock: 'mantle', bottomKm: 200, conductivityWmK: 3, heatProductionUWm3: 0, densityKgM3: 3300 },
  ],
};

/**
 * Where T_cond(z) = T_adiabat(z), km, from the closed forms: with A = 0 the conductive geotherm is linear in each
 * layer, T = T0 + q0·z/k (docs/sources.md#geotherm-constant; mW/m² over W/m/K is K/km); the adiabat is
 * T = Tp·exp(α·g·z/cp) in kelvin with α = 3e-5 1/K, g = 9.81 m/s², cp = 1200 J/kg/K (docs/sources.md#mantle-adiabat,
 * from memory). The conductive line starts below the adiabat at the mantle top and rises faster, so one root; bisection.
 */
function lithosphereBaseKm(q0: number): number {
  const t30 = 10 + (q0 * 30) / 2.5;
  const cond = (z: number) => t30 + (q0 * (z - 30)) / 3;
  const adiabat = (z: number) => (1330 + 273.15) * Math.exp((3e-5 * 9.81 * 1e3 * z) / 1200) - 273.15;
  let lo = 30,
    hi = 200;
  expect(cond(lo)).toBeLessThan(adiabat(lo));
  expect(cond(hi)).toBeGreaterThan(adiabat(hi));
  for (let i = 0; i < 100; i++) {
    const m = 0.5 * (lo + hi);
    if (cond(m) < adiabat(m)) lo = m;
    else hi = m;
  }
  return 0.5 * (lo + hi);
}

beforeAll(async () => {
  t = await startTestApp('section-lithosphere');
  // A finished run whose heat-flow grid rises from 45 mW/m² in the west to 75 in the east (0.05° cells on the equator).
  const width = 40,
    height = 40;
  const values = Float32Array.from({ length: width * height }, (_, k) => 45 + (30 * (k % width)) / (width - 1));
  await putDoneRun(t.store, 'run_lid', {
    request: runRequestSchema.parse({ sites: 'demo-sites', model: MODEL, isothermsC: [300, 500] }),
    model: MODEL,
    grids: ['heatFlow'],
  });
  await t.store.putRunGrid(
    'run_lid',
    'heatFlow',
    { width, height, west: 10, north: 1, dx: 0.05, dy: 0.05, crs: 'EPSG:4326', units: 'mW/m²' },
    await t.store.putBlob(new Uint8Array(values.buffer)),
  );
}, 120_000);

afterAll(async () => {
  await t?.close();
});

describe('the section carries the lithosphere base', () => {
  it("gives each column's lithosphere base and melt onset, equal to the column answer's at that point and to the closed form", async () => {
    const maxDepthKm = 150;
    const res = await t.post('/api/section', {
      runId: 'run_lid',
      line: [
        [10.2, 0],
        [11.8, 0],
      ],
      maxDepthKm,
      samples: 9,
      depthSamples: 31,
    });
    expect(res.status).toBe(200);
    const s = (await res.json()) as {
      runId: string;
      positions: number[][];
      heatFlowMWm2: number[];
      lithosphereBaseKm: (number | null)[];
      meltOnsetKm: (number | null)[];
    };
    // The answer is what GET /api/openapi.json says (read by ajv, an independent JSON Schema validator).
    const doc = (await (await t.app.request('/api/openapi.json')).json()) as {
      paths: Record<string, { post: { responses: Record<string, { content: Record<string, { schema: object }> }> } }>;
    };
    const check = new Ajv({ allErrors: true }).compile(doc.paths['/api/section'].post.responses['200'].content['application/json'].schema);
    expect(check(s), JSON.stringify(check.errors)).toBe(true);
    expect(s.lithosphereBaseKm).toHaveLength(9);
    expect(s.meltOnsetKm).toHaveLength(9);
    for (const j of [0, 4, 8]) {
      const col = await t.post('/api/column', { runId: 'run_lid', lon: s.positions[j][0], lat: s.positions[j][1], maxDepthKm, stepKm: 0.1 });
      expect(col.status).toBe(200);
      const c = (await col.json()) as ColumnAnswer;
      // The same column: same heat flow, same limits (both rounded to 1e-6 km).
      expect(c.surfaceHeatFlowMWm2).toBeCloseTo(s.heatFlowMWm2[j], 2);
      expect(s.lithosphereBaseKm[j], `column ${j}`).toBe(c.lithosphereBaseKm);
      expect(s.meltOnsetKm[j], `column ${j}`).toBe(c.meltOnsetKm);
      // And the closed form: the limits' scan and bisection stop within 1e-6 km of the root.
      expect(Math.abs(s.lithosphereBaseKm[j]! - lithosphereBaseKm(c.surfaceHeatFlowMWm2)), `column ${j} at ${c.surfaceHeatFlowMWm2} mW/m²`).toBeLessThan(1e-5);
    }
    // Hotter columns have a thinner lid: the base rises from west to east.
    const lb = s.lithosphereBaseKm as number[];
    expect(lb[0]).toBeGreaterThan(lb[8] + 10);
  });

  it('gives null where the geotherm does not meet the adiabat above the section depth', async () => {
    const res = await t.post('/api/section', {
      runId: 'run_lid',
      line: [
        [10.2, 0],
        [11.8, 0],
      ],
      maxDepthKm: 40,
      samples: 5,
      depthSamples: 11,
    });
    const s = (await res.json()) as { lithosphereBaseKm: (number | null)[] };
    expect(s.lithosphereBaseKm).toEqual([null, null, null, null, null]);
  });
});
