// The central value of a Monte Carlo product is the mean of its realizations, shown beside the deterministic map
// with their difference (docs/sources.md#realization-mean).
//
// Closed-form case: one layer without heat production, constant conductivity k, so the geotherm is linear,
// T(z) = T0 + q·z/k (Turcotte & Schubert 2002, eq. 4-31 with A = 0; docs/sources.md#geotherm-constant): the depth to
// the isotherm T is z = k·(T − T0)/q and the temperature at depth d is T0 + q·d/k. The heat flow is simulated from
// three sites of the same value q_s, on cell centres, with a fixed exponential variogram without nugget, no transform
// and a global neighbourhood. Ordinary kriging weights sum to 1, so the kriged map is q_s everywhere, and each cell's
// simulated heat flow is N(q_s, σ²) with σ² the ordinary-kriging variance (docs/sources.md#conditional-simulation),
// solved densely here with ml-matrix (docs/sources.md#linear-algebra). Then
//   E[z] = k·(T − T0)·E[1/q], with E[1/q] the integral of q⁻¹ times the normal density over q_s ± 6σ by Simpson's rule
//   (a normal's E[1/q] is unbounded in principle, its density being positive at q = 0; ±6σ holds all but 2·10⁻⁹ of
//   the mass, and q_s > 6.5σ in every cell, so no realization here is expected outside), which exceeds 1/q_s
//   (Jensen's inequality): the mean map is deeper than the deterministic one;
//   E[T(d)] = T0 + q_s·d/k, the deterministic value (linear in q), and its P10/P90 are T0 + (q_s ∓ 1.281552·σ)·d/k
//   (docs/sources.md#normal-distribution).
// Distances are geodesics on WGS84 from geographiclib (docs/sources.md#geodesic). Tolerances are 4.5 standard errors
// of the mean of R realizations, sd(z)/√R with sd(z) from the same normal integral.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import geodesic from 'geographiclib-geodesic';
import { Matrix, solve } from 'ml-matrix';
import { readGeoTiff, writeGeoTiff } from '../../server/io/geotiff.ts';
import { runCliJson } from '../helpers/cli.ts';
import { writeLinearModel, writeSites } from '../helpers/linear-geotherm.ts';

const G = geodesic.Geodesic.WGS84;
const K_WMK = 2.5,
  T0 = 10,
  Q_SITE = 60,
  SILL = 49,
  RANGE_KM = 40,
  R = 3000,
  DEPTH_KM = 5,
  MAX_DEPTH_KM = 22;
const W = 8,
  H = 8,
  WEST = 10,
  NORTH = 0.32,
  STEP = 0.04;
const SITE_ROW = 3,
  SITE_COL = 4;
/** Cells holding a site: the site of interest and two neighbours. */
const SITE_CELLS = [SITE_ROW * W + SITE_COL, SITE_ROW * W + SITE_COL + 1, (SITE_ROW + 1) * W + SITE_COL];
const Z90 = 1.281552;
let dir: string;

const centre = (c: number) => ({ lon: WEST + (c % W) * STEP + STEP / 2, lat: NORTH - Math.floor(c / W) * STEP - STEP / 2 });
const sites = SITE_CELLS.map(centre);

/** Covariance of the exponential model without nugget between two cell centres (geodesic distance). */
function cov(a: { lon: number; lat: number }, b: { lon: number; lat: number }): number {
  const hKm = (G.Inverse(a.lat, a.lon, b.lat, b.lon).s12 as number) / 1000;
  return SILL * Math.exp((-3 * hKm) / RANGE_KM);
}

/** σ of a cell's simulated heat flow: the ordinary-kriging sd, σ² = C(0) − Σλᵢ C(xᵢ, x) − μ (dense solve). */
function sigma(c: number): number {
  const n = sites.length,
    p = centre(c);
  const A = Matrix.zeros(n + 1, n + 1),
    b = Matrix.zeros(n + 1, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) A.set(i, j, cov(sites[i], sites[j]));
    A.set(i, n, 1);
    A.set(n, i, 1);
    b.set(i, 0, cov(sites[i], p));
  }
  b.set(n, 0, 1);
  const x = solve(A, b);
  let v = SILL - x.get(n, 0);
  for (let i = 0; i < n; i++) v -= x.get(i, 0) * b.get(i, 0);
  return SITE_CELLS.includes(c) ? 0 : Math.sqrt(Math.max(0, v));
}

