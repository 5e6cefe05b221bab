import type { Grid } from '../grid/grid.ts';
import { WGS84_A_M, WGS84_E2 } from '../geodesy/ellipsoid.ts';

/**
 * Topographic correction of a measured gradient, by the reference-plane method of Birch (1950, "Flow of heat in
 * the Front Range, Colorado", GSA Bull. 61; after Jeffreys 1938; from memory): the ground at elevation h, whose
 * surface temperature falls with height at the lapse rate β, is replaced by the horizontal plane through the site
 * with the temperature (G − β)·(h − h_site) on it (G the undisturbed gradient); the disturbance below the site is
 * the half-space's harmonic response to that boundary value, the Poisson integral
 * u(z) = (1/2π)∫∫ θ(x, y)·z/r³ dx dy. For θ constant on each DEM cell (a rectangle in a local tangent plane) the
 * integral is exact: the cell's solid angle seen from the point, Ω = Σ± atan(x·y / (z·√(x² + y² + z²))) over its
 * corners. The measured gradient then carries (G − β)·F, F = [Φ(z₂) − Φ(z₁)]/(z₂ − z₁) with
 * Φ(z) = Σ (h − h_site)·Ω/(2π); solving G_meas = G + (G − β)·F for G needs no iteration. A small-slope method: it
 * is not for slopes steeper than about 20° or for sites within a few hundred metres of a cliff.
 */

/** Surface-temperature lapse rate used when the user gives none (°C/km): the ICAO standard atmosphere's 6.5 K/km (ISO 2533:1975); ground surfaces often show 4–7. */
export const DEFAULT_LAPSE_RATE_C_PER_KM = 6.5;

/** The geometry of the terrain around one site, independent of the gradient. */
export interface TopographicFactor {
  /** F: the measured gradient carries (G − β)·F (dimensionless). */
  factor: number;
  /** DEM elevation at the site (m, bilinear). */
  siteElevationM: number;
  radiusKm: number;
  /** Share of the disc of radiusKm covered by DEM cells with data (0–1); the rest counts as level with the site. */
  coverage: number;
  /** Share of the Poisson kernel's weight at the interval's bottom that lies beyond radiusKm, z/√(R² + z²): topography there is ignored. */
  kernelBeyondRadius: number;
}

/** Meridional and prime-vertical radii of curvature (m) of the WGS84 ellipsoid at latitude φ (degrees). */
function radiiM(latDeg: number): { m: number; n: number } {
  const s = Math.sin((latDeg * Math.PI) / 180);
  const w = 1 - WGS84_E2 * s * s;
  return { m: (WGS84_A_M * (1 - WGS84_E2)) / (w * Math.sqrt(w)), n: WGS84_A_M / Math.sqrt(w) };
}

/** Bilinear DEM value at a lon/lat (m), from the four nearest cell centres (clamped at the edges); NaN where they have none. */
export function demElevationM(dem: Grid<Float32Array | Float64Array>, lon: number, lat: number): number {
  const fc = Math.min(dem.width - 1, Math.max(0, (lon - dem.west) / dem.dx - 0.5));
  const fr = Math.min(dem.height - 1, Math.max(0, (dem.north - lat) / dem.dy - 0.5));
  const c0 = Math.floor(fc),
    r0 = Math.floor(fr);
  const c1 = Math.min(dem.width - 1, c0 + 1),
    r1 = Math.min(dem.height - 1, r0 + 1);
  const tx = fc - c0,
    ty = fr - r0,
    v = dem.values,
    w = dem.width;
  return (v[r0 * w + c0] * (1 - tx) + v[r0 * w + c1] * tx) * (1 - ty) + (v[r1 * w + c0] * (1 - tx) + v[r1 * w + c1] * tx) * ty;
}

