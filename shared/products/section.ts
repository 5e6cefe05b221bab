/**
 * A vertical temperature section along a polyline (POST /api/section): the line is sampled at equal geodesic
 * distances on the WGS84 ellipsoid (Karney 2013, geographiclib-geodesic), each sample's surface heat flow comes
 * from `heatFlowAt` (the server reads the run's grid bilinearly), and the thermal engine solves that column
 * (shared/thermal) on a depth axis. Facies per cell from shared/petrology at (T, lithostatic P). Faults and
 * isograds that cross the line are located in longitude/latitude with the orientation predicates of the fault
 * barriers (shared/interp/barriers.ts; O'Rourke, Computational Geometry in C, 2nd ed., §1.5): exact sign tests
 * decide whether two pieces cross, a zero counting as positive, so a trace through a vertex of the line is found
 * once; the distance to the crossing is then measured geodesically.
 */
import geodesic from 'geographiclib-geodesic';
import { CAUTION } from '../caution.ts';
import { InputError } from '../errors.ts';
import { orient } from '../interp/barriers.ts';
import { FACIES_NAMES, faciesIndexAt } from '../petrology/index.ts';
import type { ThermalModelInput } from '../schema/model.ts';
import {
  ColumnState,
  columnLimits,
  compileModel,
  limitedIsothermDepth,
  limitedTemperature,
  lithostaticPressureMPa,
  nominalModel,
  solveColumn,
} from '../thermal/index.ts';

const WGS84 = geodesic.Geodesic.WGS84;

export interface SectionQuery {
  /** Surface heat flow at a WGS84 point, mW/m² (NaN where unknown). */
  heatFlowAt: (lon: number, lat: number) => number;
  model: ThermalModelInput;
  /** The model at a point when it varies (override regions): a key naming the zone and its model; default `model`. */
  modelAt?: (lon: number, lat: number) => { key: string; model: ThermalModelInput };
  line: [number, number][];
  maxDepthKm: number;
  /** Samples along the line (columns of the section). */
  samples: number;
  /** Samples with depth, from 0 to maxDepthKm (rows). */
  depthSamples: number;
  isothermsC: number[];
  /** Fault features (LineString / MultiLineString) and isograd features; may be empty. */
  faults: LineFeature[];
  isograds: LineFeature[];
}

export interface LineFeature {
  id?: string | number;
  properties: Record<string, unknown>;
  lines: number[][][];
}

const r3 = (v: number) => Math.round(v * 1e3) / 1e3;
const r2 = (v: number) => Math.round(v * 1e2) / 1e2;
/** The column answer's rounding of its limit depths (shared/thermal/readout.ts), so a section and a column agree. */
const r6 = (v: number) => Math.round(v * 1e6) / 1e6;
const fin = (v: number, r: (x: number) => number): number | null => (Number.isFinite(v) ? r(v) : null);

/** Lines of a GeoJSON LineString or MultiLineString geometry (others give none). */
export function linesOf(geometry: unknown): number[][][] {
  const g = geometry as { type?: string; coordinates?: unknown } | null;
  if (g?.type === 'LineString' && Array.isArray(g.coordinates)) return [g.coordinates as number[][]];
  if (g?.type === 'MultiLineString' && Array.isArray(g.coordinates)) return g.coordinates as number[][][];
  return [];
}

/**
 * Where the piece p→q crosses the piece a→b (planar, lon/lat): the parameter t ∈ [0, 1] along p→q and the point,
 * or null. Both tests are sign tests of the orientation o(u, v, w) = (v − u) × (w − u), a zero counting as
 * positive (a symbolic perturbation): collinear pieces never cross, and a polyline passing through the other
 * line's vertex, or through a vertex of its own on the other line, crosses exactly one of the two pieces there.
 */
export function segmentCrossing(p: number[], q: number[], a: number[], b: number[]): { t: number; lon: number; lat: number } | null {
  const op = orient(a[0], a[1], b[0], b[1], p[0], p[1]);
  const oq = orient(a[0], a[1], b[0], b[1], q[0], q[1]);
  if (op >= 0 === oq >= 0) return null;
  if (orient(p[0], p[1], q[0], q[1], a[0], a[1]) >= 0 === orient(p[0], p[1], q[0], q[1], b[0], b[1]) >= 0) return null;
  // op and oq differ in sign class, so op − oq ≠ 0 and t ∈ [0, 1].
  const t = op / (op - oq);
  return { t, lon: p[0] + t * (q[0] - p[0]), lat: p[1] + t * (q[1] - p[1]) };
}