/** E[1/q] and E[1/q²] for q ~ N(mu, s²) over mu ± 6 s, by Simpson's rule (s = 0: the point values). */
function reciprocalMoments(mu: number, s: number): { m1: number; m2: number } {
  if (s === 0) return { m1: 1 / mu, m2: 1 / mu ** 2 };
  expect(mu - 6 * s).toBeGreaterThan(0);
  const n = 4000,
    a = mu - 6 * s,
    b = mu + 6 * s,
    h = (b - a) / n;
  let m1 = 0,
    m2 = 0;
  for (let i = 0; i <= n; i++) {
    const q = a + i * h;
    const w = (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * (h / 3);
    const f = Math.exp(-0.5 * ((q - mu) / s) ** 2) / (s * Math.sqrt(2 * Math.PI));
    m1 += (w * f) / q;
    m2 += (w * f) / (q * q);
  }
  return { m1, m2 };
}

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'subtherm-mean-layer-'));
  // The deterministic map: ordinary kriging of data that all equal q_s is q_s in every cell.
  const grid = {
    width: W,
    height: H,
    west: WEST,
    north: NORTH,
    dx: STEP,
    dy: STEP,
    crs: 'EPSG:4326',
    units: 'mW/m²',
    values: new Float32Array(W * H).fill(Q_SITE),
  };
  writeFileSync(join(dir, 'hf.tif'), Buffer.from(writeGeoTiff(grid)));
  writeSites(join(dir, 'site.geojson'), { lon: sites.map((p) => p.lon), lat: sites.map((p) => p.lat), q: sites.map(() => Q_SITE) });
  writeLinearModel(join(dir, 'model.json'), T0, K_WMK);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

interface Central {
  product: string;
  cells: number;
  cellsMeanUndefined: number;
  mean: number;
  p50: number;
  deterministic: number;
  difference: number;
}

let once: Promise<{ centralValues: Central[] }> | null = null;
/** One run of the verb shared by the checks (its files stay in the temporary folder). */
const runIsotherms = () => (once ??= runVerb());

async function runVerb(): Promise<{ centralValues: Central[] }> {
  const { code, json } = await runCliJson([
    'isotherms',
    ...['--heat-flow', join(dir, 'hf.tif'), '--model', join(dir, 'model.json'), '--out-dir', join(dir, 'out')],
    ...['--isotherms', '150,500', '--depths-km', String(DEPTH_KM), '--max-depth-km', String(MAX_DEPTH_KM)],
    ...['--points', join(dir, 'site.geojson'), '--variogram', `exponential:0,${SILL},${RANGE_KM}`, '--transform', 'none', '--neighbors', 'all'],
    ...['--realizations', String(R), '--seed', '11'],
  ]);
  expect(code).toBe(0);
  const summary = json as { monteCarlo: { centralValues: Central[] } };
  return { centralValues: summary.monteCarlo.centralValues };
}

const tif = async (name: string) => (await readGeoTiff(readFileSync(join(dir, 'out', `${name}.tif`)))).grid.values;

