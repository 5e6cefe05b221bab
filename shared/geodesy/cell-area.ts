/**
 * Exact area of a latitude/longitude cell on the WGS84 ellipsoid, bounded by two meridians and two parallels.
 *
 * The area between the equator and the parallel φ over one radian of longitude is (Snyder 1987, "Map projections —
 * a working manual", USGS PP 1395, eq. 3-12 for the authalic function q):
 *   S(φ) = (a²(1 − e²)/2)·q(φ),  q(φ) = sin φ/(1 − e² sin² φ) + atanh(e sin φ)/e,
 * so a cell spanning Δλ radians between φ1 and φ2 has area (a²(1 − e²)/2)·Δλ·(q(φ2) − q(φ1)). For the whole
 * ellipsoid this gives 2π·a²(1 − e²)·q(90°), the authalic sphere's area. A spherical formula (e.g. @turf/area, on
 * a sphere of radius 6371008.8 m) differs from this by up to about 1 % (the sphere's cell is about 0.45 % larger at the
 * equator and about 0.9 % smaller near the poles, from the radii of curvature M·N against R²).
 */
import { WGS84_A_M, WGS84_E, WGS84_E2 } from './ellipsoid.ts';

const DEG = Math.PI / 180;

/** Authalic function q(φ) of Snyder (1987) eq. 3-12, without the (1 − e²) factor (dimensionless). */
export function authalicQ(latDeg: number): number {
  const s = Math.sin(latDeg * DEG);
  return s / (1 - WGS84_E2 * s * s) + Math.atanh(WGS84_E * s) / WGS84_E;
}

/**
 * Area (m²) of the WGS84 cell between latitudes latSouthDeg and latNorthDeg (degrees, −90 … 90) spanning
 * dLonDeg degrees of longitude (> 0, ≤ 360).
 */
export function lonLatCellAreaM2(latSouthDeg: number, latNorthDeg: number, dLonDeg: number): number {
  if (!(latSouthDeg >= -90 && latNorthDeg <= 90 && latSouthDeg <= latNorthDeg)) throw new RangeError(`bad latitudes ${latSouthDeg}, ${latNorthDeg}`);
  if (!(dLonDeg > 0 && dLonDeg <= 360)) throw new RangeError(`bad longitude span ${dLonDeg}`);
  const k = 0.5 * WGS84_A_M * WGS84_A_M * (1 - WGS84_E2);
  return k * dLonDeg * DEG * (authalicQ(latNorthDeg) - authalicQ(latSouthDeg));
}

/** True when a CRS string names geographic WGS84 longitude/latitude (EPSG:4326, CRS:84, OGC:CRS84, WGS84). */
export function isLonLatCrs(crs: string): boolean {
  return /^(EPSG:4326|WGS84|CRS:84|OGC:CRS84)$/i.test(crs.trim());
}

/**
 * Area of one cell of each row of a grid, m² (length = height). Longitude/latitude grids: the exact ellipsoidal
 * cell area above (it varies with latitude only). Projected grids: dx·dy in square metres (metresPerUnit converts
 * the CRS unit); this is the area in the projection's plane, which differs from the ground area by the projection's
 * areal scale factor (e.g. about k² for a transverse Mercator or UTM grid, k ≈ 0.9996–1.001).
 */
export function gridRowAreasM2(
  grid: { height: number; north: number; dx: number; dy: number; crs: string },
  metresPerUnit = 1,
): { rowAreaM2: Float64Array; method: 'ellipsoidal' | 'planar' } {
  const out = new Float64Array(grid.height);
  if (isLonLatCrs(grid.crs)) {
    for (let r = 0; r < grid.height; r++) {
      const n = Math.min(90, grid.north - r * grid.dy),
        s = Math.max(-90, grid.north - (r + 1) * grid.dy);
      out[r] = n > s ? lonLatCellAreaM2(s, n, Math.min(360, grid.dx)) : 0;
    }
    return { rowAreaM2: out, method: 'ellipsoidal' };
  }
  if (!(metresPerUnit > 0)) throw new RangeError(`metresPerUnit must be > 0, got ${metresPerUnit}`);
  out.fill(grid.dx * grid.dy * metresPerUnit * metresPerUnit);
  return { rowAreaM2: out, method: 'planar' };
}

