import proj4 from 'proj4';
import { InputError } from '../errors.ts';
import type { GridSpec } from '../grid/grid.ts';
import { groundStepKm } from '../geodesy/cell-area.ts';
import { groundCellKmRange } from '../geodesy/ground-cell.ts';
import { correctedDatumShift, refuseGridShift } from './crs-datum.ts';
import { pointEnvelope } from './envelope.ts';

/**
 * Coordinate work of the interpolation engine. Input is WGS84 longitude/latitude (degrees); every distance is
 * computed in a local transverse Mercator projection centred on the data (scale factor 1 on the central meridian,
 * WGS84 ellipsoid, units km), so distances are km everywhere. proj4 is called once per data point and once per
 * grid cell centre (into Float64Arrays), never inside a neighbour or solver loop.
 */

/** A local metric projection: transverse Mercator with its origin at (lon0, lat0), x/y in km. */
export interface LocalProjection {
  lon0: number;
  lat0: number;
  /** proj4 definition string of the projection (units km). */
  def: string;
}

/** Centre of the data's lon/lat envelope as the projection origin (the envelope is short of ±180° here). */
export function localProjectionFor(lon: ArrayLike<number>, lat: ArrayLike<number>): LocalProjection {
  let w = Infinity,
    e = -Infinity,
    s = Infinity,
    n = -Infinity;
  for (let i = 0; i < lon.length; i++) {
    if (lon[i] < w) w = lon[i];
    if (lon[i] > e) e = lon[i];
    if (lat[i] < s) s = lat[i];
    if (lat[i] > n) n = lat[i];
  }
  if (!(e >= w) || !(n >= s)) throw new RangeError('localProjectionFor: no finite coordinates');
  return localProjectionAt((w + e) / 2, (s + n) / 2);
}

/** Transverse Mercator (k = 1 on the central meridian lon0) with origin (lon0, lat0), km. */
export function localProjectionAt(lon0: number, lat0: number): LocalProjection {
  if (!(lon0 >= -180 && lon0 <= 180 && lat0 >= -90 && lat0 <= 90)) throw new RangeError(`projection origin out of range: ${lon0}, ${lat0}`);
  return { lon0, lat0, def: `+proj=tmerc +lat_0=${lat0} +lon_0=${lon0} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=km +no_defs` };
}

/** proj4 definition used for EPSG:4326 (longitude, latitude in degrees). */
export const WGS84_DEF = 'WGS84';

/** A two-way converter between two proj4 definitions. */
export interface Converter {
  forward(p: [number, number]): [number, number];
  inverse(p: [number, number]): [number, number];
}

/** Converter from the CRS `fromDef` to `toDef` (proj4 definitions, see `loadCrsDefinition`). */
export function converter(fromDef: string, toDef: string): Converter {
  const c = proj4(fromDef, toDef);
  return {
    forward: (p) => c.forward<[number, number]>(p),
    inverse: (p) => c.inverse<[number, number]>(p),
  };
}

/** Projects lon/lat (degrees) into the local projection (km), into caller buffers. */
export function lonLatToLocalKm(proj: LocalProjection, lon: ArrayLike<number>, lat: ArrayLike<number>, outX: Float64Array, outY: Float64Array): void {
  const c = proj4(WGS84_DEF, proj.def);
  const p: [number, number] = [0, 0];
  for (let i = 0; i < lon.length; i++) {
    p[0] = lon[i];
    p[1] = lat[i];
    const q = c.forward(p);
    outX[i] = q[0];
    outY[i] = q[1];
  }
}

/**
 * The proj4 definition of a CRS named `EPSG:nnnn` (offline, from the epsg-index package, one file per code),
 * `EPSG:4326`/`WGS84`, or a literal proj4 string (`+proj=...`). Unknown codes are an InputError, and so is a CRS
 * whose datum shift needs a grid file; offline EPSG datum shifts are restated in proj4's convention (crs-datum.ts).
 */
