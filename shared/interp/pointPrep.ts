import { InputError } from '../errors.ts';
import { converter, WGS84_DEF, type LocalProjection } from './projection.ts';
import { NeighbourIndex } from './neighbours.ts';
import { DEFAULT_QUALITY_WEIGHTS, type InterpolationOptions, type PointData } from './interpTypes.ts';

/**
 * The first steps of preparing an interpolation: checking the points, merging coincident ones, and checking the
 * search settings. Coordinates: WGS84 lon/lat degrees in, local km (projection.ts) after projection.
 */

/** Throws an InputError naming the first target point whose lon/lat is out of range (or not a number). */
export function checkTargetCoordinates(targets: { ids: string[]; lon: ArrayLike<number>; lat: ArrayLike<number> }): void {
  for (let i = 0; i < targets.ids.length; i++) {
    const lon = targets.lon[i],
      lat = targets.lat[i];
    if (!(lon >= -180 && lon <= 180 && lat >= -90 && lat <= 90))
      throw new InputError(
        `target ${targets.ids[i]} has coordinates out of range`,
        [{ feature: targets.ids[i], field: 'geometry', problem: 'expected lon in [-180, 180], lat in [-90, 90]' }],
        'invalid_points',
      );
  }
}

/** Throws an InputError listing (up to 50) points with bad coordinates, values or uncertainties. */
export function validatePoints(points: PointData, method: 'idw' | 'kriging'): void {
  const n0 = points.ids.length;
  if (points.lon.length !== n0 || points.lat.length !== n0 || points.values.length !== n0) throw new RangeError('PointData arrays differ in length');
  const bad: { feature: string; field: string; problem: string }[] = [];
  for (let i = 0; i < n0 && bad.length < 50; i++) {
    const lon = points.lon[i],
      lat = points.lat[i],
      v = points.values[i];
    if (!(lon >= -180 && lon <= 180)) bad.push({ feature: points.ids[i], field: 'longitude', problem: `must be within [-180, 180] degrees, got ${lon}` });
    if (!(lat >= -90 && lat <= 90)) bad.push({ feature: points.ids[i], field: 'latitude', problem: `must be within [-90, 90] degrees, got ${lat}` });
    if (!Number.isFinite(v)) bad.push({ feature: points.ids[i], field: 'value', problem: `must be a finite number, got ${v}` });
    const e = points.errorSd?.[i];
    if (e !== undefined && !Number.isNaN(e) && !(e >= 0 && Number.isFinite(e)))
      bad.push({ feature: points.ids[i], field: 'uncertainty', problem: `must be a finite number ≥ 0, got ${e}` });
  }
  if (bad.length > 0) throw new InputError(`${bad.length} problem(s) in the points`, bad, 'invalid_points');
  requirePoints(method, n0, '');
}

/** Points a method needs (kriging 3, IDW 1); `what` qualifies the count in the message. */
export function requirePoints(method: 'idw' | 'kriging', n: number, what: string): void {
  const minPoints = method === 'kriging' ? 3 : 1;
  if (n < minPoints)
    throw new InputError(
      `${method} needs at least ${minPoints} ${what === '' ? 'points' : 'distinct locations'}, got ${n}${what}`,
      [{ field: 'points', problem: `expected ≥ ${minPoints} ${what === '' ? 'points' : 'distinct locations'}` }],
      'too_few_points',
    );
}

/** Points after merging those closer than 1 mm (local km coordinates). */
export interface MergedPoints {
  ids: string[];
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** IDW quality multipliers (IDW with useQuality), else null. */
  pointWeights: Float64Array | null;
  /** Kriging measurement-error variances (kriging with measurementError and uncertainties), else null. */
  errorVariance: Float64Array | null;
  warnings: string[];
}

/** The quality multipliers with the user's overrides, checked. */
function qualityWeights(opts: InterpolationOptions): Record<string, number> {
  const qw = { ...DEFAULT_QUALITY_WEIGHTS, ...(opts.qualityWeights ?? {}) };
  for (const [k, v] of Object.entries(qw))
    if (!(v >= 0 && Number.isFinite(v)))
      throw new InputError(
        `quality weight for ${k} must be ≥ 0, got ${v}`,
        [{ field: 'qualityWeights', problem: 'expected a finite number ≥ 0' }],
        'bad_option',
      );
  return qw;
}

/**
 * Merges coincident points (closer than 1 mm): mean value, mean of the error variances over m² (the variance of
 * the mean of m independent measurements), the best quality's multiplier; ids joined with '+'.
 */
