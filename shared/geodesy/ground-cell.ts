/**
 * The ground size of a grid's cells: a cell's sides in km on the WGS84 ellipsoid, and how much they vary over the
 * grid. A lon/lat grid's cells narrow towards the poles (their east–west side is N·cos φ·Δλ); a projected grid's cells
 * follow the projection's scale (1/cos φ too large in the plane in Web Mercator, 0.9996–1.001 in a UTM zone).
 */
import { groundStepKm, type ToLonLat } from './cell-area.ts';

/** Samples per axis of the lattice of cells measured (corner cells included). */
const LATTICE = 9;

/** The spread (max − min over the value at the centre) above which a cell size is printed with its range: 1 %. */
export const GROUND_CELL_VARIATION = 0.01;

/**
 * The spread above which a warning says so: 10 %. Every computation uses each cell's own ground geometry (areas on
 * the ellipsoid, distances in a local projection), so a spread matters only where a reader takes "cellKm" as the
 * size of every cell. The spread of a lon/lat grid's east–west side (and of Web Mercator's scale) over Δφ radians of
 * latitude is about tan φ·Δφ, so it depends on where the grid lies: over 2° of latitude a lon/lat grid spreads about
 * 2 % near 30°, 3.5 % near 45° and 6 % near 60° (printed with its range, no warning); Web Mercator over 16° spreads
 * about 16 % near 30° and 30 % near 45° (warned about), but under 10 % for a grid centred within about 15° of the equator.
 */
export const GROUND_CELL_WARNING = 0.1;

/**
 * Smallest and largest ground side (km) of the cells of a grid whose CRS coordinates map to lon/lat by `toLonLat`
 * (the identity for a lon/lat grid): both sides (dx along x, dy along y, as ellipsoidal lengths, groundStepKm) of
 * every cell of a LATTICE × LATTICE lattice spanning the grid from corner cell to corner cell (every row and
 * column when the grid is smaller). The scale of the usual projections is extreme at the grid's edges, corners or
 * central line, all on the lattice.
 */
export function groundCellKmRange(
  grid: { width: number; height: number; west: number; north: number; dx: number; dy: number },
  toLonLat: ToLonLat,
): [number, number] {
  const { width, height, west, north, dx, dy } = grid;
  const pick = (n: number) => {
    const k = Math.min(n, LATTICE);
    return Array.from({ length: k }, (_, i) => (k === 1 ? 0 : Math.round((i * (n - 1)) / (k - 1))));
  };
  let lo = Infinity,
    hi = -Infinity;
  for (const r of pick(height))
    for (const c of pick(width)) {
      const s = groundStepKm(toLonLat, west + (c + 0.5) * dx, north - (r + 0.5) * dy, dx, dy);
      lo = Math.min(lo, s.xKm, s.yKm);
      hi = Math.max(hi, s.xKm, s.yKm);
    }
  return [lo, hi];
}

/**
 * A cell size as printed: "2.000 km" when the ground size is the same over the grid to GROUND_CELL_VARIATION,
 * else "2.000 km at the centre, 1.581–2.412 km over the grid".
 */
export function cellSizeText(cellKm: number, rangeKm: [number, number]): string {
  const f = (v: number) => v.toFixed(3);
  return varies(cellKm, rangeKm) ? `${f(cellKm)} km at the centre, ${f(rangeKm[0])}–${f(rangeKm[1])} km over the grid` : `${f(cellKm)} km`;
}

/** True when the ground cell size varies over the grid by more than `fraction` of the centre's. */
function varies(cellKm: number, [lo, hi]: [number, number], fraction = GROUND_CELL_VARIATION): boolean {
  return (hi - lo) / cellKm > fraction;
}

/**
 * A warning when, and only when, the ground cell size varies over the grid by more than GROUND_CELL_WARNING: it
 * names the range; null otherwise.
 */
export function groundCellWarning(cellKm: number, rangeKm: [number, number], crs: string): string | null {
  if (!varies(cellKm, rangeKm, GROUND_CELL_WARNING)) return null;
  const pct = (((rangeKm[1] - rangeKm[0]) / cellKm) * 100).toFixed(1);
  return `cells of this ${crs} grid are ${cellSizeText(cellKm, rangeKm)} on the ground (${pct} % of the centre's size): a cell size given in km holds at the grid's centre only`;
}
