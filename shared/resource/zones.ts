/**
 * Zones of a class layer for per-zone totals: a label 0 … K − 1 per cell (−1 = in no zone), from a set of region
 * polygons (a cell belongs to the first polygon whose area holds its centre) or from a class grid of the same shape
 * (each distinct finite value is a zone, in ascending order; NaN = none).
 */
import type { GridSpec } from '../grid/grid.ts';
import { lonLatGridPolygonMask, pointsPolygonMask, type PolygonRings } from './polygon-mask.ts';

export interface ZoneLabels {
  names: string[];
  labels: Int32Array;
  /** Cells claimed by more than one region polygon (the first one keeps them). */
  overlapCells: number;
}

/**
 * Labels from region polygons. `centres` gives each cell centre's [lon, lat] for a projected grid; absent, the grid
 * is longitude/latitude.
 */
export function zonesFromPolygons(
  grid: GridSpec,
  regions: { name: string; polygons: PolygonRings }[],
  centres?: { lon: ArrayLike<number>; lat: ArrayLike<number> },
): ZoneLabels {
  const n = grid.width * grid.height;
  const labels = new Int32Array(n).fill(-1);
  const mask = new Uint8Array(n);
  let overlapCells = 0;
  regions.forEach((reg, k) => {
    if (centres === undefined) lonLatGridPolygonMask(grid, reg.polygons, mask);
    else pointsPolygonMask(centres.lon, centres.lat, reg.polygons, mask);
    for (let c = 0; c < n; c++) {
      if (mask[c] !== 1) continue;
      if (labels[c] === -1) labels[c] = k;
      else overlapCells++;
    }
  });
  return { names: regions.map((r) => r.name), labels, overlapCells };
}

/** Labels from a class grid's values (same cell layout as the heat-flow grid). */
export function zonesFromClassGrid(values: ArrayLike<number>): ZoneLabels {
  const distinct = new Set<number>();
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) distinct.add(values[i]);
  const classes = [...distinct].sort((a, b) => a - b);
  const index = new Map(classes.map((v, i) => [v, i]));
  const labels = new Int32Array(values.length).fill(-1);
  for (let i = 0; i < values.length; i++) {
    const k = index.get(values[i]);
    if (k !== undefined) labels[i] = k;
  }
  return { names: classes.map(String), labels, overlapCells: 0 };
}
