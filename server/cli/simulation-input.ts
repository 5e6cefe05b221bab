/**
 * The options every verb that simulates a point field shares (`simulate`, `heat-in-place --points`,
 * `isotherms --points`): reading the points (GeoJSON, or CSV with --points-crs), the variogram, anisotropy, trend,
 * transform, measurement-error field and neighbourhood, and the output grid.
 */
import { readFile } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import { InputError } from '../../shared/errors.ts';
import { pointsFromGeoJson, pointsFromCsv, parseVariogramOption, parseAnisotropyOption } from '../../shared/schema/interp.ts';
import { loadCrsDefinition, converter, WGS84_DEF, type OutputGridOptions } from '../../shared/interp/projection.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import type { SimulationOptions } from '../../shared/interp/simulateField.ts';
import { numberOption, numberListOption } from './args.ts';
import type { RunSimulationOptions } from '../runs/heat-flow-simulation.ts';

/** parseArgs options of the simulation (the verb adds its own). */
export const SIMULATION_OPTIONS = {
  points: { type: 'string' },
  field: { type: 'string', default: 'heatFlowMWm2' },
  'points-crs': { type: 'string' },
  variogram: { type: 'string' },
  'lag-km': { type: 'string' },
  'max-lag-km': { type: 'string' },
  anisotropy: { type: 'string' },
  trend: { type: 'string', default: 'none' },
  'error-field': { type: 'string' },
  transform: { type: 'string', default: 'normal-score' },
  neighbors: { type: 'string' },
  'cell-km': { type: 'string' },
  size: { type: 'string' },
  bbox: { type: 'string' },
  crs: { type: 'string' },
  'skip-missing': { type: 'boolean', default: false },
} as const;

export const SIMULATION_HELP = `  --points P.geojson|P.csv   points (GeoJSON, or CSV with longitude,latitude or x,y + --points-crs)
  --field NAME               numeric property to simulate (default heatFlowMWm2)
  --variogram auto|spherical|exponential|gaussian|MODEL:NUGGET,PARTIAL_SILL,RANGE_KM
                             of the simulated (normal-score) values; fitted by default
  --lag-km KM --max-lag-km KM   empirical semivariogram lags
  --anisotropy ANGLE_DEG,RATIO  geometric anisotropy (major-axis azimuth, minor/major range ratio)
  --trend none               no drift (the only value available)
  --transform normal-score|none   simulate normal scores and back-transform (default), or the values as Gaussian
  --error-field FIELD        per-point measurement sd (e.g. uncertaintyMWm2): realizations are of the true field
  --neighbors K|all          data conditioning each target (default 16)
  --cell-km KM | --size NXxNY   grid cell size (km) or grid size
  --bbox=W,S,E,N             degrees (default: data envelope padded by 5%)
  --crs EPSG:nnnn            projected output grid (default EPSG:4326)
  --skip-missing             leave out features without the field (warning) instead of failing
`;

export type SimulationArgs = { [K in keyof typeof SIMULATION_OPTIONS]?: (typeof SIMULATION_OPTIONS)[K]['type'] extends 'boolean' ? boolean : string };

