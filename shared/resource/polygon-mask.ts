/**
 * Which grid cells an area polygon holds: a cell belongs to it when the cell's centre is inside (even–odd rule per
 * polygon, holes excluded; a MultiPolygon is the union of its polygons). Edges are straight lines in
 * longitude/latitude, as GeoJSON defines them (RFC 7946 §3.1.1); the antimeridian is not handled.
 * For a longitude/latitude grid the test is a scanline per row (crossings of the row's centre latitude with every
 * edge, then the cells between pairs of crossings); for a projected grid the caller gives each cell centre's
 * longitude/latitude and each point is tested on its own.
 */
import { type GridSpec, xFromCol, yFromRow } from '../grid/grid.ts';

/** Polygons as rings of [lon, lat]: polygons[p][ring][vertex]. */
export type PolygonRings = number[][][][];

/** The polygons of a GeoJSON Polygon or MultiPolygon geometry. */
export function polygonsOf(geometry: { type: 'Polygon'; coordinates: number[][][] } | { type: 'MultiPolygon'; coordinates: number[][][][] }): PolygonRings {
  return geometry.type === 'Polygon' ? [geometry.coordinates] : geometry.coordinates;
}

/** Bounding box [west, south, east, north] of the polygons' vertices. */
export function polygonsBbox(polys: PolygonRings): [number, number, number, number] {
  let w = Infinity,
    s = Infinity,
    e = -Infinity,
    n = -Infinity;
  for (const p of polys)
    for (const ring of p)
      for (const v of ring) {
        if (v[0] < w) w = v[0];
        if (v[0] > e) e = v[0];
        if (v[1] < s) s = v[1];
        if (v[1] > n) n = v[1];
      }
  return [w, s, e, n];
}

/**
 * Mask (1 = inside) of the cells of a longitude/latitude grid whose centres are inside the polygons. Writes `out`
 * (length width·height; cleared first) and returns it.
 */
export function lonLatGridPolygonMask(grid: GridSpec, polys: PolygonRings, out: Uint8Array = new Uint8Array(grid.width * grid.height)): Uint8Array {
  out.fill(0);
  const xs: number[] = [];
  const W = grid.width;
  for (let row = 0; row < grid.height; row++) {
    const y = yFromRow(grid, row);
    for (const poly of polys) {
      xs.length = 0;
      for (const ring of poly) {
        const n = ring.length;
        for (let i = 0, j = n - 1; i < n; j = i++) {
          const yi = ring[i][1],
            yj = ring[j][1];
          // Half-open rule: an edge counts when the row's y is in [min, max) of its end latitudes.
          if (yi > y !== yj > y) xs.push(ring[i][0] + ((y - yi) * (ring[j][0] - ring[i][0])) / (yj - yi));
        }
      }
      if (xs.length < 2) continue;
      xs.sort((a, b) => a - b);
      for (let k = 0; k + 1 < xs.length; k += 2) {
        // Columns whose centre x = west + (col + 0.5)·dx is in [xs[k], xs[k+1]).
        let c0 = Math.ceil((xs[k] - grid.west) / grid.dx - 0.5);
        let c1 = Math.ceil((xs[k + 1] - grid.west) / grid.dx - 0.5) - 1;
        if (c0 < 0) c0 = 0;
        if (c1 > W - 1) c1 = W - 1;
        for (let c = c0; c <= c1; c++) out[row * W + c] = 1;
      }
    }
  }
  return out;
}

/** Even–odd test of one point against one polygon (rings: outer, holes). */
export function pointInPolygon(lon: number, lat: number, poly: number[][][]): boolean {
  let inside = false;
  for (const ring of poly) {
    const n = ring.length;
    for (let i = 0, j = n - 1; i < n; j = i++) {
      const yi = ring[i][1],
        yj = ring[j][1];
      if (yi > lat !== yj > lat && lon < ring[i][0] + ((lat - yi) * (ring[j][0] - ring[i][0])) / (yj - yi)) inside = !inside;
    }
  }
  return inside;
}

/** Mask (1 = inside) of points given by their longitude/latitude (e.g. the centres of a projected grid's cells). */
export function pointsPolygonMask(
  lon: ArrayLike<number>,
  lat: ArrayLike<number>,
  polys: PolygonRings,
  out: Uint8Array = new Uint8Array(lon.length),
): Uint8Array {
  const bbs = polys.map((p) => polygonsBbox([p]));
  for (let i = 0; i < lon.length; i++) {
    const x = lon[i],
      y = lat[i];
    let v = 0;
    for (let p = 0; p < polys.length && v === 0; p++) {
      const b = bbs[p];
      if (x >= b[0] && x <= b[2] && y >= b[1] && y <= b[3] && pointInPolygon(x, y, polys[p])) v = 1;
    }
    out[i] = v;
  }
  return out;
}

/** Centre longitudes/latitudes of a longitude/latitude grid's cells, row-major (for tests and point masks). */
export function lonLatGridCentres(grid: GridSpec): { lon: Float64Array; lat: Float64Array } {
  const n = grid.width * grid.height;
  const lon = new Float64Array(n),
    lat = new Float64Array(n);
  for (let r = 0; r < grid.height; r++)
    for (let c = 0; c < grid.width; c++) {
      lon[r * grid.width + c] = xFromCol(grid, c);
      lat[r * grid.width + c] = yFromRow(grid, r);
    }
  return { lon, lat };
}

/** Centre longitudes/latitudes of any grid's cells, through a caller-given CRS → [lon, lat] conversion. */
export function gridCentresLonLat(grid: GridSpec, toLonLat: (x: number, y: number) => [number, number]): { lon: Float64Array; lat: Float64Array } {
  const n = grid.width * grid.height;
  const lon = new Float64Array(n),
    lat = new Float64Array(n);
  for (let r = 0; r < grid.height; r++)
    for (let c = 0; c < grid.width; c++) {
      const p = toLonLat(xFromCol(grid, c), yFromRow(grid, r));
      lon[r * grid.width + c] = p[0];
      lat[r * grid.width + c] = p[1];
    }
  return { lon, lat };
}
