// heat-in-place --points and isotherms --points with an external drift (--trend drift:G.tif): the heat flow is
// simulated conditionally on the residual and conditioned by kriging with the external drift (docs/sources.md#external-drift).
//
// Analytic case as in resource-simulated-totals.test.ts: one layer without heat production, T0 = Tref, so
// T(z) = T0 + q·z/k (Turcotte & Schubert 2002, eq. 4-31 with A = 0) and every rock of the window counts; the heat in
// place of a cell is ρC·A_c·q·(b² − t²)/(2k) (volumetric method, Muffler & Cataldi 1978), linear in q, so the total is
// K·q̄_B with q̄_B the area-weighted mean heat flow over the cells, and the temperature at depth d of a cell is
// T0 + q·d/k, linear in q too. With a Gaussian field (--transform none), a fixed variogram and a global neighbourhood,
// q̄_B is normal with the mean and variance of block kriging with the external drift (Wackernagel 2003, ch. 37: the
// drift rows 1 and s, the block's right-hand side 1 and s̄_B), and q at a cell with those of point kriging with the
// external drift; this test solves both densely (ml-matrix) with geodesic distances and cell areas from
// geographiclib (Karney 2013) and the covariate from the grid's own formula, not the project's code. P10/P90 follow
// from the normal quantile z₀.₉ = 1.281552 (Abramowitz & Stegun 1964, Table 26.5).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Matrix, solve } from 'ml-matrix';
import { readGeoTiff, writeGeoTiff } from '../../server/io/geotiff.ts';
import { runCliJson } from '../helpers/cli.ts';
import { bilinearCovariate } from '../helpers/drift-fixtures.ts';
import {
  geodesicCells,
  geodesicKm as km,
  heatPerMeanFlowEJ,
  randomSites,
  TOTALS_WINDOW as WINDOW,
  expectNormalTotals,
  windowArgs,
  writeLinearModel,
  writeSites,
} from '../helpers/linear-geotherm.ts';

const K_WMK = WINDOW.kWmK,
  T0 = WINDOW.t0C,
  DEPTH_KM = 4;
const SILL = 25,
  RANGE_KM = 30; // exponential, no nugget: C(h) = SILL·exp(−3h/RANGE)
const BBOX = [10, 0, 10.4, 0.4] as const,
  NX = 12,
  NY = 12,
  D = 0.4 / 12;
const R = 1000;
// The covariate grid: 18 × 18 cells of the heat-flow grid's size, three cells wider on every side, so its cell
// centres fall on the heat-flow cells' centres. s = 50 + 4c + 2r + 0.3·c·r at its cell (column c, row r), bilinear in
// the fractional cell position: the bilinear read reproduces it exactly anywhere inside.
const covariate = bilinearCovariate(
  { west: BBOX[0] - 3 * D, north: BBOX[3] + 3 * D, d: D, nx: 18, ny: 18 },
  (c, r) => 50 + 4 * c + 2 * r + 0.3 * c * r,
  'cov.tif',
  'm',
);
const covariateOf = covariate.at;

let dir: string;
const site = randomSites(43, 25, BBOX[0], BBOX[1], (lon, lat, rng) => 40 + 0.4 * covariateOf(lon, lat) + 5 * rng.normal());
const cell = geodesicCells(BBOX[0], BBOX[3], D, D, NX, NY);