describe('the mean of the realizations as the central value, beside the deterministic map', () => {
  it('depth to an isotherm: mean = k·ΔT·E[1/q] per cell, deeper than the deterministic k·ΔT/q_s; temperature: mean = deterministic', async () => {
    const { centralValues } = await runIsotherms();
    const det = await tif('depth-150C'),
      mean = await tif('depth-150C.mean'),
      diff = await tif('depth-150C.mean-diff');
    const kdt = K_WMK * (150 - T0); // km·mW/m²; 150 °C lies above 22 km for q > 15.9, beyond 5σ in every cell
    let seSum = 0,
      expDiffSum = 0;
    for (let c = 0; c < W * H; c++) {
      const s = sigma(c);
      const { m1, m2 } = reciprocalMoments(Q_SITE, s);
      const se = (kdt * Math.sqrt(Math.max(0, m2 - m1 * m1))) / Math.sqrt(R);
      expect(det[c]).toBeCloseTo(kdt / Q_SITE, 4);
      expect(Math.abs(mean[c] - kdt * m1)).toBeLessThanOrEqual(4.5 * se + 2e-5);
      expect(Math.abs(diff[c] - (mean[c] - det[c]))).toBeLessThan(1e-5);
      seSum += se;
      expDiffSum += kdt * (m1 - 1 / Q_SITE);
    }
    // On the site (no nugget) every realization is the datum: mean = deterministic.
    expect(Math.abs(diff[SITE_ROW * W + SITE_COL])).toBeLessThan(1e-4);
    // The grid's central values: the average of the mean map beside the deterministic map's, and their difference.
    // The average's standard error is at most the average of the cells' (they are correlated).
    const cv = centralValues.find((v) => v.product === 'depth-150C')!;
    const n = W * H;
    expect(cv.cells).toBe(n);
    expect(cv.cellsMeanUndefined).toBe(0);
    expect(cv.deterministic).toBeCloseTo(kdt / Q_SITE, 4);
    expect(Math.abs(cv.difference - expDiffSum / n)).toBeLessThan((4.5 * seSum) / n);
    // The case separates mean from deterministic: the expected difference lies beyond that tolerance.
    expect(expDiffSum / n).toBeGreaterThan((4.5 * seSum) / n);
    expect(cv.difference).toBeGreaterThan(0);

    // Temperature at depth is linear in q: its mean is the deterministic value, its P10/P90 the normal quantiles.
    const tDet = await tif(`temperature-${DEPTH_KM}km`),
      tMean = await tif(`temperature-${DEPTH_KM}km.mean`),
      tP10 = await tif(`temperature-${DEPTH_KM}km.p10`),
      tP90 = await tif(`temperature-${DEPTH_KM}km.p90`);
    const slope = DEPTH_KM / K_WMK; // °C per mW/m²
    for (let c = 0; c < n; c++) {
      const s = sigma(c);
      const sdT = slope * s;
      expect(tDet[c]).toBeCloseTo(T0 + slope * Q_SITE, 3);
      expect(Math.abs(tMean[c] - tDet[c])).toBeLessThanOrEqual((4.5 * sdT) / Math.sqrt(R) + 1e-4);
      // A quantile's standard error: σ·√(p(1 − p)/R)/φ(z_p) = 1.709·σ/√R at p = 0.1, 0.9 (Stuart & Ord 1994, §10.10).
      const seQ = (1.709 * sdT) / Math.sqrt(R);
      expect(Math.abs(tP10[c] - (T0 + slope * (Q_SITE - Z90 * s)))).toBeLessThanOrEqual(4.5 * seQ + 1e-4);
      expect(Math.abs(tP90[c] - (T0 + slope * (Q_SITE + Z90 * s)))).toBeLessThanOrEqual(4.5 * seQ + 1e-4);
    }
    const tcv = centralValues.find((v) => v.product === `temperature-${DEPTH_KM}km`)!;
    expect(Math.abs(tcv.difference)).toBeLessThan((4.5 * slope * Math.sqrt(2 * SILL)) / Math.sqrt(R));
  }, 600_000);

  it('leaves the mean NoData where some realizations do not reach the isotherm above the search depth, and counts those cells', async () => {
    const { centralValues } = await runIsotherms();
    const mean = await tif('depth-500C.mean'),
      p10 = await tif('depth-500C.p10');
    // 500 °C lies at k·ΔT/q = 20.4 km at the sites; above 22 km only where q > k·ΔT/22 = 55.7 mW/m².
    const qMin = (K_WMK * (500 - T0)) / MAX_DEPTH_KM;
    let undefinedCells = 0;
    for (let c = 0; c < W * H; c++) {
      const s = sigma(c);
      // Probability that a realization misses the isotherm: Φ((qMin − q_s)/σ); over R realizations at least one
      // misses almost surely when R·Φ > 20, none when R·Φ < 1e-6.
      const zMiss = s === 0 ? -Infinity : (qMin - Q_SITE) / s;
      const expectedMisses = R * 0.5 * erfc(-zMiss / Math.SQRT2);
      if (Number.isNaN(mean[c])) undefinedCells++;
      if (expectedMisses > 20) expect(mean[c]).toBeNaN();
      if (expectedMisses < 1e-6) expect(Number.isFinite(mean[c])).toBe(true);
      // The P10 (shallow side) is still defined everywhere.
      expect(Number.isFinite(p10[c])).toBe(true);
    }
    expect(mean[SITE_ROW * W + SITE_COL]).toBeCloseTo((K_WMK * (500 - T0)) / Q_SITE, 3);
    const cv = centralValues.find((v) => v.product === 'depth-500C')!;
    expect(undefinedCells).toBeGreaterThan(0);
    expect(cv.cellsMeanUndefined).toBe(undefinedCells);
    expect(cv.cells).toBe(W * H - undefinedCells);
  }, 600_000);
});

/** Complementary error function (Abramowitz & Stegun 7.1.26, |error| < 1.5e-7; docs/sources.md#normal-distribution). */
function erfc(x: number): number {
  const t = 1 / (1 + 0.3275911 * Math.abs(x));
  const y = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429)))) * Math.exp(-x * x);
  return x >= 0 ? y : 2 - y;
}