/** Solid angle (sr) of the rectangle [x1, x2] × [y1, y2] of the plane z = 0 seen from (0, 0, z), z > 0. */
export function rectangleSolidAngle(x1: number, x2: number, y1: number, y2: number, z: number): number {
  const f = (x: number, y: number) => Math.atan((x * y) / (z * Math.sqrt(x * x + y * y + z * z)));
  return f(x2, y2) - f(x1, y2) - f(x2, y1) + f(x1, y1);
}

/**
 * F of the reference-plane method (see the file's comment) for a site at lon/lat (degrees) and a gradient measured
 * over [topM, bottomM] (m below ground), from a lon/lat DEM (metres). Cells whose centres lie within radiusKm are
 * summed; cells within two cells of the site are split 8 × 8 with bilinear elevations so the near field is smooth.
 * Cells are laid in a plane about the site: north–south distances from the meridional radius of curvature at the
 * mean of the site's and the row's latitudes, east–west distances from each row's own parallel radius N(φ)·cos φ,
 * so every cell keeps its true area to first order (one east–west scale for the whole disc, the site's, would err by
 * about tan φ·Δφ: 1.6 % at 100 km and 8 % at 500 km north or south of a site at 45°). Distances from the site in
 * this plane still differ from geodesic ones by up to about 0.3 % at 100 km and 1.5 % at 500 km at 45° (2.7 % at
 * 500 km at 60°; compared with geographiclib geodesics): the plane cannot follow the convergence of the meridians.
 */
export function topographicFactor(
  dem: Grid<Float32Array | Float64Array>,
  lon: number,
  lat: number,
  topM: number,
  bottomM: number,
  radiusKm: number,
): TopographicFactor {
  if (dem.crs !== 'EPSG:4326') throw new RangeError(`the terrain must be a lon/lat (EPSG:4326) grid, got ${dem.crs}`);
  if (!(bottomM > topM) || !(topM >= 0)) throw new RangeError(`the interval must satisfy 0 ≤ top < bottom (m), got ${topM}–${bottomM}`);
  if (!(radiusKm > 0)) throw new RangeError(`radiusKm must be > 0, got ${radiusKm}`);
  const h0 = demElevationM(dem, lon, lat);
  if (!Number.isFinite(h0)) throw new RangeError(`the terrain has no elevation at ${lon}, ${lat}`);
  const mPerDegY = (radiiM(lat).m * Math.PI) / 180;
  const R = radiusKm * 1000;
  const colSite = Math.floor((lon - dem.west) / dem.dx),
    rowSite = Math.floor((dem.north - lat) / dem.dy);
  const dr = Math.ceil(R / (dem.dy * mPerDegY)) + 1;
  const r0 = Math.max(0, rowSite - dr),
    r1 = Math.min(dem.height - 1, rowSite + dr);
  const rows = rowScales(dem, lat, r0, r1);
  // Columns to visit: enough for the narrowest (most poleward) row within reach.
  const minPerDegX = Math.max(1e-6, Math.min(...rows.mPerDegX));
  const dc = Math.ceil(R / (dem.dx * minPerDegX)) + 1;
  const c0 = Math.max(0, colSite - dc),
    c1 = Math.min(dem.width - 1, colSite + dc);
  const SPLIT = 8;
  const phi = (z: number) => {
    if (z <= 0) return 0; // the boundary value at the site itself is h_site − h_site
    let sum = 0;
    for (let r = r0; r <= r1; r++) {
      const yN = rows.yN[r - r0],
        yS = rows.yS[r - r0],
        mPerDegX = rows.mPerDegX[r - r0],
        latS = dem.north - (r + 1) * dem.dy;
      for (let c = c0; c <= c1; c++) {
        const xW = (dem.west + c * dem.dx - lon) * mPerDegX,
          xE = xW + dem.dx * mPerDegX;
        const xc = (xW + xE) / 2,
          yc = (yN + yS) / 2;
        if (xc * xc + yc * yc > R * R) continue;
        if (Math.abs(r - rowSite) <= 2 && Math.abs(c - colSite) <= 2) {
          const sx = (xE - xW) / SPLIT,
            sy = (yN - yS) / SPLIT;
          for (let i = 0; i < SPLIT; i++) {
            for (let j = 0; j < SPLIT; j++) {
              const ax = xW + i * sx,
                ay = yS + j * sy;
              const h = demElevationM(dem, lon + (ax + sx / 2) / mPerDegX, latS + ((ay + sy / 2 - yS) / (yN - yS)) * dem.dy);
              if (Number.isFinite(h)) sum += (h - h0) * rectangleSolidAngle(ax, ax + sx, ay, ay + sy, z);
            }
          }
        } else {
          const h = dem.values[r * dem.width + c];
          if (Number.isFinite(h)) sum += (h - h0) * rectangleSolidAngle(xW, xE, yS, yN, z);
        }
      }
    }
    return sum / (2 * Math.PI);
  };
  let covered = 0;
  for (let r = r0; r <= r1; r++) {
    const yN = rows.yN[r - r0],
      yS = rows.yS[r - r0],
      mPerDegX = rows.mPerDegX[r - r0];
    const yc = (yN + yS) / 2,
      cellArea = dem.dx * mPerDegX * (yN - yS);
    for (let c = c0; c <= c1; c++) {
      const xc = (dem.west + (c + 0.5) * dem.dx - lon) * mPerDegX;
      if (xc * xc + yc * yc <= R * R && Number.isFinite(dem.values[r * dem.width + c])) covered += cellArea;
    }
  }
  const factor = (phi(bottomM) - phi(topM)) / (bottomM - topM);
  return { factor, siteElevationM: h0, radiusKm, coverage: Math.min(1, covered / (Math.PI * R * R)), kernelBeyondRadius: bottomM / Math.hypot(R, bottomM) };
}