interface LineSamples {
  /** Cumulative geodesic distance at each vertex of the line, km. */
  cum: number[];
  totalKm: number;
  distanceKm: Float64Array;
  lon: Float64Array;
  lat: Float64Array;
  heat: Float64Array;
}

/** `n` samples at equal geodesic distances along the line, with their surface heat flow. */
function sampleLine(q: SectionQuery): LineSamples {
  const line = q.line;
  const cum = [0];
  const segLines = [] as ReturnType<typeof WGS84.InverseLine>[];
  for (let i = 1; i < line.length; i++) {
    const gl = WGS84.InverseLine(line[i - 1][1], line[i - 1][0], line[i][1], line[i][0]);
    segLines.push(gl);
    cum.push(cum[i - 1] + gl.s13 / 1000);
  }
  const totalKm = cum[cum.length - 1];
  if (!(totalKm > 1e-6)) {
    throw new InputError(
      'the section line has zero length: give at least two distinct vertices',
      [{ field: 'line', problem: 'all vertices coincide' }],
      'invalid_section',
    );
  }
  const n = q.samples;
  const distanceKm = new Float64Array(n),
    lon = new Float64Array(n),
    lat = new Float64Array(n),
    heat = new Float64Array(n);
  let seg = 0;
  for (let j = 0; j < n; j++) {
    const d = n === 1 ? 0 : (totalKm * j) / (n - 1);
    while (seg < segLines.length - 1 && d > cum[seg + 1]) seg++;
    const pos = segLines[seg].Position(Math.max(0, d - cum[seg]) * 1000);
    distanceKm[j] = d;
    lon[j] = pos.lon2 as number;
    lat[j] = pos.lat2 as number;
    heat[j] = q.heatFlowAt(lon[j], lat[j]);
  }
  return { cum, totalKm, distanceKm, lon, lat, heat };
}

type Crossing = { id: string | number | null; distanceKm: number; lon: number; lat: number; properties: Record<string, unknown> };

/** Where the features cross the line, by distance along it (km). */
function crossingsAlong(line: [number, number][], cum: number[], features: LineFeature[]): Crossing[] {
  const out: Crossing[] = [];
  for (const f of features) {
    for (const fl of f.lines) {
      for (let a = 1; a < fl.length; a++) {
        for (let i = 1; i < line.length; i++) {
          const c = segmentCrossing(line[i - 1], line[i], fl[a - 1], fl[a]);
          if (c === null) continue;
          const along = WGS84.Inverse(line[i - 1][1], line[i - 1][0], c.lat, c.lon).s12 as number;
          out.push({
            id: f.id ?? (f.properties.id as string | undefined) ?? null,
            distanceKm: r3(cum[i - 1] + along / 1000),
            lon: c.lon,
            lat: c.lat,
            properties: f.properties,
          });
        }
      }
    }
  }
  return out.sort((x, y) => x.distanceKm - y.distanceKm);
}

type Zone = { cm: ReturnType<typeof compileModel>; pressureKbar: Float64Array; st: ColumnState };

interface SectionColumns {
  zones: Map<string, Zone>;
  zoneKey: string[];
  temperature: (number | null)[];
  facies: Int8Array;
  isoCurves: (number | null)[][];
  meltOnset: (number | null)[];
  lithosphereBase: (number | null)[];
  noData: number;
  melting: number;
}

