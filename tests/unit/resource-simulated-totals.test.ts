// heat-in-place --points: heat flow simulated conditionally from the sites, totals from the per-realization sums.
//
// Analytic case: one layer without heat production, constant conductivity k and surface temperature T0 = Tref, so
// T(z) = T0 + q·z/k (Turcotte & Schubert 2002, eq. 4-31 with A = 0) and every rock of the window is at or above
// Tmin = Tref. The heat in place of a cell is then ρC·A_c·∫(T − Tref)dz = ρC·A_c·q·(b² − t²)/(2k) (volumetric method,
// Muffler & Cataldi 1978), linear in q, and the total is K·Σ A_c·q_c = K·A·q̄_B with q̄_B the area-weighted mean of
// the heat-flow field over the cells. With a Gaussian field (--transform none), a fixed variogram and a global
// neighbourhood, the simulated q̄_B is normal with the block-kriging mean and variance (Journel & Huijbregts 1978,
// §V.A: σ²_B = C̄(B,B) − Σλᵢ C̄(xᵢ,B) − μ for ordinary kriging), which this test solves densely itself. The
// totals' P10/P50/P90 then follow from the normal quantiles z₀.₁ = −1.281552 (Abramowitz & Stegun 1964, Table 26.5).
// Cell areas and distances are geodesics on WGS84 from geographiclib (Karney 2013), not the project's own code.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { Matrix, solve } from 'ml-matrix';
import { runCliJson } from '../helpers/cli.ts';
import {
  geodesicCells,
  geodesicKm as km,
  heatPerMeanFlowEJ,
  randomSites,
  TOTALS_WINDOW as WINDOW,
  expectNormalTotals,
  Z90,
  windowArgs,
  writeLinearModel,
  writeSites,
} from '../helpers/linear-geotherm.ts';

const T0 = WINDOW.t0C;
const SILL = 25,
  RANGE_KM = 30; // exponential, no nugget: C(h) = SILL·exp(−3h/RANGE)
const BBOX = [10, 0, 10.4, 0.4] as const,
  NX = 12,
  NY = 12;
const R = 1000;

let dir: string;
const site = randomSites(42, 25, BBOX[0], BBOX[1], (_lon, _lat, rng) => 60 + 8 * rng.normal());

