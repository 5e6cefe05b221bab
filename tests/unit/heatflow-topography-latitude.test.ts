// The topographic correction (shared/heatflow/topography.ts) at 72° N, where a degree of longitude is under a third
// of a degree of latitude on the ground: long straight steps along a meridian and along a parallel, against the
// half-space's Poisson integral (docs/sources.md#topographic-correction) evaluated here in geodesic polar
// coordinates about the site, with every distance and edge crossing from geographiclib (WGS84 geodesics), not from
// the method's own plane, radii of curvature or solid angles.
import geodesic from 'geographiclib-geodesic';
import { describe, expect, it } from 'vitest';
import type { Grid } from '../../shared/grid/grid.ts';
import { topographicallyCorrectedGradient, topographicFactor } from '../../shared/heatflow/topography.ts';

const G84 = geodesic.Geodesic.WGS84;
const LAT = 72;
const H = 800; // m, height of the step's upper side above the site
const R_M = 60_000; // radius of the terrain taken into account
const DY = 0.004; // degrees of latitude per row (about 445 m)
const DX = 0.0125; // degrees of longitude per column (about 431 m at 72° N)

/** A lon/lat DEM of rows 71.4–72.6° N and columns ±2.2° of longitude; `upper(lon, lat)` marks cells at H m, others 0. */
function stepDem(upper: (lon: number, lat: number) => boolean): Grid<Float64Array> {
  const west = -2.2,
    north = LAT + 0.6,
    width = Math.round(4.4 / DX),
    height = Math.round(1.2 / DY);
  const values = new Float64Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = upper(west + (c + 0.5) * DX, north - (r + 0.5) * DY) ? H : 0;
  return { width, height, values, west, north, dx: DX, dy: DY, crs: 'EPSG:4326', units: 'm' };
}

/**
 * Φ(z) = (1/2π)∫∫ θ·z/(ρ² + z²)^{3/2} ρ dρ dα over the disc of radius R_M about the site, θ = H where the geodesic
 * from the site at azimuth α, length ρ, ends on the upper side and 0 elsewhere. Along each azimuth the upper side
 * starts at ρ0 (found by bisection on geographiclib's direct problem) and runs to R_M, so the ρ integral is closed:
 * z·(1/√(ρ0² + z²) − 1/√(R² + z²)); the α integral is Simpson's rule.
 */
function referencePhi(siteLon: number, siteLat: number, upper: (lon: number, lat: number) => boolean, zs: number[]): number[] {
  const at = (azi: number, s: number) => {
    const d = G84.Direct(siteLat, siteLon, azi, s);
    return upper(d.lon2 as number, d.lat2 as number);
  };
  const n = 2000,
    h = 360 / n;
  const starts: number[] = [];
  for (let i = 0; i <= n; i++) {
    const azi = -180 + i * h;
    if (!at(azi, R_M)) {
      starts.push(Infinity);
      continue;
    }
    let lo = 0,
      hi = R_M;
    for (let k = 0; k < 40; k++) {
      const mid = (lo + hi) / 2;
      if (at(azi, mid)) hi = mid;
      else lo = mid;
    }
    starts.push(hi);
  }
  return zs.map((z) => {
    if (z === 0) return 0;
    let s = 0;
    starts.forEach((rho0, i) => {
      const v = rho0 < R_M ? z * (1 / Math.hypot(rho0, z) - 1 / Math.hypot(R_M, z)) : 0;
      s += (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * v;
    });
    return (H * ((s * ((h * Math.PI) / 180)) / 3)) / (2 * Math.PI);
  });
}

describe('topographic correction at 72° N (geodesic reference from geographiclib)', () => {
  const INTERVALS = [
    [0, 1000],
    [200, 2000],
  ];
  // East–west spacing on the ground at the site's latitude, from a geographiclib geodesic along the parallel
  // (over 0.01°, 344 m, it differs from the parallel's arc by far less than a millimetre).
  const mPerDegLon = (G84.Inverse(LAT, 0, LAT, 0.01).s12 as number) / 0.01;
  const cases = [
    {
      // The upper side lies west of the meridian 0°; the site is 2 km east of it along the parallel.
      name: 'a step along a meridian, the site 2 km east of it',
      upper: (lon: number) => lon < 0,
      site: [2000 / mPerDegLon, LAT],
    },
    {
      // The upper side lies north of the parallel 72° N; the site is 2 km south of it along the meridian.
      name: 'a step along a parallel, the site 2 km south of it',
      upper: (_lon: number, lat: number) => lat > LAT,
      site: [0.1, G84.Direct(LAT, 0.1, 180, 2000).lat2 as number],
    },
  ];
  for (const t of cases) {
    it(`${t.name}: F within 0.5 % of the Poisson integral, and the corrected gradient within 0.1 °C/km`, () => {
      const dem = stepDem(t.upper);
      const [lon, lat] = t.site;
      const G = 30,
        beta = 6.5;
      for (const [z1, z2] of INTERVALS) {
        const [p1, p2] = referencePhi(lon, lat, t.upper, [z1, z2]);
        const fRef = (p2 - p1) / (z2 - z1);
        const f = topographicFactor(dem, lon, lat, z1, z2, R_M / 1000);
        expect(f.coverage).toBeGreaterThan(0.999); // the DEM covers the disc (up to its cells' outline)
        // Measured: 1e-5 along the meridian; 0.16–0.18 % along the parallel, whose small circle the method's plane
        // draws straight (topography.ts: the plane cannot follow the convergence of the meridians).
        expect(Math.abs(f.factor - fRef) / fRef, `F ${f.factor} vs ${fRef}`).toBeLessThan(0.005);
        const measured = G + (G - beta) * fRef; // what a well beside the step reads
        expect(Math.abs(topographicallyCorrectedGradient(measured, f.factor, beta) - G)).toBeLessThan(0.1);
      }
    });
  }
});
