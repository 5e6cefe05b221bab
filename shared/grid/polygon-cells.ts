/**
 * Polygon rasterisation onto a Grid by cell centres, with the even–odd rule and a scanline per row (the classic
 * polygon fill, Foley et al., Computer Graphics §3.6): for every grid row the crossings of the row's centre line
 * with the polygon's edges are sorted, and a cell centre is inside when an odd number of crossings lie west of it.
 * An edge counts for y in [min(y1, y2), max(y1, y2)) (half-open, so a vertex on the line is counted once).
 * Rings (outer rings and holes, any number of parts) are in the grid's CRS units. Cost O(rows · E log E).
 */
import type { GridSpec } from './grid.ts';

/** A polygon (or multipolygon) as a flat list of rings of [x, y] in grid CRS units; holes are rings too. */
export type Rings = number[][][];

/** Edges of a ring set as x1, y1, x2, y2 quadruples (rings need not repeat their first vertex). */
function edgesOf(rings: Rings): Float64Array {
  let m = 0;
  for (const r of rings) m += r.length;
  const e = new Float64Array(4 * m);
  let k = 0;
  for (const r of rings) {
    const n = r.length;
    if (n < 2) continue;
    for (let i = 0; i < n; i++) {
      const a = r[i],
        b = r[(i + 1) % n];
      if (a[0] === b[0] && a[1] === b[1]) continue; // the closing duplicate vertex, or a repeated one
      e[k++] = a[0];
      e[k++] = a[1];
      e[k++] = b[0];
      e[k++] = b[1];
    }
  }
  return e.subarray(0, k);
}

/**
 * Calls `mark(row, col0, col1)` for each run [col0, col1) of cells of `row` whose centres lie inside the rings.
 * `xs` is scratch of length ≥ edge count.
 */
function scanRow(spec: GridSpec, edges: Float64Array, row: number, xs: Float64Array, mark: (row: number, c0: number, c1: number) => void): void {
  const y = spec.north - (row + 0.5) * spec.dy;
  let n = 0;
  for (let k = 0; k < edges.length; k += 4) {
    const y1 = edges[k + 1],
      y2 = edges[k + 3];
    if ((y1 <= y && y < y2) || (y2 <= y && y < y1)) xs[n++] = edges[k] + ((y - y1) / (y2 - y1)) * (edges[k + 2] - edges[k]);
  }
  if (n < 2) return;
  const s = xs.subarray(0, n).sort();
  for (let i = 0; i + 1 < n; i += 2) {
    // Centres x_c = west + (c + 0.5)·dx with s[i] ≤ x_c < s[i + 1] are inside (a crossing at or west of the
    // centre counts), i.e. c from ⌈(s[i] − west)/dx − 0.5⌉ up to, not including, ⌈(s[i + 1] − west)/dx − 0.5⌉.
    const c0 = Math.max(0, Math.ceil((s[i] - spec.west) / spec.dx - 0.5));
    const c1 = Math.min(spec.width, Math.ceil((s[i + 1] - spec.west) / spec.dx - 0.5));
    if (c1 > c0) mark(row, c0, c1);
  }
}

/**
 * Zone index per cell: 0 outside every polygon, k + 1 inside polygons[k]; where polygons overlap the later one wins
 * (drawn over the earlier). Returns a Uint16 grid (at most 65,535 polygons).
 */
export function rasterizeZones(spec: GridSpec, polygons: Rings[], out?: Uint16Array): Uint16Array {
  if (polygons.length > 65535) throw new RangeError(`at most 65535 zones, got ${polygons.length}`);
  const cells = spec.width * spec.height;
  const zones = out ?? new Uint16Array(cells);
  if (zones.length < cells) throw new RangeError(`zone buffer of ${zones.length} is shorter than ${cells} cells`);
  zones.fill(0, 0, cells);
  polygons.forEach((rings, k) => {
    const edges = edgesOf(rings);
    const xs = new Float64Array(Math.max(1, edges.length / 4));
    const z = k + 1;
    for (let row = 0; row < spec.height; row++) scanRow(spec, edges, row, xs, (r, c0, c1) => zones.fill(z, r * spec.width + c0, r * spec.width + c1));
  });
  return zones;
}

/** Cell indices (row-major, ascending) whose centres lie inside the rings (even–odd). */
export function cellsInsideRings(spec: GridSpec, rings: Rings): Uint32Array {
  const edges = edgesOf(rings);
  const xs = new Float64Array(Math.max(1, edges.length / 4));
  const found: number[] = [];
  for (let row = 0; row < spec.height; row++) {
    scanRow(spec, edges, row, xs, (r, c0, c1) => {
      for (let c = c0; c < c1; c++) found.push(r * spec.width + c);
    });
  }
  return Uint32Array.from(found);
}

/** Rings of a GeoJSON Polygon or MultiPolygon geometry, each position mapped by `project` (default identity). */
export function ringsOfGeometry(geometry: { type: string; coordinates: unknown }, project?: (x: number, y: number) => [number, number]): Rings {
  const map = (ring: number[][]) => ring.map((p) => (project === undefined ? [p[0], p[1]] : project(p[0], p[1])));
  if (geometry.type === 'Polygon') return (geometry.coordinates as number[][][]).map(map);
  if (geometry.type === 'MultiPolygon') return (geometry.coordinates as number[][][][]).flatMap((poly) => poly.map(map));
  throw new RangeError(`expected a Polygon or MultiPolygon, got ${geometry.type}`);
}

/**
 * Whether (x, y) lies inside a ring set by the even–odd rule, with the same half-open edge rule as the rasteriser
 * (so a point and the cell centre at the same place always agree).
 */
export function pointInRings(rings: Rings, x: number, y: number): boolean {
  let inside = false;
  for (const r of rings) {
    const n = r.length;
    for (let i = 0, j = n - 1; i < n; j = i++) {
      const xi = r[i][0],
        yi = r[i][1],
        xj = r[j][0],
        yj = r[j][1];
      if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
    }
  }
  return inside;
}
