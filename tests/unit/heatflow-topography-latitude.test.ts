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

/**
 * The relative error in F from drawing the parallel edge of a step straight (the plane's one documented error here).
 * A parallel at latitude φ is a small circle: along it, at distance x from the point nearest the site, it bows
 * poleward of the straight (geodesic) line by the sagitta δ(x) = x²·tan φ/(2N), N the prime-vertical radius (the
 * parallel's geodesic curvature is tan φ/N; common practice, from memory). The plane keeps the edge straight at the
 * site's distance d, so it puts a strip of width δ(x) of the upper side nearer the site than it is. To first order in
 * δ that strip adds ΔΦ(z) = (H/2π)∫ z·δ(x)/(x² + a²)^{3/2} dx, a² = d² + z², over the chord |x| ≤ L = √(R_M² − d²):
 * (H/2π)·z·(tan φ/2N)·2·(asinh(L/a) − L/√(L² + a²)). Relative error of F over [z1, z2]: (ΔΦ(z2) − ΔΦ(z1))/((z2 − z1)·F).
 * At 72° N, d = 2 km, R_M = 60 km: δ is 1 m at 2 km along the edge and 0.87 km at its ends; the error is 0.16 %
 * over 0–1000 m and 0.18 % over 200–2000 m.
 */
function parallelSagittaError(edgeLatDeg: number, z1: number, z2: number, f: number): number {
  const phi = (edgeLatDeg * Math.PI) / 180;
  const a = 6378137,
    e2 = (1 / 298.257223563) * (2 - 1 / 298.257223563); // WGS84
  const k = Math.tan(phi) / (2 * (a / Math.sqrt(1 - e2 * Math.sin(phi) ** 2)));
  const d = 2000,
    L = Math.sqrt(R_M ** 2 - d ** 2);
  const dPhi = (z: number) => {
    if (z === 0) return 0;
    const r = Math.hypot(d, z);
    return (H / (2 * Math.PI)) * z * k * 2 * (Math.asinh(L / r) - L / Math.hypot(L, r));
  };
  return (dPhi(z2) - dPhi(z1)) / ((z2 - z1) * f);
}
/** Allowance on F beyond the sagitta estimate: a tenth of the estimate's own size, 0.02 % of F. */
const SAGITTA_ALLOWANCE = 0.0002;

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
      edgeLat: null, // a meridian is a geodesic: the plane draws it straight without error
    },
    {
      // The upper side lies north of the parallel 72° N; the site is 2 km south of it along the meridian.
      name: 'a step along a parallel, the site 2 km south of it',
      upper: (_lon: number, lat: number) => lat > LAT,
      site: [0.1, G84.Direct(LAT, 0.1, 180, 2000).lat2 as number],
      edgeLat: LAT,
    },
  ];
  for (const t of cases) {
    it(`${t.name}: F within the plane's sagitta error of the Poisson integral; the corrected gradient consistent`, () => {
      const dem = stepDem(t.upper);
      const [lon, lat] = t.site;
      const G = 30,
        beta = 6.5;
      for (const [z1, z2] of INTERVALS) {
        const [p1, p2] = referencePhi(lon, lat, t.upper, [z1, z2]);
        const fRef = (p2 - p1) / (z2 - z1);
        const f = topographicFactor(dem, lon, lat, z1, z2, R_M / 1000);
        expect(f.coverage).toBeGreaterThan(0.999); // the DEM covers the disc (up to its cells' outline)
        // The bound is the documented error of the method's plane (topography.ts: it cannot follow the convergence of
        // the meridians), worked out for this step; the allowance covers the sagitta's neglected higher-order terms and
        // the method's cell quadrature (the step's edge lies on a row or column boundary of the DEM, so the DEM itself
        // draws it exactly).
        const expected = t.edgeLat === null ? 0 : parallelSagittaError(t.edgeLat, z1, z2, fRef);
        const rel = (f.factor - fRef) / fRef;
        console.log(`${t.name}, ${z1}–${z2} m: F error ${(rel * 100).toFixed(3)} %, sagitta estimate ${(expected * 100).toFixed(3)} %`);
        expect(Math.abs(rel - expected), `F ${f.factor} vs ${fRef}`).toBeLessThan(SAGITTA_ALLOWANCE);
        // Consistency check, not an outside one: the correction inverts the forward relation the reading is made
        // from, so this checks only that F enters it the right way round.
        const measured = G + (G - beta) * fRef; // what a well beside the step reads
        expect(Math.abs(topographicallyCorrectedGradient(measured, f.factor, beta) - G)).toBeLessThan(0.1);
      }
    });
  }
});
