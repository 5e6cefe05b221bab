// The heat-flow corrections data-set action: a project's sites or wells data set, corrected for a surface-temperature
// history and for the project's terrain (and, for wells, a BHT method), becomes a new sites data set whose every
// corrected site keeps its raw heat flow and the size of each correction.
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { openApiDocument } from '../../server/routes/openapi.ts';

let t: TestApp;
let pid: string;
let token: string;

const SECONDS_PER_YEAR = 365.25 * 86400; // Julian year (IAU)
const STEPS = [
  { yearsAgo: 12000, deltaC: 8 },
  { yearsAgo: 3000, deltaC: -1 },
];
const KAPPA = 1e-6;

/**
 * The paleoclimatic change of heat flow (mW/m²) for a gradient measured over [top, bottom] m with conductivity k:
 * a half-space whose surface stepped by ΔTᵢ tᵢ ago carries the gradient disturbance −Σ ΔTᵢ·exp(−z²/4κtᵢ)/√(πκtᵢ)
 * (Carslaw & Jaeger 1959 §2.4; Birch 1948; Beck 1977). Its mean over the interval is taken here by composite
 * Simpson quadrature (not through erfc), and the correction removes it: Δq = −mean × k.
 */
function paleoHeatFlowChange(topM: number, bottomM: number, k: number): number {
  const g = (z: number) =>
    STEPS.reduce(
      (s, st) =>
        s - (st.deltaC * Math.exp((-z * z) / (4 * KAPPA * st.yearsAgo * SECONDS_PER_YEAR))) / Math.sqrt(Math.PI * KAPPA * st.yearsAgo * SECONDS_PER_YEAR),
      0,
    );
  const n = 2000;
  const h = (bottomM - topM) / n;
  let s = g(topM) + g(bottomM);
  for (let i = 1; i < n; i++) s += (i % 2 === 1 ? 4 : 2) * g(topM + i * h);
  const meanPerM = (s * h) / 3 / (bottomM - topM);
  return -meanPerM * 1000 * k;
}

// An invented survey area in open ocean near 35° N 160° E: level ground at 200 m with one conical hill 600 m high.
const HILL = [160.3, 35.3] as const;
function hillDem(): Uint8Array {
  const width = 240,
    height = 120,
    d = 1 / 200; // 0.005° cells over 160–161.2° E, 34.9–35.5° N
  const west = 160,
    north = 35.5;
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++)
    for (let c = 0; c < width; c++) {
      const lon = west + (c + 0.5) * d,
        lat = north - (r + 0.5) * d;
      const km = Math.hypot((lon - HILL[0]) * 91.3, (lat - HILL[1]) * 111);
      values[r * width + c] = 200 + Math.max(0, 600 * (1 - km / 6));
    }
  return writeGeoTiff({ width, height, west, north, dx: d, dy: d, crs: 'EPSG:4326', units: 'm', values });
}

const site = (id: string, lon: number, lat: number, props: Record<string, unknown>) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [lon, lat] },
  properties: { id, heatFlowMWm2: 60, ...props },
});
const SITES = {
  type: 'FeatureCollection',
  features: [
    site('HT-1', HILL[0], HILL[1], { intervalTopM: 100, intervalBottomM: 800, conductivityWmK: 2.5 }),
    site('LV-2', 160.95, 35.1, { intervalTopM: 200, intervalBottomM: 1500, gradientCPerKm: 24 }),
    site('NO-3', 160.6, 35.2, {}),
  ],
};