export async function loadCrsDefinition(crs: string): Promise<string> {
  const s = crs.trim();
  if (/^(EPSG:4326|WGS84|CRS:84|OGC:CRS84)$/i.test(s)) return WGS84_DEF;
  if (s.startsWith('+')) {
    try {
      proj4(WGS84_DEF, s);
    } catch (e) {
      throw new InputError(`not a valid proj4 definition: ${s}`, [{ field: 'crs', problem: e instanceof Error ? e.message : String(e) }], 'bad_crs');
    }
    refuseGridShift(s, s);
    return s;
  }
  const m = /^EPSG:(\d{4,6})$/i.exec(s);
  if (!m) throw new InputError(`unknown CRS "${crs}"`, [{ field: 'crs', problem: 'expected EPSG:nnnn or a proj4 string (+proj=...)' }], 'bad_crs');
  let def: string | undefined;
  try {
    const mod = (await import(`epsg-index/s/${m[1]}.json`, { with: { type: 'json' } })) as { default: { proj4?: string } };
    def = mod.default.proj4;
  } catch {
    def = undefined;
  }
  if (!def) throw new InputError(`EPSG:${m[1]} is not in the offline CRS list`, [{ field: 'crs', problem: 'no proj4 definition for this code' }], 'bad_crs');
  refuseGridShift(`EPSG:${m[1]}`, def);
  return correctedDatumShift(def.replace(/\s*\+type=crs\b/, ''));
}

/** Metres per unit of a proj4 definition's linear unit (m, km, ft, us-ft), or 1 for degrees. */
export function metresPerUnit(def: string): number {
  const u = /\+units=([^\s]+)/.exec(def)?.[1];
  const toMeter = /\+to_meter=([^\s]+)/.exec(def)?.[1];
  if (toMeter !== undefined && Number.isFinite(Number(toMeter))) return Number(toMeter);
  switch (u) {
    case undefined:
    case 'm':
      return 1;
    case 'km':
      return 1000;
    case 'ft':
      return 0.3048;
    case 'us-ft':
      return 1200 / 3937;
    default:
      throw new InputError(`unsupported CRS unit "${u}"`, [{ field: 'crs', problem: 'expected m, km, ft or us-ft' }], 'bad_crs');
  }
}

/**
 * km per degree of latitude and of longitude at latitude `latDeg` on the WGS84 ellipsoid: π/180 times the
 * meridional radius M = a(1 − e²)/(1 − e² sin²φ)^{3/2} and the parallel radius N·cos φ, N = a/√(1 − e² sin²φ).
 */
export function kmPerDegree(latDeg: number): { lon: number; lat: number } {
  const a = 6378.137;
  const f = 1 / 298.257223563;
  const e2 = f * (2 - f);
  const phi = (latDeg * Math.PI) / 180;
  const w = 1 - e2 * Math.sin(phi) ** 2;
  const meridional = (a * (1 - e2)) / w ** 1.5;
  const normal = a / Math.sqrt(w);
  return { lat: (Math.PI / 180) * meridional, lon: (Math.PI / 180) * normal * Math.cos(phi) };
}

export interface OutputGridOptions {
  /** W,S,E,N in degrees (always lon/lat, also for a projected output grid). Default: data envelope padded. */
  bbox?: [number, number, number, number];
  /** Padding of the default bbox, fraction of the span on each side (default 0.05). */
  padFraction?: number;
  /** Cell size in km (converted to degrees at the centre latitude for a lon/lat grid). */
  cellKm?: number;
  /** Grid size instead of a cell size. */
  size?: [number, number];
  /** Output CRS as given by the user (`EPSG:4326` default) and its proj4 definition. */
  crs?: string;
  crsDef?: string;
  /** Cells along the longer side when neither cellKm nor size is given (default 200). */
  defaultCells?: number;
}

/** The data's lon/lat envelope padded by `pad` of its span on each side (at least 0.01°), clipped to the globe. */
function defaultBbox(dataLon: ArrayLike<number>, dataLat: ArrayLike<number>, pad: number): [number, number, number, number] {
  const { x0: w, x1: e, y0: s, y1: n } = pointEnvelope(dataLon, dataLat);
  const px = Math.max((e - w) * pad, 0.01);
  const py = Math.max((n - s) * pad, 0.01);
  return [Math.max(-180, w - px), Math.max(-90, s - py), Math.min(180, e + px), Math.min(90, n + py)];
}

/**
 * Where a grid lies in its CRS: west/north edges, spans, ground km per CRS unit at the centre, and the map from CRS
 * coordinates to lon/lat (the identity for a lon/lat grid) for the ground cell size over the grid.
 */
interface GridFrame {
  west: number;
  north: number;
  spanX: number;
  spanY: number;
  kmPerUnitX: number;
  kmPerUnitY: number;
  toLonLat: (x: number, y: number) => [number, number];
}

