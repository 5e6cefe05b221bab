/**
 * The options of `subtherm interpolate`: the option table, the help text, and turning the parsed arguments into the
 * engine's InterpolationOptions (every choice checked here, with errors naming the option).
 */
import { InputError } from '../../shared/errors.ts';
import { parseVariogramOption, parseAnisotropyOption } from '../../shared/schema/interp.ts';
import { WGS84_DEF } from '../../shared/interp/projection.ts';
import type { InterpolationOptions } from '../../shared/interp/interpolate.ts';
import { parseVerbArgs, numberOption, textOptions } from './args.ts';
import { bboxOption, neighborsOption, sizeOption } from './point-input.ts';
import type { InterpolationInputs } from './interpolate-inputs.ts';
import { DIRECTION_HELP, DIRECTION_OPTIONS, directionsOption } from './directions-option.ts';

export const INTERPOLATE_OPTIONS = {
  ...textOptions('points method cell-km size bbox crs points-crs layer neighbors radius-km power quality-weights variogram lag-km max-lag-km'),
  ...textOptions('anisotropy trend error-field faults region max-distance-km at block out max-cells workers'),
  field: { type: 'string', default: 'heatFlowMWm2' },
  'use-quality': { type: 'boolean', default: false },
  ...DIRECTION_OPTIONS,
  'measurement-error': { type: 'boolean', default: false },
  sd: { type: 'string', default: 'grid' },
  cv: { type: 'string', default: 'on' },
  residuals: { type: 'boolean', default: false },
  'skip-missing': { type: 'boolean', default: false },
} as const;

export const INTERPOLATE_HELP = `subtherm interpolate: grid a point field by IDW, ordinary or universal kriging

  --points P.geojson|P.csv   points (GeoJSON, GeoPackage .gpkg, zipped Shapefile .zip, or CSV with
                             longitude,latitude or x,y / easting,northing + --points-crs)
  --layer NAME               the layer of a GeoPackage or zipped Shapefile holding several
  --field NAME               numeric property to interpolate (default heatFlowMWm2)
  --method idw|kriging
  --cell-km KM | --size NXxNY   cell size (km, converted to degrees at the centre latitude) or grid size
  --bbox=W,S,E,N             degrees (default: data envelope padded by 5%); write it with '=' when W < 0
  --crs EPSG:nnnn            projected output grid (default EPSG:4326)
  --points-crs EPSG:nnnn     CRS of CSV x,y columns (default: --crs)
  --neighbors K|all          nearest points per cell (IDW 12, kriging 16)
  --radius-km KM             search radius
  --power P                  IDW power (default 2)
  --use-quality              IDW weights multiplied by quality (--quality-weights high=1,medium=0.5,low=0.25)
  --variogram auto|spherical|exponential|gaussian|MODEL:NUGGET,PARTIAL_SILL,RANGE_KM
  --lag-km KM --max-lag-km KM   empirical semivariogram lags
  --anisotropy ANGLE_DEG,RATIO|auto|none   geometric anisotropy: the major axis's azimuth (degrees clockwise
                             from north) and the minor/major range ratio; auto estimates both from directional
                             semivariograms and uses them when leave-one-out RMSE improves; none (default) isotropic
${DIRECTION_HELP}  --trend none|linear|quadratic|auto   drift of the mean in the coordinates (kriging; default none):
                             universal kriging with the variogram fitted on least-squares residuals; auto picks
                             the lowest leave-one-out RMSE and lists every drift's RMSE and MSDR
  --trend drift:G.tif | auto:drift:G.tif   kriging with an external drift: the covariate is the GeoTIFF G.tif
                             (e.g. sediment thickness), read bilinearly at the points and cells, which it must
                             cover; auto:drift:G.tif lets auto compare it with the polynomial drifts
  --error-field FIELD        per-point measurement standard deviation (e.g. uncertaintyMWm2): its square goes on
                             the kriging diagonal, the nugget is split into that known error and a micro-scale
                             part, maps and sd are of the true field (error-filtered)
  --measurement-error        deprecated spelling of --error-field uncertaintyMWm2 (or FIELDSd for other fields)
  --faults F.geojson         fault traces: barriers between points and cells
  --region R.geojson         cells outside the polygons are no data
  --max-distance-km KM       cells farther from every point are no data
  --sd grid|none             kriging standard-deviation grid (default grid)
  --cv on|off                leave-one-out cross-validation (default on); --residuals lists each point
  --at T.geojson             predict at these points only
  --block R.geojson          block kriging of the mean over each polygon: blocks [{ id, value, sd, units }]
  --out G.tif                write G.tif (and G.sd.tif)
  --skip-missing             leave out features without the field (warning) instead of failing
  --max-cells N              grid size limit (default 25000000)
  --workers N                worker threads for the grid pass (default 1: this thread)
  --json                     print one JSON object
`;

/** The verb's arguments, parsed strictly. */
export function parseInterpolateArgs(argv: string[]) {
  return parseVerbArgs('interpolate', argv, INTERPOLATE_OPTIONS).values;
}
export type InterpolateArgs = ReturnType<typeof parseInterpolateArgs>;

