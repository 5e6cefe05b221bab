/**
 * The options every verb that simulates a point field shares (`simulate`, `heat-in-place --points`,
 * `isotherms --points`): reading the points (GeoJSON, GeoPackage, zipped Shapefile, or CSV with --points-crs), the
 * variogram, anisotropy, trend, transform, declustering, measurement-error field and neighbourhood, and the output
 * grid.
 */
import { InputError } from '../../shared/errors.ts';
import { parseVariogramOption, parseAnisotropyOption, parseTrendOption } from '../../shared/schema/interp.ts';
import { loadCrsDefinition, WGS84_DEF, type OutputGridOptions } from '../../shared/interp/projection.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import type { SimulationOptions } from '../../shared/interp/simulateField.ts';
import { numberOption, textOptions } from './args.ts';
import { bboxOption, neighborsOption, optionalNumber, readPointsFile, sizeOption } from './point-input.ts';
import { namesDriftGrid, type TrendChoice } from './drift-input.ts';
import { DIRECTION_HELP, DIRECTION_OPTIONS, directionsOption } from './directions-option.ts';
import { sharedKrigingOptions, type RunSimulationOptions } from '../runs/heat-flow-simulation.ts';

/** parseArgs options of the simulation (the verb adds its own). */
export const SIMULATION_OPTIONS = {
  ...textOptions('points points-crs variogram lag-km max-lag-km anisotropy error-field neighbors cell-km size bbox crs'),
  field: { type: 'string', default: 'heatFlowMWm2' },
  ...DIRECTION_OPTIONS,
  trend: { type: 'string', default: 'none' },
  transform: { type: 'string', default: 'normal-score' },
  decluster: { type: 'string', default: 'none' },
  'skip-missing': { type: 'boolean', default: false },
} as const;

export const SIMULATION_HELP = `  --points P.geojson|P.csv   points (GeoJSON, or CSV with longitude,latitude or x,y + --points-crs)
  --field NAME               numeric property to simulate (default heatFlowMWm2)
  --variogram auto|spherical|exponential|gaussian|MODEL:NUGGET,PARTIAL_SILL,RANGE_KM
                             of the simulated (normal-score) values; fitted by default
  --lag-km KM --max-lag-km KM   empirical semivariogram lags
  --anisotropy ANGLE_DEG,RATIO|auto|none   geometric anisotropy: the major axis's azimuth (degrees clockwise
                             from north) and the minor/major range ratio; auto estimates both from directional
                             semivariograms and uses them when leave-one-out RMSE improves; none (default) isotropic
${DIRECTION_HELP}  --trend none|linear|quadratic|auto   drift of the mean in the coordinates (default none): the residual is
                             simulated (variogram of least-squares residuals) and the realizations are conditioned
                             by universal kriging, which adds the drift back; auto picks by leave-one-out RMSE
  --trend drift:G.tif | auto:drift:G.tif   kriging with an external drift: the covariate is the GeoTIFF G.tif
                             (e.g. sediment thickness), read bilinearly at the points and the cells or targets,
                             which it must cover; auto:drift:G.tif lets auto compare it with the polynomial drifts
  --transform normal-score|none   simulate normal scores and back-transform (default), or the values as Gaussian
  --decluster none|auto|CELL_KM   cell declustering of the histogram the normal-score transform reproduces
                             (default none; auto: the cell size of the smallest declustered mean)
  --error-field FIELD        per-point measurement sd (e.g. uncertaintyMWm2): realizations are of the true field
  --neighbors K|all          data conditioning each target (default 16)
  --cell-km KM | --size NXxNY   grid cell size (km) or grid size
  --bbox=W,S,E,N             degrees (default: data envelope padded by 5%)
  --crs EPSG:nnnn            projected output grid (default EPSG:4326)
  --skip-missing             leave out features without the field (warning) instead of failing
`;

export type SimulationArgs = { [K in keyof typeof SIMULATION_OPTIONS]?: (typeof SIMULATION_OPTIONS)[K]['type'] extends 'boolean' ? boolean : string };

