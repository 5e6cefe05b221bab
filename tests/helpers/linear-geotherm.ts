// Fixtures of the closed-form checks on a linear geotherm: one layer without heat production and constant
// conductivity k, so T(z) = T0 + q·z/k (Turcotte & Schubert 2002, eq. 4-31 with A = 0; docs/sources.md#geotherm-constant).
// The files the verbs read (the model, the sites), invented sites, and the cells' geodesic areas and distances on
// WGS84 from geographiclib (Karney 2013; docs/sources.md#geodesic), not the project's own code.
import { writeFileSync } from 'node:fs';
import geodesic from 'geographiclib-geodesic';
import { expect } from 'vitest';
import { createStream } from '../../shared/random/prng.ts';

const G = geodesic.Geodesic.WGS84;

/** Writes the one-layer model (surface temperature t0C, conductivity kWmK, no heat production, 60 km deep). */
export function writeLinearModel(path: string, t0C: number, kWmK: number): void {
  writeFileSync(
    path,
    JSON.stringify({ surfaceTemperatureC: t0C, layers: [{ name: 'crust', bottomKm: 60, conductivityWmK: kWmK, heatProductionUWm3: 0, densityKgM3: 2700 }] }),
  );
}

export interface Sites {
  lon: number[];
  lat: number[];
  q: number[];
}

/** Writes sites as a GeoJSON FeatureCollection of points s0, s1, … with their heat flow (mW/m²). */
export function writeSites(path: string, s: Sites): void {
  const features = s.lon.map((lon, i) => ({
    type: 'Feature',
    id: `s${i}`,
    geometry: { type: 'Point', coordinates: [lon, s.lat[i]] },
    properties: { heatFlowMWm2: s.q[i] },
  }));
  writeFileSync(path, JSON.stringify({ type: 'FeatureCollection', features }));
}

/**
 * `n` invented sites 0.02° inside the square [west, south] + 0.4°, from the project's seeded stream `seed`: per
 * site its longitude, its latitude, then its heat flow `q(lon, lat, stream)`.
 */
export function randomSites(
  seed: number,
  n: number,
  west: number,
  south: number,
  q: (lon: number, lat: number, rng: ReturnType<typeof createStream>) => number,
): Sites {
  const rng = createStream(seed, 0);
  const s: Sites = { lon: [], lat: [], q: [] };
  for (let i = 0; i < n; i++) {
    const lon = west + 0.02 + 0.36 * rng.uniform(),
      lat = south + 0.02 + 0.36 * rng.uniform();
    s.lon.push(lon);
    s.lat.push(lat);
    s.q.push(q(lon, lat, rng));
  }
  return s;
}

/** Geodesic distance on WGS84 (km). */
export const geodesicKm = (lon1: number, lat1: number, lon2: number, lat2: number): number => (G.Inverse(lat1, lon1, lat2, lon2).s12 as number) / 1000;

/** The cells of a lon/lat grid (row-major from the north-west): their centres and geodesic areas (m²). */
export function geodesicCells(west: number, north: number, dx: number, dy: number, nx: number, ny: number): { lon: number[]; lat: number[]; area: number[] } {
  const cells = { lon: [] as number[], lat: [] as number[], area: [] as number[] };
  for (let r = 0; r < ny; r++) {
    const n = north - r * dy;
    for (let c = 0; c < nx; c++) {
      const w = west + c * dx;
      const p = G.Polygon(false);
      p.AddPoint(n, w);
      p.AddPoint(n - dy, w);
      p.AddPoint(n - dy, w + dx);
      p.AddPoint(n, w + dx);
      cells.area.push(Math.abs(p.Compute(false, true).area as number));
      cells.lon.push(w + dx / 2);
      cells.lat.push(n - dy / 2);
    }
  }
  return cells;
}

/** The heat-in-place window where all rock counts: Tmin = Tref = T0, from topKm to bottomKm, ρC in MJ/(m³·K). */
export interface LinearWindow {
  t0C: number;
  kWmK: number;
  topKm: number;
  bottomKm: number;
  rhoCMJ: number;
}

/** The window of the regional-total checks: T0 = Tref = 15 °C, k = 2.5 W/(m·K), from 1 to 5 km, ρC = 2.7 MJ/(m³·K). */
export const TOTALS_WINDOW: LinearWindow = { t0C: 15, kWmK: 2.5, topKm: 1, bottomKm: 5, rhoCMJ: 2.7 };

/** The heat-in-place options of the window. */
export function windowArgs(w: LinearWindow): string[] {
  const t0 = String(w.t0C);
  return ['--min-temp-c', t0, '--ref-temp-c', t0, '--top-km', String(w.topKm), '--bottom-km', String(w.bottomKm), '--rho-c-mj', String(w.rhoCMJ)];
}

/**
 * K (EJ per mW/m² of area-weighted mean heat flow) over `areaM2`: a cell's heat in place is
 * ρC·A_c·∫(T − Tref)dz = ρC·A_c·q·(b² − t²)/(2k) (volumetric method, Muffler & Cataldi 1978; docs/sources.md#heat-in-place), linear in q.
 */
export function heatPerMeanFlowEJ(w: LinearWindow, areaM2: number): number {
  return (((w.rhoCMJ * 1e6 * ((w.bottomKm * 1e3) ** 2 - (w.topKm * 1e3) ** 2)) / (2 * w.kWmK)) * areaM2 * 1e-3) / 1e18;
}

/** z₀.₉ of the standard normal (Abramowitz & Stegun 1964, Table 26.5; docs/sources.md#normal-distribution). */
export const Z90 = 1.281552;

/**
 * Checks R simulated totals `t` against a normal N(mean, sd²) within 4 standard errors: the mean (σ/√R), the median
 * (1.253·σ/√R) and P10/P90 (1.709·σ/√R), a quantile's σ·√(p(1 − p)/R)/φ(z_p) (Stuart & Ord 1994, §10.10), and the
 * sample sd (σ/√(2(R − 1)) for Gaussian samples).
 */
export function expectNormalTotals(t: { mean: number; p10: number; p50: number; p90: number; sd: number }, mean: number, sd: number, R: number): void {
  const se = (f: number) => (4 * f * sd) / Math.sqrt(R);
  expect(Math.abs(t.mean - mean)).toBeLessThan(se(1));
  expect(Math.abs(t.p50 - mean)).toBeLessThan(se(1.253));
  expect(Math.abs(t.p10 - (mean - Z90 * sd))).toBeLessThan(se(1.709));
  expect(Math.abs(t.p90 - (mean + Z90 * sd))).toBeLessThan(se(1.709));
  expect(Math.abs(t.sd - sd)).toBeLessThan((4 * sd) / Math.sqrt(2 * (R - 1)));
}