/** The choices that need no file: --points given, --method, --sd, --cv, and --cell-km against --size. */
export function checkChoices(a: InterpolateArgs): asserts a is InterpolateArgs & { points: string; method: 'idw' | 'kriging' } {
  if (a.points === undefined) throw new InputError('--points is required', [{ field: 'points', problem: 'missing' }], 'bad_option');
  if (a.method !== 'idw' && a.method !== 'kriging')
    throw new InputError(
      `--method must be idw or kriging, got ${a.method ?? '(missing)'}`,
      [{ field: 'method', problem: 'expected idw or kriging' }],
      'bad_option',
    );
  if (a.sd !== 'grid' && a.sd !== 'none')
    throw new InputError(`--sd must be grid or none, got ${a.sd}`, [{ field: 'sd', problem: 'expected grid or none' }], 'bad_option');
  if (a.cv !== 'on' && a.cv !== 'off')
    throw new InputError(`--cv must be on or off, got ${a.cv}`, [{ field: 'cv', problem: 'expected on or off' }], 'bad_option');
  if (a['cell-km'] !== undefined && a.size !== undefined)
    throw new InputError('give --cell-km or --size, not both', [{ field: 'size', problem: 'conflicts with --cell-km' }], 'bad_option');
}

/**
 * The property holding each point's measurement standard deviation: --error-field, or the one the deprecated
 * --measurement-error implies (with a warning). Measurement errors enter the kriging system, so they need kriging.
 */
export function errorFieldOption(a: InterpolateArgs, warnings: string[]): string | undefined {
  let errorField = a['error-field'];
  if (a['measurement-error']) {
    const implied = a.field === 'heatFlowMWm2' ? 'uncertaintyMWm2' : `${a.field}Sd`;
    warnings.push(`--measurement-error is deprecated: use --error-field ${errorField ?? implied}`);
    errorField ??= implied;
  }
  if (errorField !== undefined && a.method !== 'kriging')
    throw new InputError(
      '--error-field needs --method kriging',
      [{ field: 'error-field', problem: 'measurement errors enter the kriging system' }],
      'bad_option',
    );
  return errorField;
}

/** --quality-weights high=W,medium=W,low=W. */
export function qualityWeightsOption(raw: string | undefined): Record<string, number> | undefined {
  if (raw === undefined) return undefined;
  const weights: Record<string, number> = {};
  for (const part of raw.split(',')) {
    const [k, v] = part.split('=').map((s) => s.trim());
    if (!['high', 'medium', 'low'].includes(k) || v === undefined)
      throw new InputError(
        `--quality-weights: expected high=W,medium=W,low=W, got "${part}"`,
        [{ field: 'quality-weights', problem: 'e.g. high=1,medium=0.5,low=0.25' }],
        'bad_option',
      );
    weights[k] = numberOption('quality-weights', v);
  }
  return weights;
}

/** --workers N: threads for the grid pass, 1..64 (1: this thread). */
export function workersOption(raw: string | undefined): number {
  const workers = raw === undefined ? 1 : numberOption('workers', raw);
  if (!(Number.isInteger(workers) && workers >= 1 && workers <= 64))
    throw new InputError(`--workers must be an integer 1..64, got ${raw}`, [{ field: 'workers', problem: 'expected 1..64' }], 'bad_option');
  return workers;
}

/** The output grid's CRS as given (default EPSG:4326) with its loaded definition. */
export interface OutputCrs {
  crs: string;
  /** proj4 definition (see `loadCrsDefinition`). */
  crsDef: string;
}

/** The engine's options from the verb's arguments, the barriers and region read from files, and the output CRS. */
export function interpolationOptions(
  a: InterpolateArgs & { method: 'idw' | 'kriging' },
  inputs: Pick<InterpolationInputs, 'faults' | 'region' | 'trend'>,
  errorField: string | undefined,
  out: OutputCrs,
): InterpolationOptions {
  const size = sizeOption(a.size);
  const bbox = bboxOption(a.bbox);
  const neighbors = neighborsOption(a.neighbors);
  const qualityWeights = qualityWeightsOption(a['quality-weights']);
  const anisotropy = parseAnisotropyOption(a.anisotropy);
  const opt = (name: keyof typeof a) => (a[name] === undefined ? undefined : numberOption(String(name), a[name] as string));
  return {
    method: a.method,
    neighbors,
    radiusKm: opt('radius-km'),
    power: opt('power'),
    useQuality: a['use-quality'],
    qualityWeights,
    variogram: parseVariogramOption(a.variogram),
    lagKm: opt('lag-km'),
    maxLagKm: opt('max-lag-km'),
    anisotropy,
    directions: directionsOption(a, anisotropy),
    trend: inputs.trend.trend,
    externalDrift: inputs.trend.externalDrift,
    measurementError: errorField !== undefined,
    faults: inputs.faults,
    region: inputs.region,
    maxDistanceKm: opt('max-distance-km') ?? null,
    grid: { bbox, cellKm: opt('cell-km'), size, crs: out.crsDef === WGS84_DEF ? 'EPSG:4326' : out.crs, crsDef: out.crsDef },
    sd: a.sd === 'grid',
    crossValidation: a.cv === 'on',
    maxCells: opt('max-cells'),
    units: a.field === 'heatFlowMWm2' ? 'mW/m²' : '',
  };
}