/** Inverse of a grid's projection: grid CRS coordinates (its units) → [lon, lat] degrees WGS84. */
export type ToLonLat = (x: number, y: number) => [number, number];

const GL2 = 0.5 / Math.sqrt(3); // Gauss–Legendre 2-point nodes at ±1/√3 on [−1, 1], here on [−½, ½]

/**
 * Ground area density at projected point (x, y): m² of ellipsoid per square unit of the projection,
 * M(φ)·N(φ)·cos φ·|∂(φ, λ)/∂(x, y)| (M, N the meridional and prime-vertical radii of WGS84; Snyder 1987 §4), with the
 * Jacobian of the inverse projection by central differences of step h (units).
 */
function areaDensity(toLonLat: ToLonLat, x: number, y: number, h: number): number {
  const [lon1, lat1] = toLonLat(x + h, y),
    [lon0, lat0] = toLonLat(x - h, y);
  const [lon3, lat3] = toLonLat(x, y + h),
    [lon2, lat2] = toLonLat(x, y - h);
  const dLonDx = ((lon1 - lon0) * DEG) / (2 * h),
    dLatDx = ((lat1 - lat0) * DEG) / (2 * h);
  const dLonDy = ((lon3 - lon2) * DEG) / (2 * h),
    dLatDy = ((lat3 - lat2) * DEG) / (2 * h);
  const phi = 0.25 * (lat0 + lat1 + lat2 + lat3) * DEG;
  const s = Math.sin(phi),
    w = 1 - WGS84_E2 * s * s;
  const m = (WGS84_A_M * (1 - WGS84_E2)) / (w * Math.sqrt(w)),
    n = WGS84_A_M / Math.sqrt(w);
  return m * n * Math.cos(phi) * Math.abs(dLatDx * dLonDy - dLatDy * dLonDx);
}

/**
 * Ground area (m²) of every cell of a projected grid, row-major: the ellipsoidal area of the cell whose edges are
 * straight in the projection, ∬ M·N·cos φ·|J| dx dy over the cell by 2 × 2 Gauss–Legendre quadrature (the integrand
 * is smooth, so for cells of a few km the quadrature error is far below 1e-6 of the area). Valid for any projection
 * proj4 can invert; `toLonLat` is that inverse.
 */
export function projectedCellAreasM2(
  grid: { width: number; height: number; west: number; north: number; dx: number; dy: number },
  toLonLat: ToLonLat,
  out = new Float64Array(grid.width * grid.height),
): Float64Array {
  const { width, height, west, north, dx, dy } = grid;
  const h = 1e-3 * Math.min(dx, dy);
  for (let r = 0; r < height; r++) {
    const yc = north - (r + 0.5) * dy;
    for (let c = 0; c < width; c++) {
      const xc = west + (c + 0.5) * dx;
      let s = 0;
      for (const u of [-GL2, GL2]) for (const v of [-GL2, GL2]) s += areaDensity(toLonLat, xc + u * dx, yc + v * dy, h);
      out[r * width + c] = 0.25 * s * dx * dy;
    }
  }
  return out;
}

/**
 * Ground size of one grid step (km) at grid point (x, y): the ellipsoidal length of a step dx along x and of dy along
 * y, √((M·dφ)² + (N·cos φ·dλ)²) from the inverse projection (a differential, exact for small steps).
 */
export function groundStepKm(toLonLat: ToLonLat, x: number, y: number, dx: number, dy: number): { xKm: number; yKm: number } {
  const len = (ax: number, ay: number, bx: number, by: number) => {
    const [l0, p0] = toLonLat(ax, ay),
      [l1, p1] = toLonLat(bx, by);
    const phi = 0.5 * (p0 + p1) * DEG;
    const s = Math.sin(phi),
      w = 1 - WGS84_E2 * s * s;
    const m = (WGS84_A_M * (1 - WGS84_E2)) / (w * Math.sqrt(w)),
      n = WGS84_A_M / Math.sqrt(w);
    return Math.hypot(m * (p1 - p0) * DEG, n * Math.cos(phi) * (l1 - l0) * DEG) / 1000;
  };
  return { xKm: len(x - dx / 2, y, x + dx / 2, y), yKm: len(x, y - dy / 2, x, y + dy / 2) };
}
