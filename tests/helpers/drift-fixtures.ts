// Fixtures of the external-drift checks (docs/sources.md#external-drift): a covariate grid given by a formula of the
// cell's column and row, and invented sites whose values follow it. A covariate bilinear in the fractional cell
// position is reproduced exactly by a bilinear read anywhere inside the grid, so the reference libraries get the
// covariate from the same formula, not from the project's reader.
import type { ExternalDriftGrid } from '../../shared/interp/externalDrift.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { prng } from './prng.ts';

/** A lon/lat grid: its north-west corner, its square cell side `d` (degrees) and its size in cells. */
export interface GridFrame {
  west: number;
  north: number;
  d: number;
  nx: number;
  ny: number;
}

/** The covariate grid of the checks against R gstat: 60 × 40 cells of 0.02° from 131.05° W, 40.45° S (invented). */
export const GSTAT_FRAME: GridFrame = { west: -131.05, north: -40.45, d: 0.02, nx: 60, ny: 40 };

/**
 * The covariate grid whose cell (column c, row r) holds `sAt(c, r)` (EPSG:4326, in `units`), and `at(lon, lat)`:
 * the same formula at the fractional cell position of a point.
 */
export function bilinearCovariate(
  f: GridFrame,
  sAt: (c: number, r: number) => number,
  name: string,
  units: string,
): { grid: ExternalDriftGrid; at: (lon: number, lat: number) => number } {
  const grid: ExternalDriftGrid = {
    name,
    crsDef: 'WGS84',
    grid: {
      width: f.nx,
      height: f.ny,
      west: f.west,
      north: f.north,
      dx: f.d,
      dy: f.d,
      crs: 'EPSG:4326',
      units,
      values: Float32Array.from({ length: f.nx * f.ny }, (_, i) => sAt(i % f.nx, Math.floor(i / f.nx))),
    },
  };
  return { grid, at: (lon, lat) => sAt((lon - f.west) / f.d - 0.5, (f.north - lat) / f.d - 0.5) };
}

/**
 * `n` invented sites 0.1° inside the grid, ids `${prefix}0` …, from the seeded stream `seed`: all longitudes, then
 * all latitudes, then each value `value(lon, lat, r)` in turn.
 */
export function sitesInFrame(
  f: GridFrame,
  seed: number,
  n: number,
  prefix: string,
  value: (lon: number, lat: number, r: () => number) => number,
): PointData & { lon: Float64Array; lat: Float64Array; values: Float64Array } {
  const r = prng(seed);
  const lon = Float64Array.from({ length: n }, () => f.west + 0.1 + r() * (f.nx * f.d - 0.2));
  const lat = Float64Array.from({ length: n }, () => f.north - 0.1 - r() * (f.ny * f.d - 0.2));
  const values = Float64Array.from(lon, (lo, i) => value(lo, lat[i], r));
  return { ids: Array.from({ length: n }, (_, i) => `${prefix}${i}`), lon, lat, values };
}