/** Solves each sample's column on the depth axis: temperatures, facies, isotherm depths and melt onset. */
function solveColumns(q: SectionQuery, s: LineSamples, depthKm: Float64Array): SectionColumns {
  const n = q.samples,
    nz = q.depthSamples;
  // One compiled model (and its lithostatic pressure at each section depth) per zone met along the line.
  const zones = new Map<string, Zone>();
  const zoneOf = (key: string, model: ThermalModelInput) => {
    let z = zones.get(key);
    if (!z) {
      const cm = compileModel(nominalModel(model), { maxDepthKm: q.maxDepthKm });
      const pressureKbar = new Float64Array(nz);
      for (let k = 0; k < nz; k++) pressureKbar[k] = lithostaticPressureMPa(cm, depthKm[k]) / 100; // 1 kbar = 100 MPa
      z = { cm, pressureKbar, st: new ColumnState(cm.nLayers) };
      zones.set(key, z);
    }
    return z;
  };
  const base = zoneOf('model', q.model);
  const c: SectionColumns = {
    zones,
    zoneKey: new Array<string>(n).fill('model'),
    // Row-major, row 0 at the surface: value index = depthRow·samples + column.
    temperature: new Array<number | null>(n * nz).fill(null),
    facies: new Int8Array(n * nz).fill(-1),
    isoCurves: q.isothermsC.map(() => new Array<number | null>(n).fill(null)),
    // Melt onset per column (km; null: not reached above the maximum depth): no temperature is given below it.
    meltOnset: new Array<number | null>(n).fill(null),
    // Lithosphere base per column (km; null: the conductive geotherm does not meet the mantle adiabat above the
    // section's depth): the adiabat gives the temperature below it.
    lithosphereBase: new Array<number | null>(n).fill(null),
    noData: 0,
    melting: 0,
  };
  for (let j = 0; j < n; j++) {
    const q0 = s.heat[j];
    if (!(q0 > 0)) {
      c.noData++;
      continue;
    }
    const here = q.modelAt ? q.modelAt(s.lon[j], s.lat[j]) : null;
    const { cm, pressureKbar, st } = here ? zoneOf(here.key, here.model) : base;
    if (here) c.zoneKey[j] = here.key;
    solveColumn(cm, q0, cm.surfaceTemperatureC, st);
    const lim = columnLimits(cm, st, q.maxDepthKm);
    c.meltOnset[j] = fin(lim.meltOnsetKm, r6);
    c.lithosphereBase[j] = fin(lim.lithosphereBaseKm, r6);
    if (lim.endReason === 'melt-onset') c.melting++;
    for (let k = 0; k < nz; k++) {
      const t = limitedTemperature(cm, st, lim, depthKm[k]);
      if (!Number.isFinite(t)) continue;
      c.temperature[k * n + j] = r2(t);
      c.facies[k * n + j] = faciesIndexAt(t, pressureKbar[k]);
    }
    q.isothermsC.forEach((tc, i) => {
      c.isoCurves[i][j] = fin(limitedIsothermDepth(cm, st, lim, tc, q.maxDepthKm), r3);
    });
  }
  return c;
}

/** Computes the section; see the module comment for the methods. */
export function computeSection(q: SectionQuery): Record<string, unknown> {
  const n = q.samples,
    nz = q.depthSamples;
  const s = sampleLine(q);
  const depthKm = new Float64Array(nz);
  for (let k = 0; k < nz; k++) depthKm[k] = nz === 1 ? 0 : (q.maxDepthKm * k) / (nz - 1);
  const c = solveColumns(q, s, depthKm);
  const warnings: string[] = [...new Set([...c.zones.values()].flatMap((z) => z.cm.warnings))];
  if (c.melting > 0)
    warnings.push(
      `${c.melting} of ${n} columns along the line reach the melt onset (the fluid-absent or dry solidus of their rock) above ${q.maxDepthKm} km: no temperature is given below it (meltOnsetKm)`,
    );
  if (c.noData > 0)
    warnings.push(`${c.noData} of ${n} samples along the line have no heat-flow value (outside the run's grid or no data): their columns are empty`);
  return {
    lengthKm: r3(s.totalKm),
    width: n,
    height: nz,
    distanceKm: Array.from(s.distanceKm, r3),
    depthKm: Array.from(depthKm, r3),
    positions: Array.from(s.lon, (x, j) => [x, s.lat[j]]),
    heatFlowMWm2: Array.from(s.heat, (v) => fin(v, r2)),
    temperatureC: c.temperature,
    faciesNames: FACIES_NAMES,
    faciesClass: Array.from(c.facies),
    ...(q.modelAt ? { modelZone: c.zoneKey.map((k) => (k === 'model' ? null : k)) } : {}),
    isotherms: q.isothermsC.map((t, i) => ({ temperatureC: t, depthKm: c.isoCurves[i] })),
    meltOnsetKm: c.meltOnset,
    lithosphereBaseKm: c.lithosphereBase,
    faultCrossings: crossingsAlong(q.line, s.cum, q.faults),
    isogradCrossings: crossingsAlong(q.line, s.cum, q.isograds),
    method: 'steady-state conduction per column (no lateral heat flow); geodesic distances on WGS84',
    warnings,
    caution: CAUTION,
  };
}