/**
 * Plane coordinates of DEM rows r0..r1 about a site at latitude latDeg: the northern and southern edges' distance
 * north of the site (m; meridian arc from the meridional radius of curvature at the mean of the site's and the
 * edge's latitudes) and metres per degree of longitude along the row's central parallel, N(φ)·cos φ·π/180.
 */
function rowScales(
  dem: Grid<Float32Array | Float64Array>,
  latDeg: number,
  r0: number,
  r1: number,
): { yN: Float64Array; yS: Float64Array; mPerDegX: Float64Array } {
  const n = r1 - r0 + 1;
  const yN = new Float64Array(n),
    yS = new Float64Array(n),
    mPerDegX = new Float64Array(n);
  const northOf = (edgeLatDeg: number) => ((edgeLatDeg - latDeg) * Math.PI * radiiM((edgeLatDeg + latDeg) / 2).m) / 180;
  for (let r = r0; r <= r1; r++) {
    const north = dem.north - r * dem.dy,
      mid = north - dem.dy / 2;
    yN[r - r0] = northOf(north);
    yS[r - r0] = northOf(north - dem.dy);
    mPerDegX[r - r0] = (radiiM(mid).n * Math.cos((mid * Math.PI) / 180) * Math.PI) / 180;
  }
  return { yN, yS, mPerDegX };
}

/** Undisturbed gradient (°C/km) from a measured one: G = (G_meas + β·F)/(1 + F) (see the file's comment). */
export function topographicallyCorrectedGradient(measuredCPerKm: number, factor: number, lapseRateCPerKm: number): number {
  if (!(1 + factor > 0)) throw new RangeError(`topographic factor ${factor} is outside the method's range (small slopes)`);
  return (measuredCPerKm + lapseRateCPerKm * factor) / (1 + factor);
}

/** Default radius of the terrain taken into account (km): 25 km or 20 times the interval's bottom depth, whichever is larger. */
export function defaultTopographyRadiusKm(bottomM: number): number {
  return Math.max(25, (20 * bottomM) / 1000);
}