/** Reads --points (with --field, --points-crs, --error-field, --skip-missing): the points, warnings and content hash. */
export async function readSimulationPoints(a: SimulationArgs): Promise<{ points: PointData; warnings: string[]; sha256: string; field: string }> {
  if (a.points === undefined) throw new InputError('--points is required', [{ field: 'points', problem: 'missing' }], 'bad_option');
  const field = a.field ?? 'heatFlowMWm2';
  const r = await readPointsFile(a.points, field, { pointsCrs: a['points-crs'], skipMissing: a['skip-missing'] === true, errorField: a['error-field'] });
  return { ...r, field };
}

/** --decluster none|auto|CELL_KM: the declustering of the normal-score transform's histogram. */
export function declusterOption(raw: string | undefined): NonNullable<SimulationOptions['declustering']> {
  const t = (raw ?? 'none').trim().toLowerCase();
  if (t === 'none' || t === 'auto') return t;
  const cellKm = Number(t);
  if (t === '' || !(Number.isFinite(cellKm) && cellKm > 0))
    throw new InputError(
      `--decluster must be none, auto or a cell size in km (> 0), got "${raw}"`,
      [{ field: 'decluster', problem: 'expected none, auto or CELL_KM > 0' }],
      'bad_option',
    );
  return { cellKm };
}

/**
 * The simulation options from the shared flags (realizations, seed and budget are the verb's); `trend`: the parsed
 * --trend with its drift grid (drift-input.ts `trendOption`), needed when --trend names a grid.
 */
export function simulationOptionsFromArgs(a: SimulationArgs, realizations: number, seed: number, units: string, trend?: TrendChoice): SimulationOptions {
  if (trend === undefined && namesDriftGrid(a.trend)) throw new RangeError('a drift grid named by --trend must be read first (drift-input.ts trendOption)');
  const transform = a.transform ?? 'normal-score';
  if (transform !== 'normal-score' && transform !== 'none')
    throw new InputError(
      `--transform must be normal-score or none, got ${transform}`,
      [{ field: 'transform', problem: 'expected normal-score or none' }],
      'bad_option',
    );
  const declustering = declusterOption(a.decluster);
  if (declustering !== 'none' && transform === 'none')
    throw new InputError(
      '--decluster weights the histogram of the normal-score transform: it needs --transform normal-score',
      [{ field: 'decluster', problem: 'drop it, or use --transform normal-score' }],
      'bad_option',
    );
  const anisotropy = parseAnisotropyOption(a.anisotropy);
  return {
    realizations,
    seed,
    variogram: parseVariogramOption(a.variogram),
    anisotropy,
    directions: directionsOption(a, anisotropy),
    trend: trend?.trend ?? parseTrendOption(a.trend),
    externalDrift: trend?.externalDrift ?? null,
    transform,
    declustering,
    measurementError: a['error-field'] !== undefined,
    neighbors: neighborsOption(a.neighbors),
    lagKm: optionalNumber('lag-km', a['lag-km']),
    maxLagKm: optionalNumber('max-lag-km', a['max-lag-km']),
    units,
  };
}

/** The output grid from --cell-km, --size, --bbox and --crs. */
export async function gridOptionsFromArgs(a: SimulationArgs): Promise<OutputGridOptions> {
  if (a['cell-km'] !== undefined && a.size !== undefined)
    throw new InputError('give --cell-km or --size, not both', [{ field: 'size', problem: 'conflicts with --cell-km' }], 'bad_option');
  const size = sizeOption(a.size);
  const bbox = bboxOption(a.bbox);
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
 * the shared flags, with the transform as given (a run picks it from the variogram); `trend`: the parsed --trend
 * with its drift grid (server/cli/drift-input.ts).
 */
export function heatFlowSimulationOptions(a: SimulationArgs, trend: TrendChoice): RunSimulationOptions {
  const so = simulationOptionsFromArgs(a, 1, 0, 'mW/m²', trend);
  return { ...sharedKrigingOptions(so), variogram: so.variogram, transform: so.transform, declustering: so.declustering };
}