const auth = () => ({ authorization: `Bearer ${token}` });
const upload = async (kind: string, body: unknown) =>
  (await (
    await t.app.request(`/api/projects/${pid}/datasets?kind=${kind}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify(body),
    })
  ).json()) as { id: string };
const correct = (dsId: string, body: unknown, headers: Record<string, string> = auth()) =>
  t.app.request(`/api/projects/${pid}/datasets/${dsId}/corrections`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', ...headers },
    body: JSON.stringify(body),
  });
type Site = { properties: Record<string, number | string | null> };
const datasetFeatures = async (url: string) => ((await (await t.app.request(url)).json()) as { features: Site[] }).features;

interface Answer {
  dataset: { id: string; kind: string; url: string; featureCount: number };
  reports: {
    id: string;
    status: string;
    rawHeatFlowMWm2: number;
    correctedHeatFlowMWm2: number;
    interval?: { topM: number; bottomM: number; conductivityWmK: number; corrections: { kind: string; heatFlowChangeMWm2: number }[] };
  }[];
  warnings: string[];
  method: string;
  caution: string;
}

let sitesId: string;
beforeAll(async () => {
  t = await startTestApp('hfcorr');
  ({ id: pid, editToken: token } = (await (await t.post('/api/projects', { title: 'corrections' })).json()) as { id: string; editToken: string });
  sitesId = (await upload('sites', SITES)).id;
});
afterAll(() => t.close());

describe('correcting a sites data set', () => {
  it('applies the paleoclimatic correction and records its size in each site', async () => {
    const res = await correct(sitesId, { paleoclimate: { steps: STEPS, diffusivityM2s: KAPPA }, name: 'Sites, paleo-corrected' });
    expect(res.status).toBe(201);
    const a = (await res.json()) as Answer;
    expect(a.dataset.kind).toBe('sites');
    expect(a.dataset.featureCount).toBe(3);
    expect(a.caution).toMatch(/screening/i);
    expect(a.method).toMatch(/Birch 1948/);
    const byId = Object.fromEntries((await datasetFeatures(a.dataset.url)).map((f) => [f.properties.id, f.properties]));
    // HT-1: k given; LV-2: k = q/gradient = 60/24 = 2.5 W/m/K.
    for (const [id, top, bottom] of [
      ['HT-1', 100, 800],
      ['LV-2', 200, 1500],
    ] as const) {
      const expected = paleoHeatFlowChange(top, bottom, 2.5);
      expect(expected).toBeGreaterThan(1); // a post-glacial warming lowers today's shallow gradient
      expect(byId[id].paleoclimateCorrectionMWm2 as number).toBeCloseTo(expected, 2);
      expect(byId[id].uncorrectedHeatFlowMWm2).toBe(60);
      expect(byId[id].heatFlowMWm2 as number).toBeCloseTo(60 + expected, 2);
      expect(byId[id].topographicCorrectionMWm2).toBeNull();
    }
    // A site without its interval is kept unchanged, and the report says why.
    expect(byId['NO-3'].heatFlowMWm2).toBe(60);
    expect(a.reports.find((r) => r.id === 'NO-3')!.status).toBe('not-applicable');
    expect(a.warnings.join(' ')).toMatch(/NO-3.*intervalTopM/);
    // The new data set is listed with the project's data sets; the source is unchanged.
    const list = (await (await t.app.request(`/api/projects/${pid}/datasets`)).json()) as { datasets: { id: string; name: string }[] };
    expect(list.datasets.map((d) => d.name)).toContain('Sites, paleo-corrected');
    expect((await datasetFeatures(`/api/projects/${pid}/datasets/${sitesId}`))[0].properties.heatFlowMWm2).toBe(60);
  });

  it('takes the topographic correction from the project terrain: positive on a hill top, nothing on level ground', async () => {
    const none = await correct(sitesId, { topography: {} });
    expect(none.status).toBe(404);
    expect(((await none.json()) as { error: { code: string; message: string } }).error.message).toMatch(/terrain/);
    const up = await t.app.request(`/api/projects/${pid}/terrain`, {
      method: 'POST',
      headers: { 'content-type': 'image/tiff', ...auth() },
      body: hillDem() as Uint8Array<ArrayBuffer>,
    });
    expect(up.status).toBe(201);
    const res = await correct(sitesId, { topography: { lapseRateCPerKm: 6.5 }, paleoclimate: { steps: STEPS } });
    expect(res.status).toBe(201);
    const a = (await res.json()) as Answer;
    const byId = Object.fromEntries((await datasetFeatures(a.dataset.url)).map((f) => [f.properties.id, f.properties]));
    // Under a hill the isotherms spread, so a gradient measured on its top is too low (Birch 1950; common
    // practice): the correction raises it. Level ground for the whole radius (25 km) needs none.
    expect(byId['HT-1'].topographicCorrectionMWm2 as number).toBeGreaterThan(0.5);
    expect(byId['LV-2'].topographicCorrectionMWm2).toBe(0);
    const hill = a.reports.find((r) => r.id === 'HT-1')!;
    expect(hill.interval!.corrections.map((c) => c.kind)).toEqual(['paleoclimate', 'topographic']);
    const sum = hill.interval!.corrections.reduce((s, c) => s + c.heatFlowChangeMWm2, 0);
    expect(hill.correctedHeatFlowMWm2).toBeCloseTo(hill.rawHeatFlowMWm2 + sum, 9);
  });

  it('refuses what does not apply, with the field named', async () => {
    expect((await correct(sitesId, { paleoclimate: { steps: STEPS } }, {})).status).toBe(401);
    const wellOnly = await correct(sitesId, { paleoclimate: { steps: STEPS }, bht: { method: 'harrison1983' } });
    expect(wellOnly.status).toBe(422);
    expect(JSON.stringify(await wellOnly.json())).toMatch(/"field":"bht"/);
    const empty = await correct(sitesId, {});
    expect(empty.status).toBe(422);
    const badStep = await correct(sitesId, { paleoclimate: { steps: [{ yearsAgo: 0, deltaC: 1 }] } });
    expect(badStep.status).toBe(422);
    const faults = await upload('faults', JSON.parse(readFileSync('fixtures/demo/faults.geojson', 'utf8')));
    expect((await correct(faults.id, { paleoclimate: { steps: STEPS } })).status).toBe(422);
  });
});

describe('correcting a wells data set', () => {
  it('turns wells into corrected sites with a published BHT correction and the paleoclimatic correction', async () => {
    const wellsId = (await upload('wells', JSON.parse(readFileSync('fixtures/demo/wells.geojson', 'utf8')))).id;
    const res = await correct(wellsId, { bht: { method: 'harrison1983' }, surfaceTemperatureC: 12, paleoclimate: { steps: STEPS, diffusivityM2s: KAPPA } });
    expect(res.status).toBe(201);
    const a = (await res.json()) as Answer;
    expect(a.method).toMatch(/Harrison/);
    const sites = await datasetFeatures(a.dataset.url);
    expect(sites.length).toBeGreaterThan(0);
    for (const r of a.reports.filter((x) => x.status === 'corrected')) {
      const iv = r.interval!;
      const p = iv.corrections.find((c) => c.kind === 'paleoclimate')!;
      expect(p.heatFlowChangeMWm2).toBeCloseTo(paleoHeatFlowChange(iv.topM, iv.bottomM, iv.conductivityWmK), 2);
      const s = sites.find((f) => f.properties.sourceWellId === r.id)!;
      expect(s.properties.paleoclimateCorrectionMWm2 as number).toBeCloseTo(p.heatFlowChangeMWm2, 2);
      expect(s.properties.heatFlowMWm2 as number).toBeCloseTo(r.correctedHeatFlowMWm2, 1);
    }
    expect(a.reports.some((r) => r.status === 'corrected')).toBe(true);
  });
});

describe('OpenAPI', () => {
  it('documents the corrections action', () => {
    const doc = openApiDocument() as { paths: Record<string, { post?: { requestBody?: unknown } }> };
    expect(doc.paths['/api/projects/{id}/datasets/{dsId}/corrections']?.post?.requestBody).toBeDefined();
  });
});