beforeAll(() => {
  dir = mkdtempSync(join(process.cwd(), '.tmp-hip-drift-'));
  writeSites(join(dir, 'sites.geojson'), site);
  writeLinearModel(join(dir, 'model.json'), T0, K_WMK);
  writeFileSync(join(dir, 'cov.tif'), Buffer.from(writeGeoTiff(covariate.grid.grid)));
  // A covariate grid missing the heat-flow grid's east column: it does not cover every cell.
  writeFileSync(join(dir, 'short.tif'), Buffer.from(writeGeoTiff({ ...covariate.grid.grid, width: 3, height: 3, values: new Float32Array(9).fill(100) })));
  const hf = {
    width: NX,
    height: NY,
    west: BBOX[0],
    north: BBOX[3],
    dx: D,
    dy: D,
    crs: 'EPSG:4326',
    units: 'mW/m²',
    values: new Float32Array(NX * NY).fill(65),
  };
  writeFileSync(join(dir, 'hf.tif'), Buffer.from(writeGeoTiff(hf)));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const cov = (h: number) => SILL * Math.exp((-3 * h) / RANGE_KM);

/** Kriging with the external drift of the weighted mean over cells `ids` (weights w): dense bordered solve. */
function kedBlock(ids: number[], w: number[]): { mean: number; sd: number } {
  const n = site.q.length;
  const A = Matrix.zeros(n + 2, n + 2),
    b = Matrix.zeros(n + 2, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) A.set(i, j, cov(km(site.lon[i], site.lat[i], site.lon[j], site.lat[j])));
    const s = covariateOf(site.lon[i], site.lat[i]);
    A.set(i, n, 1);
    A.set(n, i, 1);
    A.set(i, n + 1, s);
    A.set(n + 1, i, s);
    let cb = 0;
    ids.forEach((c, k) => (cb += w[k] * cov(km(site.lon[i], site.lat[i], cell.lon[c], cell.lat[c]))));
    b.set(i, 0, cb);
  }
  let sbar = 0;
  ids.forEach((c, k) => (sbar += w[k] * covariateOf(cell.lon[c], cell.lat[c])));
  b.set(n, 0, 1);
  b.set(n + 1, 0, sbar);
  const x = solve(A, b);
  let cbb = 0;
  ids.forEach((a, ka) => ids.forEach((c, kc) => (cbb += w[ka] * w[kc] * cov(km(cell.lon[a], cell.lat[a], cell.lon[c], cell.lat[c])))));
  let mean = 0,
    v = cbb - x.get(n, 0) - x.get(n + 1, 0) * sbar;
  for (let i = 0; i < n; i++) {
    mean += x.get(i, 0) * site.q[i];
    v -= x.get(i, 0) * b.get(i, 0);
  }
  return { mean, sd: Math.sqrt(v) };
}

const SIM = ['--variogram', `exponential:0,${SILL},${RANGE_KM}`, '--transform', 'none', '--neighbors', 'all', '--realizations', String(R), '--seed', '11'];

describe('heat-in-place and isotherms --points --trend drift:G.tif', () => {
  it('heat-in-place: the total P10/P50/P90, mean and sd follow block kriging with the external drift (4 standard errors)', async () => {
    const args = ['--points', join(dir, 'sites.geojson'), '--model', join(dir, 'model.json'), `--bbox=${BBOX.join(',')}`, '--size', `${NX}x${NY}`, ...SIM];
    const { code, json: rep } = await runCliJson(['heat-in-place', ...args, ...windowArgs(WINDOW), '--trend', `drift:${join(dir, 'cov.tif')}`]);
    expect(code).toBe(0);
    const Atot = cell.area.reduce((s, a) => s + a, 0);
    const { mean, sd } = kedBlock(
      cell.area.map((_, c) => c),
      cell.area.map((a) => a / Atot),
    );
    const K = heatPerMeanFlowEJ(WINDOW, Atot);
    const t = rep.heatInPlaceEJ as { p10: number; p50: number; p90: number; mean: number; nominal: number; sd: number };
    // The totals are normal with mean K·q̄_B and sd K·σ_B: within 4 standard errors over R realizations.
    expectNormalTotals(t, K * mean, K * sd, R);
    const s = K * sd;
    const se = (f: number) => (4 * f * s) / Math.sqrt(R);
    // The nominal total runs the map kriged with the same drift: linear, so its mean is the block estimate. Both are
    // double-precision solves of the same system; what separates them is storage in float32: (1) the kriged map is a
    // Float32 grid, each cell rounded within 2⁻²⁴ = 6.0e-8 relative, so the area-weighted total too; (2) cov.tif holds
    // the covariate in float32 (s ≤ 193 on the grid, spacing 2⁻¹⁶, rounding ≤ 7.6e-6) while this solve takes s in
    // double: through the drift slope (about 0.4 mW/m² per unit of s) that moves the estimate by a few 1e-6 mW/m² on a
    // block mean near 85 mW/m², a few 1e-8 relative. About 1e-7 in all (measured: 2.9e-8); 2e-7 is allowed.
    expect(Math.abs(t.nominal - K * mean) / (K * mean)).toBeLessThan(2e-7);
    expect(rep.simulation.trend).toBe('external');
    expect(rep.monteCarlo.heatFlow).toMatch(/external drift: cov\.tif/);
    expect(rep.inputHashes?.drift ?? rep.provenance?.inputs?.drift).toMatch(/^[0-9a-f]{64}$/);
    // Ordinary kriging of the same sites misses the drift's block mean by far more than its standard error.
    const plain = await runCliJson(['heat-in-place', ...args, ...windowArgs(WINDOW)]);
    expect(plain.code).toBe(0);
    expect(Math.abs(plain.json.heatInPlaceEJ.mean - K * mean)).toBeGreaterThan(se(1));
  }, 300_000);

  it('isotherms: the temperature-at-depth mean at cells follows point kriging with the external drift; a grid that does not cover exits 2', async () => {
    const out = join(dir, 'iso');
    const args = [
      '--heat-flow',
      join(dir, 'hf.tif'),
      '--model',
      join(dir, 'model.json'),
      '--points',
      join(dir, 'sites.geojson'),
      '--depths-km',
      String(DEPTH_KM),
    ];
    const { code } = await runCliJson(['isotherms', ...args, ...SIM, '--trend', `drift:${join(dir, 'cov.tif')}`, '--out-dir', out]);
    expect(code).toBe(0);
    const m = await readGeoTiff(readFileSync(join(out, `temperature-${DEPTH_KM}km.mean.tif`)), { source: 'mean' });
    // T = T0 + q·d/k (q in W/m², d in m): the mean of T at a cell is T0 + E[q]·d/k, its standard error σ·d/k/√R.
    const f = (DEPTH_KM * 1e3) / K_WMK / 1e3;
    for (const c of [0, 5 * NX + 6, NX * NY - 1]) {
      const { mean, sd } = kedBlock([c], [1]);
      expect(Math.abs(m.grid.values[c] - (T0 + f * mean))).toBeLessThan((4 * f * sd) / Math.sqrt(R) + 1e-4);
    }
    const bad = await runCliJson(['isotherms', ...args, ...SIM, '--trend', `drift:${join(dir, 'short.tif')}`, '--out-dir', join(dir, 'bad')]);
    expect(bad.code).toBe(2);
    expect(bad.json.error.code).toBe('drift_not_covering');
    expect(bad.json.error.details[0].field).toBe('trend');
  }, 300_000);
});