export function mergeCoincident(points: PointData, px: Float64Array, py: Float64Array, opts: InterpolationOptions): MergedPoints {
  const n0 = px.length;
  const qw = qualityWeights(opts);
  const index = new NeighbourIndex(px, py);
  const group = new Int32Array(n0).fill(-1);
  const ids: string[] = [];
  const xs: number[] = [],
    ys: number[] = [],
    zs: number[] = [],
    ws: number[] = [],
    evs: number[] = [];
  const found: number[] = [];
  const merged: string[] = [];
  const useEv = opts.method === 'kriging' && opts.measurementError === true && points.errorSd !== undefined && points.errorSd !== null;
  for (let i = 0; i < n0; i++) {
    if (group[i] >= 0) continue;
    found.length = 0;
    const m = index.within(px[i], py[i], 1e-6, found);
    const members = found
      .slice(0, m)
      .filter((j) => group[j] < 0)
      .sort((a, b) => a - b);
    const gi = ids.length;
    let sz = 0,
      sev = 0,
      w = 0;
    for (const j of members) {
      group[j] = gi;
      sz += points.values[j];
      const e = points.errorSd?.[j];
      sev += useEv && e !== undefined && Number.isFinite(e) ? e * e : 0;
      const q = points.quality?.[j];
      w = Math.max(w, opts.useQuality && q !== undefined && q !== null && q in qw ? qw[q] : 1);
    }
    ids.push(members.map((j) => points.ids[j]).join('+'));
    if (members.length > 1) merged.push(ids[gi]);
    xs.push(px[i]);
    ys.push(py[i]);
    zs.push(sz / members.length);
    ws.push(w);
    evs.push(sev / (members.length * members.length));
  }
  const warnings: string[] = [];
  if (merged.length > 0)
    warnings.push(
      `${merged.length} group(s) of coincident points were merged (mean value): ${merged.slice(0, 10).join(', ')}${merged.length > 10 ? ', ...' : ''}`,
    );
  if (opts.method === 'kriging' && opts.measurementError === true && !useEv)
    warnings.push('measurement error requested but no point carries an uncertainty: none used');
  return {
    ids,
    x: Float64Array.from(xs),
    y: Float64Array.from(ys),
    z: Float64Array.from(zs),
    pointWeights: opts.method === 'idw' && opts.useQuality ? Float64Array.from(ws) : null,
    errorVariance: useEv ? Float64Array.from(evs) : null,
    warnings,
  };
}

/** The checked search settings of a plan. */
export interface SearchSettings {
  neighbors: number;
  radiusKm: number;
  power: number;
  maxGlobal: number;
}

/** Checks neighbours, radius, power, the global-system limit and maxDistanceKm for `n` distinct points. */
export function searchSettings(opts: InterpolationOptions, n: number): SearchSettings {
  const method = opts.method;
  const neighbors = opts.neighbors === 'all' ? Infinity : (opts.neighbors ?? (method === 'idw' ? 12 : 16));
  if (!(neighbors >= 1))
    throw new InputError(
      `neighbors must be a positive integer or "all", got ${String(opts.neighbors)}`,
      [{ field: 'neighbors', problem: 'expected ≥ 1' }],
      'bad_option',
    );
  const radiusKm = opts.radiusKm ?? Infinity;
  if (!(radiusKm > 0)) throw new InputError(`search radius must be > 0 km, got ${radiusKm}`, [{ field: 'radiusKm', problem: 'expected > 0' }], 'bad_option');
  const power = opts.power ?? 2;
  if (!(power > 0 && Number.isFinite(power)))
    throw new InputError(`power must be > 0, got ${power}`, [{ field: 'power', problem: 'expected a positive number' }], 'bad_option');
  const maxGlobal = opts.maxGlobal ?? 5000;
  if (method === 'kriging' && neighbors >= n && n > maxGlobal)
    throw new InputError(
      `global kriging of ${n} points exceeds the limit of ${maxGlobal}`,
      [{ field: 'neighbors', problem: 'use a local neighbourhood, e.g. 16 neighbors' }],
      'too_many_points',
    );
  if (opts.maxDistanceKm !== undefined && opts.maxDistanceKm !== null && !(opts.maxDistanceKm > 0))
    throw new InputError(`maxDistanceKm must be > 0, got ${opts.maxDistanceKm}`, [{ field: 'maxDistanceKm', problem: 'expected > 0' }], 'bad_option');
  return { neighbors, radiusKm, power, maxGlobal };
}

/** Fault traces (polylines of [lon, lat]) as segments x1,y1,x2,y2 in the local projection's km, or null. */
export function faultsToLocalKm(faults: number[][][] | null | undefined, proj: LocalProjection): Float64Array | null {
  if (!faults || faults.length === 0) return null;
  const c = converter(WGS84_DEF, proj.def);
  const segs: number[] = [];
  for (const line of faults) {
    for (let i = 0; i + 1 < line.length; i++) {
      const a = c.forward([line[i][0], line[i][1]]),
        b = c.forward([line[i + 1][0], line[i + 1][1]]);
      segs.push(a[0], a[1], b[0], b[1]);
    }
  }
  return Float64Array.from(segs);
}