beforeAll(() => {
  dir = mkdtempSync(join(process.cwd(), '.tmp-hip-sim-'));
  writeSites(join(dir, 'sites.geojson'), site);
  writeLinearModel(join(dir, 'model.json'), T0, WINDOW.kWmK);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** heat-in-place in this process; it must succeed. */
async function run(args: string[]): Promise<Record<string, unknown>> {
  const { code, json } = await runCliJson(['heat-in-place', ...args]);
  expect(code).toBe(0);
  return json;
}

const cov = (h: number) => SILL * Math.exp((-3 * h) / RANGE_KM);

/** Block-kriging mean and variance of the area-weighted mean over the cells (dense ordinary kriging). */
function blockKriging(cLon: number[], cLat: number[], w: number[]): { mean: number; sd: number } {
  const n = site.q.length,
    m = cLon.length;
  const A = Matrix.zeros(n + 1, n + 1),
    b = Matrix.zeros(n + 1, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) A.set(i, j, cov(km(site.lon[i], site.lat[i], site.lon[j], site.lat[j])));
    A.set(i, n, 1);
    A.set(n, i, 1);
    let cb = 0;
    for (let c = 0; c < m; c++) cb += w[c] * cov(km(site.lon[i], site.lat[i], cLon[c], cLat[c]));
    b.set(i, 0, cb);
  }
  b.set(n, 0, 1);
  const x = solve(A, b);
  let cbb = 0;
  for (let a = 0; a < m; a++) for (let c = 0; c < m; c++) cbb += w[a] * w[c] * cov(km(cLon[a], cLat[a], cLon[c], cLat[c]));
  let mean = 0,
    v = cbb - x.get(n, 0);
  for (let i = 0; i < n; i++) {
    mean += x.get(i, 0) * site.q[i];
    v -= x.get(i, 0) * b.get(i, 0);
  }
  return { mean, sd: Math.sqrt(v) };
}

describe('heat-in-place --points: totals from conditional simulations', () => {
  it('gives P10/P50/P90 and mean of the regional total from the block-kriging mean and sd (linear geotherm, all rock counted)', async () => {
    const rep = await run([
      '--points',
      join(dir, 'sites.geojson'),
      '--model',
      join(dir, 'model.json'),
      `--bbox=${BBOX.join(',')}`,
      '--size',
      `${NX}x${NY}`,
      '--variogram',
      `exponential:0,${SILL},${RANGE_KM}`,
      '--transform',
      'none',
      '--neighbors',
      'all',
      ...windowArgs(WINDOW),
      '--realizations',
      String(R),
      '--seed',
      '7',
    ]);
    // Cell centres and geodesic cell areas (m²).
    const { lon: cLon, lat: cLat, area } = geodesicCells(BBOX[0], BBOX[3], (BBOX[2] - BBOX[0]) / NX, (BBOX[3] - BBOX[1]) / NY, NX, NY);
    const Atot = area.reduce((s, a) => s + a, 0);
    const { mean, sd } = blockKriging(
      cLon,
      cLat,
      area.map((a) => a / Atot),
    );
    // Total (EJ) = ρC·(b² − t²)/(2k)·A·q̄ with q in W/m², depths in m.
    const K = heatPerMeanFlowEJ(WINDOW, Atot);
    const t = rep.heatInPlaceEJ as { p10: number; p50: number; p90: number; mean: number; nominal: number; sd: number; meanMinusNominal: number };
    expect(rep.cells).toBe(NX * NY);
    expect(Math.abs((rep.areaKm2 as number) * 1e6 - Atot) / Atot).toBeLessThan(1e-4);
    // The totals are normal with mean K·q̄_B and sd K·σ_B: within 4 standard errors over R realizations.
    expectNormalTotals(t, K * mean, K * sd, R);
    const s = K * sd;
    const se = (f: number) => (4 * f * s) / Math.sqrt(R);
    // The deterministic total runs the kriged map: by linearity its area-weighted mean is the block-kriging mean
    // (the distances differ only between geodesics here and the project's own metric). Linear in q, the total's
    // mean then equals the deterministic value within the mean's standard error: mean − nominal ≈ 0.
    expect(Math.abs(t.nominal - K * mean) / (K * mean)).toBeLessThan(1e-3);
    expect(t.meanMinusNominal).toBeCloseTo(t.mean - t.nominal, 9);
    expect(Math.abs(t.meanMinusNominal)).toBeLessThan(se(1) + 1e-3 * K * mean);
    // The spread of the total is the block's, far narrower than a common shift by each cell's point sd would give.
    expect((t.p90 - t.p10) / (2 * Z90 * K)).toBeLessThan(Math.sqrt(SILL));
    // The sampler of a web run (circulant embedding on a lattice of the grid's spacing; sites snap to the nearest
    // node, at most half a cell diagonal away), so the CLI's totals equal a run's for the same seed.
    expect((rep.simulation as { sampler: string }).sampler).toBe('lattice');
    expect((rep.monteCarlo as { heatFlow: string }).heatFlow).toMatch(/conditional simulations/);
  }, 120_000);

  it('refuses --points with --heat-flow, and --points without realizations, naming the option', async () => {
    const both = await runCliJson(['heat-in-place', '--points', join(dir, 'sites.geojson'), '--heat-flow', 'x.tif', '--model', join(dir, 'model.json')]);
    expect(both.code).toBe(2);
    expect(both.json.error.details).toMatchObject([{ field: 'points' }]);
    const noR = await runCliJson(['heat-in-place', '--points', join(dir, 'sites.geojson'), '--model', join(dir, 'model.json')]);
    expect(noR.code).toBe(2);
    expect(noR.json.error.details).toMatchObject([{ field: 'realizations' }]);
  });
});