/** A lon/lat grid's frame: km per degree at the centre latitude. */
function lonLatFrame([W, S, E, N]: [number, number, number, number]): GridFrame {
  const k = kmPerDegree((S + N) / 2);
  return { west: W, north: N, spanX: E - W, spanY: N - S, kmPerUnitX: k.lon, kmPerUnitY: k.lat, toLonLat: (x, y) => [x, y] };
}

/** Envelope in a projected CRS of the lon/lat bbox's boundary (32 steps per side). */
function projectedEnvelope(c: proj4.Converter, [W, S, E, N]: [number, number, number, number], crs: string): [number, number, number, number] {
  let x0 = Infinity,
    x1 = -Infinity,
    y0 = Infinity,
    y1 = -Infinity;
  const steps = 32;
  for (let i = 0; i <= steps; i++) {
    const t = i / steps;
    for (const p of [
      [W + t * (E - W), S],
      [W + t * (E - W), N],
      [W, S + t * (N - S)],
      [E, S + t * (N - S)],
    ]) {
      const q = c.forward(p);
      if (!Number.isFinite(q[0]) || !Number.isFinite(q[1]))
        throw new InputError(`the bbox cannot be projected to ${crs}`, [{ field: 'crs', problem: "the area is outside the projection's domain" }], 'bad_crs');
      x0 = Math.min(x0, q[0]);
      x1 = Math.max(x1, q[0]);
      y0 = Math.min(y0, q[1]);
      y1 = Math.max(y1, q[1]);
    }
  }
  return [x0, y0, x1, y1];
}

/**
 * A projected grid's frame: the envelope of the bbox's boundary, and ground km per CRS unit at the grid's centre
 * (the projection's scale there, e.g. cos φ in Web Mercator), so a cell of cellKm is cellKm across on the ground at
 * the centre.
 */
function projectedFrame(def: string, bbox: [number, number, number, number], crs: string): GridFrame {
  const c = proj4(WGS84_DEF, def);
  const [x0, y0, x1, y1] = projectedEnvelope(c, bbox, crs);
  const spanX = x1 - x0,
    spanY = y1 - y0;
  const inv = (x: number, y: number): [number, number] => c.inverse<[number, number]>([x, y]);
  const h = 0.5 * (spanX + spanY) * 1e-4;
  const g = groundStepKm(inv, (x0 + x1) / 2, (y0 + y1) / 2, h, h);
  return { west: x0, north: y1, spanX, spanY, kmPerUnitX: g.xKm / h, kmPerUnitY: g.yKm / h, toLonLat: inv };
}

/** Width, height, cell sizes (CRS units) and the cell size in km, from `size` or `cellKm` (or the default count). */
function gridCells(f: GridFrame, opts: OutputGridOptions): { width: number; height: number; dx: number; dy: number; cellKm: number } {
  if (opts.size !== undefined) {
    const [width, height] = opts.size;
    if (!(Number.isInteger(width) && width > 0 && Number.isInteger(height) && height > 0)) {
      throw new InputError(
        `size must be NXxNY with positive integers, got ${opts.size.join('x')}`,
        [{ field: 'size', problem: 'expected e.g. 400x300' }],
        'bad_option',
      );
    }
    const dx = f.spanX / width,
      dy = f.spanY / height;
    return { width, height, dx, dy, cellKm: Math.sqrt(dx * f.kmPerUnitX * dy * f.kmPerUnitY) };
  }
  const cellKm = opts.cellKm ?? Math.max(f.spanX * f.kmPerUnitX, f.spanY * f.kmPerUnitY) / (opts.defaultCells ?? 200);
  if (!(cellKm > 0) || !Number.isFinite(cellKm))
    throw new InputError(`cellKm must be a positive number of km, got ${cellKm}`, [{ field: 'cellKm', problem: 'expected > 0' }], 'bad_option');
  const dx = cellKm / f.kmPerUnitX,
    dy = cellKm / f.kmPerUnitY;
  return { width: Math.max(1, Math.ceil(f.spanX / dx - 1e-9)), height: Math.max(1, Math.ceil(f.spanY / dy - 1e-9)), dx, dy, cellKm };
}

/**
 * The output grid (DESIGN.md §3): lon/lat by default with bbox W,S,E,N in degrees and `cellKm` converted to
 * degrees at the centre latitude (dx = cellKm / km-per-degree-longitude, dy = cellKm / km-per-degree-latitude);
 * with a projected CRS the bbox is the envelope of the lon/lat bbox's boundary in that CRS and `cellKm` is converted
 * to the CRS unit with the projection's ground scale at the grid's centre (so cells are cellKm across on the ground
 * there); `groundCellKmRange` is the smallest and largest ground cell side over the grid (shared/geodesy/ground-cell.ts). The west and north edges are kept; the grid extends east and south to whole cells.
 */
