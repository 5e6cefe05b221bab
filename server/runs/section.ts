/**
 * A vertical temperature section along a polyline (POST /api/section): the line is sampled at equal geodesic
 * distances on the WGS84 ellipsoid (Karney 2013, geographiclib-geodesic), each sample's surface heat flow is read
 * bilinearly from the run's heat-flow grid, and the thermal engine solves that column (shared/thermal) on a depth
 * axis. Facies per cell from shared/petrology at (T, lithostatic P). Faults and isograds that cross the line are
 * located by segment intersection in longitude/latitude (adequate for the short segments of a drawn line; the
 * distance to the crossing is then measured geodesically).
 */
import geodesic from 'geographiclib-geodesic';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { FACIES_NAMES, faciesIndexAt } from '../../shared/petrology/index.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import {
  ColumnState,
  columnLimits,
  compileModel,
  limitedIsothermDepth,
  limitedTemperature,
  lithostaticPressureMPa,
  nominalModel,
  solveColumn,
} from '../../shared/thermal/index.ts';
import { sampleAtLonLat, type RunGrid } from './grids.ts';

const WGS84 = geodesic.Geodesic.WGS84;

export interface SectionQuery {
  heatFlow: RunGrid;
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
const fin = (v: number, r: (x: number) => number): number | null => (Number.isFinite(v) ? r(v) : null);

/** Lines of a GeoJSON LineString or MultiLineString geometry (others give none). */
export function linesOf(geometry: unknown): number[][][] {
  const g = geometry as { type?: string; coordinates?: unknown } | null;
  if (g?.type === 'LineString' && Array.isArray(g.coordinates)) return [g.coordinates as number[][]];
  if (g?.type === 'MultiLineString' && Array.isArray(g.coordinates)) return g.coordinates as number[][][];
  return [];
}

/** Parameter t ∈ [0, 1] along p→q where it crosses a→b (planar, lon/lat), or null when they do not cross. */
function crossing(p: number[], q: number[], a: number[], b: number[]): { t: number; lon: number; lat: number } | null {
  const rx = q[0] - p[0], ry = q[1] - p[1], sx = b[0] - a[0], sy = b[1] - a[1];
  const den = rx * sy - ry * sx;
  if (den === 0) return null; // parallel or degenerate: no single crossing point
  const t = ((a[0] - p[0]) * sy - (a[1] - p[1]) * sx) / den;
  const u = ((a[0] - p[0]) * ry - (a[1] - p[1]) * rx) / den;
  if (t < 0 || t > 1 || u < 0 || u > 1) return null;
  return { t, lon: p[0] + t * rx, lat: p[1] + t * ry };
}

/** Computes the section; see the module comment for the methods. */
export function computeSection(q: SectionQuery): Record<string, unknown> {
  const line = q.line;
  // Cumulative geodesic distance at each vertex, km.
  const cum = [0];
  const segLines = [] as ReturnType<typeof WGS84.InverseLine>[];
  for (let i = 1; i < line.length; i++) {
    const gl = WGS84.InverseLine(line[i - 1][1], line[i - 1][0], line[i][1], line[i][0]);
    segLines.push(gl);
    cum.push(cum[i - 1] + gl.s13 / 1000);
  }
  const totalKm = cum[cum.length - 1];
  if (!(totalKm > 1e-6)) {
    throw new InputError('the section line has zero length: give at least two distinct vertices', [{ field: 'line', problem: 'all vertices coincide' }], 'invalid_section');
  }
  const n = q.samples, nz = q.depthSamples;
  const distanceKm = new Float64Array(n), lon = new Float64Array(n), lat = new Float64Array(n), heat = new Float64Array(n);
  let seg = 0;
  for (let j = 0; j < n; j++) {
    const d = n === 1 ? 0 : (totalKm * j) / (n - 1);
    while (seg < segLines.length - 1 && d > cum[seg + 1]) seg++;
    const pos = segLines[seg].Position(Math.max(0, d - cum[seg]) * 1000);
    distanceKm[j] = d;
    lon[j] = pos.lon2 as number;
    lat[j] = pos.lat2 as number;
    heat[j] = sampleAtLonLat(q.heatFlow, lon[j], lat[j]);
  }

  const depthKm = new Float64Array(nz);
  for (let k = 0; k < nz; k++) depthKm[k] = nz === 1 ? 0 : (q.maxDepthKm * k) / (nz - 1);
  // One compiled model (and its lithostatic pressure at each section depth) per zone met along the line.
  const zones = new Map<string, { cm: ReturnType<typeof compileModel>; pressureKbar: Float64Array; st: ColumnState }>();
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
  const zoneKey: string[] = new Array<string>(n).fill('model');
  // Row-major, row 0 at the surface: value index = depthRow·samples + column.
  const temperature: (number | null)[] = new Array<number | null>(n * nz).fill(null);
  const facies = new Int8Array(n * nz).fill(-1);
  const isoCurves = q.isothermsC.map(() => new Array<number | null>(n).fill(null));
  // Melt onset per column (km; null: not reached above the maximum depth): no temperature is given below it.
  const meltOnset = new Array<number | null>(n).fill(null);
  let noData = 0, melting = 0;
  for (let j = 0; j < n; j++) {
    const q0 = heat[j];
    if (!(q0 > 0)) {
      noData++;
      continue;
    }
    const here = q.modelAt ? q.modelAt(lon[j], lat[j]) : null;
    const { cm, pressureKbar, st } = here ? zoneOf(here.key, here.model) : base;
    if (here) zoneKey[j] = here.key;
    solveColumn(cm, q0, cm.surfaceTemperatureC, st);
    const lim = columnLimits(cm, st, q.maxDepthKm);
    meltOnset[j] = fin(lim.meltOnsetKm, r3);
    if (lim.endReason === 'melt-onset') melting++;
    for (let k = 0; k < nz; k++) {
      const t = limitedTemperature(cm, st, lim, depthKm[k]);
      if (!Number.isFinite(t)) continue;
      temperature[k * n + j] = r2(t);
      facies[k * n + j] = faciesIndexAt(t, pressureKbar[k]);
    }
    q.isothermsC.forEach((tc, i) => {
      isoCurves[i][j] = fin(limitedIsothermDepth(cm, st, lim, tc, q.maxDepthKm), r3);
    });
  }

  const crossings = (features: LineFeature[]) => {
    const out: { id: string | number | null; distanceKm: number; lon: number; lat: number; properties: Record<string, unknown> }[] = [];
    for (const f of features) {
      for (const fl of f.lines) {
        for (let a = 1; a < fl.length; a++) {
          for (let i = 1; i < line.length; i++) {
            const c = crossing(line[i - 1], line[i], fl[a - 1], fl[a]);
            if (c === null) continue;
            const along = WGS84.Inverse(line[i - 1][1], line[i - 1][0], c.lat, c.lon).s12 as number;
            out.push({ id: f.id ?? (f.properties.id as string | undefined) ?? null, distanceKm: r3(cum[i - 1] + along / 1000), lon: c.lon, lat: c.lat, properties: f.properties });
          }
        }
      }
    }
    return out.sort((x, y) => x.distanceKm - y.distanceKm);
  };

  const warnings: string[] = [...new Set([...zones.values()].flatMap((z) => z.cm.warnings))];
  if (melting > 0) warnings.push(`${melting} of ${n} columns along the line reach the melt onset (the fluid-absent or dry solidus of their rock) above ${q.maxDepthKm} km: no temperature is given below it (meltOnsetKm)`);
  if (noData > 0) warnings.push(`${noData} of ${n} samples along the line have no heat-flow value (outside the run's grid or no data): their columns are empty`);
  return {
    lengthKm: r3(totalKm),
    width: n,
    height: nz,
    distanceKm: Array.from(distanceKm, r3),
    depthKm: Array.from(depthKm, r3),
    positions: Array.from(lon, (x, j) => [x, lat[j]]),
    heatFlowMWm2: Array.from(heat, (v) => fin(v, r2)),
    temperatureC: temperature,
    faciesNames: FACIES_NAMES,
    faciesClass: Array.from(facies),
    ...(q.modelAt ? { modelZone: zoneKey.map((k) => (k === 'model' ? null : k)) } : {}),
    isotherms: q.isothermsC.map((t, i) => ({ temperatureC: t, depthKm: isoCurves[i] })),
    meltOnsetKm: meltOnset,
    faultCrossings: crossings(q.faults),
    isogradCrossings: crossings(q.isograds),
    method: 'steady-state conduction per column (no lateral heat flow); geodesic distances on WGS84',
    warnings,
    caution: CAUTION,
  };
}