async function readText(path: string, what: string): Promise<string> {
  try {
    return await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read ${what} file ${path}`, [{ field: what, problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'file_not_found');
  }
}

/** Reads --points (with --field, --points-crs, --error-field, --skip-missing): the points, warnings and content hash. */
export async function readSimulationPoints(a: SimulationArgs): Promise<{ points: PointData; warnings: string[]; sha256: string; field: string }> {
  if (a.points === undefined) throw new InputError('--points is required', [{ field: 'points', problem: 'missing' }], 'bad_option');
  const field = a.field ?? 'heatFlowMWm2';
  const text = await readText(a.points, 'points');
  const sha256 = createHash('sha256').update(text).digest('hex');
  const skipMissing = a['skip-missing'] === true;
  if (/\.csv$/i.test(a.points)) {
    let toLonLat: ((x: number, y: number) => [number, number]) | undefined;
    const pcrs = a['points-crs'];
    if (pcrs !== undefined) {
      const c = converter(await loadCrsDefinition(pcrs), WGS84_DEF);
      toLonLat = (x, y) => c.forward([x, y]);
    }
    const r = pointsFromCsv(text, field, { skipMissing, source: a.points, toLonLat, errorField: a['error-field'] });
    return { points: r.points, warnings: r.warnings, sha256, field };
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw new InputError(`${a.points} is not valid JSON`, [{ field: 'points', problem: e instanceof Error ? e.message : String(e) }], 'bad_json');
  }
  const r = pointsFromGeoJson(json, field, { skipMissing, source: a.points, errorField: a['error-field'] });
  return { points: r.points, warnings: r.warnings, sha256, field };
}

/** The simulation options from the shared flags (realizations, seed and budget are the verb's). */
export function simulationOptionsFromArgs(a: SimulationArgs, realizations: number, seed: number, units: string): SimulationOptions {
  if ((a.trend ?? 'none') !== 'none')
    throw new InputError(`--trend ${a.trend} is not available; only none`, [{ field: 'trend', problem: 'expected none' }], 'bad_option');
  const transform = a.transform ?? 'normal-score';
  if (transform !== 'normal-score' && transform !== 'none')
    throw new InputError(
      `--transform must be normal-score or none, got ${transform}`,
      [{ field: 'transform', problem: 'expected normal-score or none' }],
      'bad_option',
    );
  let neighbors: number | 'all' | undefined;
  if (a.neighbors !== undefined) {
    if (a.neighbors === 'all') neighbors = 'all';
    else {
      neighbors = numberOption('neighbors', a.neighbors);
      if (!(Number.isInteger(neighbors) && neighbors >= 1))
        throw new InputError(
          `--neighbors must be a positive integer or "all", got ${a.neighbors}`,
          [{ field: 'neighbors', problem: 'expected ≥ 1' }],
          'bad_option',
        );
    }
  }
  return {
    realizations,
    seed,
    variogram: parseVariogramOption(a.variogram),
    anisotropy: parseAnisotropyOption(a.anisotropy),
    transform,
    measurementError: a['error-field'] !== undefined,
    neighbors,
    lagKm: a['lag-km'] === undefined ? undefined : numberOption('lag-km', a['lag-km']),
    maxLagKm: a['max-lag-km'] === undefined ? undefined : numberOption('max-lag-km', a['max-lag-km']),
    units,
  };
}

/** The output grid from --cell-km, --size, --bbox and --crs. */
export async function gridOptionsFromArgs(a: SimulationArgs): Promise<OutputGridOptions> {
  if (a['cell-km'] !== undefined && a.size !== undefined)
    throw new InputError('give --cell-km or --size, not both', [{ field: 'size', problem: 'conflicts with --cell-km' }], 'bad_option');
  let size: [number, number] | undefined;
  if (a.size !== undefined) {
    const m = /^(\d+)x(\d+)$/i.exec(a.size.trim());
    if (!m) throw new InputError(`--size must be NXxNY, got "${a.size}"`, [{ field: 'size', problem: 'expected e.g. 400x300' }], 'bad_option');
    size = [Number(m[1]), Number(m[2])];
  }
  let bbox: [number, number, number, number] | undefined;
  if (a.bbox !== undefined) {
    const b = numberListOption('bbox', a.bbox, []);
    if (b.length !== 4)
      throw new InputError(
        `--bbox needs 4 numbers W,S,E,N, got ${b.length}`,
        [{ field: 'bbox', problem: 'expected west,south,east,north in degrees' }],
        'bad_option',
      );
    bbox = b as [number, number, number, number];
  }
  const crs = a.crs ?? 'EPSG:4326';
  const crsDef = await loadCrsDefinition(crs);
  return {
    bbox,
    cellKm: a['cell-km'] === undefined ? undefined : numberOption('cell-km', a['cell-km']),
    size,
    crs: crsDef === WGS84_DEF ? 'EPSG:4326' : crs,
    crsDef,
  };
}

/**
 * The heat-flow simulation options of a verb that simulates a run's way (server/runs/heat-flow-simulation.ts):
 * the shared flags, with the transform as given (a run picks it from the variogram).
 */
export function heatFlowSimulationOptions(a: SimulationArgs): RunSimulationOptions {
  const so = simulationOptionsFromArgs(a, 1, 0, 'mW/m²');
  return {
    variogram: so.variogram,
    anisotropy: so.anisotropy,
    neighbors: so.neighbors,
    lagKm: so.lagKm,
    maxLagKm: so.maxLagKm,
    measurementError: so.measurementError,
    transform: so.transform,
  };
}
