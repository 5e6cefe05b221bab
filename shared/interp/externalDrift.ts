import { InputError } from '../errors.ts';
import { gridBbox, sampleBilinear, type Grid, type GridSpec } from '../grid/grid.ts';
import { converter, type LocalProjection } from './projection.ts';

/**
 * The covariate of kriging with an external drift (drift.ts, kind 'external'): a user grid (e.g. sediment thickness
 * or basement age as a GeoTIFF) read at the data, at target points and at output-grid cell centres by bilinear
 * interpolation between its cell centres (shared/grid/grid.ts `sampleBilinear`). The drift must be known wherever
 * the kriging estimates, so a point or cell the grid does not cover (outside it, or next to a no-data cell) is an
 * error naming the place and the grid's extent.
 */

export interface ExternalDriftGrid {
  /** What the covariate is called in reports (e.g. the file name). */
  name: string;
  grid: Grid<Float32Array>;
  /** proj4 definition of the grid's CRS. */
  crsDef: string;
}

/** The covariate at the data (merged points, the plan's order), and at the output grid's cells when a grid is made. */
export interface ExternalCovariate {
  name: string;
  atData: Float64Array;
  /** Row-major over the plan's output grid, or null (points only). */
  atCells: Float64Array | null;
}

/** The covariate at local km coordinates of `projection` (NaN where the grid does not cover). */
export function covariateAtLocal(d: ExternalDriftGrid, projection: LocalProjection, x: ArrayLike<number>, y: ArrayLike<number>): Float64Array {
  const c = converter(projection.def, d.crsDef);
  const out = new Float64Array(x.length);
  const p: [number, number] = [0, 0];
  for (let i = 0; i < x.length; i++) {
    p[0] = x[i];
    p[1] = y[i];
    const q = c.forward(p);
    out[i] = sampleBilinear(d.grid, q[0], q[1]);
  }
  return out;
}

/** The covariate at the cell centres of `g` (CRS `gridCrsDef`), row-major (NaN where the grid does not cover). */
export function covariateAtCells(d: ExternalDriftGrid, g: GridSpec, gridCrsDef: string): Float64Array {
  const c = gridCrsDef === d.crsDef ? null : converter(gridCrsDef, d.crsDef);
  const out = new Float64Array(g.width * g.height);
  const p: [number, number] = [0, 0];
  for (let r = 0; r < g.height; r++)
    for (let col = 0; col < g.width; col++) {
      p[0] = g.west + (col + 0.5) * g.dx;
      p[1] = g.north - (r + 0.5) * g.dy;
      const q = c === null ? p : c.forward(p);
      out[r * g.width + col] = sampleBilinear(d.grid, q[0], q[1]);
    }
  return out;
}

/**
 * Throws unless every value is finite: `label(i)` names the first place the drift grid does not cover, the message
 * gives the grid's extent (its limit) and how many places are uncovered.
 */
export function requireCovered(d: ExternalDriftGrid, values: Float64Array, what: string, label: (i: number) => string): void {
  let bad = 0,
    first = -1;
  for (let i = 0; i < values.length; i++)
    if (!Number.isFinite(values[i])) {
      bad++;
      if (first < 0) first = i;
    }
  if (bad === 0) return;
  const [w, s, e, n] = gridBbox(d.grid).map((v) => Number(v.toPrecision(8)));
  throw new InputError(
    `the drift grid ${d.name} does not cover ${bad} of the ${values.length} ${what} (first: ${label(first)}); it spans W ${w}, S ${s}, E ${e}, N ${n} (${d.grid.crs}), and a place next to a no-data cell is not covered either`,
    [{ field: 'trend', problem: `the drift grid must cover all the ${what}: extend it, or use a smaller --bbox` }],
    'drift_not_covering',
  );
}

/**
 * Throws when the covariate is the same at every datum (relative spread below 1e-9): the drift's term s is then a
 * multiple of the constant term, and nothing can be fitted to it. `values` are the covariate at the data.
 */
export function requireVarying(d: ExternalDriftGrid, values: Float64Array): void {
  let lo = Infinity,
    hi = -Infinity;
  for (const v of values) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  if (!(hi - lo <= 1e-9 * Math.max(Math.abs(lo), Math.abs(hi)))) return;
  const u = d.grid.units ? ` ${d.grid.units}` : '';
  throw new InputError(
    `drift grid is constant over the data: ${d.name} is ${Number(lo.toPrecision(8))}${u} at all ${values.length} points, so it cannot carry a drift (it repeats the constant mean)`,
    [{ field: 'trend', problem: 'use a drift grid that varies over the points, or --trend none|linear|quadratic|auto' }],
    'drift_constant',
  );
}

/**
 * A warning when the drift is extrapolated: how many of `values` (where the kriging estimates) lie outside the
 * covariate's range at the data sites, and that range in the grid's units. Beyond that range the fitted drift
 * coefficient is applied to covariate values no datum constrains, so the estimate there rests on the linear
 * relation alone. Null when every value lies within the range.
 */
export function extrapolationWarning(d: ExternalDriftGrid, atData: Float64Array, values: Float64Array, what: string): string | null {
  let lo = Infinity,
    hi = -Infinity;
  for (const v of atData) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  let out = 0;
  for (const v of values) if (v < lo || v > hi) out++;
  if (out === 0) return null;
  const u = d.grid.units ? ` ${d.grid.units}` : '';
  const f = (v: number) => Number(v.toPrecision(6));
  return `the external drift is extrapolated at ${out} of the ${values.length} ${what}: their ${d.name} value lies outside its range at the data sites, ${f(lo)} to ${f(hi)}${u}; estimates there follow the fitted drift beyond the data`;
}