export function buildOutputGrid(
  dataLon: ArrayLike<number>,
  dataLat: ArrayLike<number>,
  opts: OutputGridOptions = {},
): GridSpec & { cellKm: number; groundCellKmRange: [number, number] } {
  const crs = opts.crs ?? 'EPSG:4326';
  const def = opts.crsDef ?? WGS84_DEF;
  const bbox = opts.bbox ?? defaultBbox(dataLon, dataLat, opts.padFraction ?? 0.05);
  const [W, S, E, N] = bbox;
  if (!(W >= -180 && E <= 180 && S >= -90 && N <= 90 && E > W && N > S)) {
    throw new InputError(
      `bbox must be W,S,E,N in degrees with W < E and S < N, got ${bbox.join(',')}`,
      [{ field: 'bbox', problem: 'expected west,south,east,north within ±180/±90' }],
      'bad_option',
    );
  }
  const frame = def === WGS84_DEF ? lonLatFrame(bbox) : projectedFrame(def, bbox, crs);
  const { width, height, dx, dy, cellKm } = gridCells(frame, opts);
  // Ground cell size: exact at the centre by construction; its range over the grid says where it varies.
  const spec = { width, height, west: frame.west, north: frame.north, dx, dy };
  return { ...spec, crs, cellKm, groundCellKmRange: groundCellKmRange(spec, frame.toLonLat) };
}

/** Cells between exactly projected nodes of a row in `rowCentresLocalKm`. */
export const ROW_NODE_STEP = 8;

/**
 * Local km coordinates of the cell centres of one grid row, into `outX`/`outY` (length ≥ grid width).
 * `toLocal` converts grid CRS coordinates to the local projection (built once per grid with `converter`).
 *
 * A projection call costs about a microsecond, which is most of a continental grid's time, so a wide row projects
 * exactly only every `ROW_NODE_STEP`-th cell centre (and the last) and places the cells between by cubic Lagrange
 * interpolation through the four nearest nodes. The map from grid to local coordinates is smooth; the cubic's error
 * is bounded by h⁴·max|f⁗|/384 per span (Burden & Faires, Numerical Analysis, §3.1): under 1e-8 km (10 µm) on a
 * continent-wide grid of 1 km cells, checked against proj4 at every cell in the tests.
 */
export function rowCentresLocalKm(grid: GridSpec, toLocal: Converter, row: number, outX: Float64Array, outY: Float64Array): void {
  const W = grid.width,
    S = ROW_NODE_STEP;
  const y = grid.north - (row + 0.5) * grid.dy;
  const p: [number, number] = [0, y];
  const exact = (c: number) => {
    p[0] = grid.west + (c + 0.5) * grid.dx;
    p[1] = y;
    const q = toLocal.forward(p);
    outX[c] = q[0];
    outY[c] = q[1];
  };
  if (W <= 4 * S) {
    for (let c = 0; c < W; c++) exact(c);
    return;
  }
  // Nodes at columns 0, S, 2S, … and W − 1.
  const last = W - 1;
  const nodes = Math.floor(last / S) + (last % S === 0 ? 1 : 2);
  const col = (j: number) => (j < nodes - 1 ? j * S : last);
  for (let j = 0; j < nodes; j++) exact(col(j));
  for (let c = 1; c < last; c++) {
    if (c % S === 0) continue;
    // The four nodes around c: the span's two ends and one more on each side, shifted inside at the row's ends.
    const j0 = Math.min(Math.max(Math.floor(c / S) - 1, 0), nodes - 4);
    const a = col(j0),
      b = col(j0 + 1),
      d = col(j0 + 2),
      e = col(j0 + 3);
    const wa = ((c - b) * (c - d) * (c - e)) / ((a - b) * (a - d) * (a - e));
    const wb = ((c - a) * (c - d) * (c - e)) / ((b - a) * (b - d) * (b - e));
    const wd = ((c - a) * (c - b) * (c - e)) / ((d - a) * (d - b) * (d - e));
    const we = ((c - a) * (c - b) * (c - d)) / ((e - a) * (e - b) * (e - d));
    outX[c] = wa * outX[a] + wb * outX[b] + wd * outX[d] + we * outX[e];
    outY[c] = wa * outY[a] + wb * outY[b] + wd * outY[d] + we * outY[e];
  }
}
