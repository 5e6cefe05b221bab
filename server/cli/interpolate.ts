import { InputError } from '../../shared/errors.ts';
import { VERSION, TOOL_NAME } from '../../shared/version.ts';
import { CAUTION } from '../../shared/caution.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { parseVariogramOption, parseAnisotropyOption, targetsFromGeoJson } from '../../shared/schema/interp.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { heatFlowSurface } from '../../shared/products/heat-flow-surface.ts';
import {
  prepareInterpolation,
  predictAtPoints,
  gridSummary,
  type InterpolationOptions,
  type PointData,
  type InterpolationResult,
} from '../../shared/interp/interpolate.ts';
import { blockEstimates, type BlockPolygon } from '../../shared/interp/blockKriging.ts';
import { writeGeoTiffFile } from '../io/geotiff.ts';
import { parseVerbArgs, numberOption } from './args.ts';
import { bboxOption, neighborsOption, parseJson, readPointsFile, readText, sha256, sizeOption } from './point-input.ts';

const OPTIONS = {
  points: { type: 'string' },
  field: { type: 'string', default: 'heatFlowMWm2' },
  method: { type: 'string' },
  'cell-km': { type: 'string' },
  size: { type: 'string' },
  bbox: { type: 'string' },
  crs: { type: 'string' },
  'points-crs': { type: 'string' },
  layer: { type: 'string' },
  neighbors: { type: 'string' },
  'radius-km': { type: 'string' },
  power: { type: 'string' },
  'use-quality': { type: 'boolean', default: false },
  'quality-weights': { type: 'string' },
  variogram: { type: 'string' },
  'lag-km': { type: 'string' },
  'max-lag-km': { type: 'string' },
  anisotropy: { type: 'string' },
  'measurement-error': { type: 'boolean', default: false },
  'error-field': { type: 'string' },
  faults: { type: 'string' },
  region: { type: 'string' },
  'max-distance-km': { type: 'string' },
  sd: { type: 'string', default: 'grid' },
  cv: { type: 'string', default: 'on' },
  residuals: { type: 'boolean', default: false },
  at: { type: 'string' },
  block: { type: 'string' },
  out: { type: 'string' },
  'skip-missing': { type: 'boolean', default: false },
  'max-cells': { type: 'string' },
  workers: { type: 'string' },
} as const;

const HELP = `subtherm interpolate: grid a point field by IDW or ordinary kriging

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
  --anisotropy ANGLE_DEG,RATIO  geometric anisotropy (major-axis azimuth, minor/major range ratio)
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

export async function interpolate(argv: string[]): Promise<number> {
  const t0 = performance.now();
  const { values: a } = parseVerbArgs('interpolate', argv, OPTIONS);
  if (a.help) {
    process.stdout.write(HELP);
    return 0;
  }
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
  const field = a.field;
  const warnings: string[] = [];
  let errorField = a['error-field'];
  if (a['measurement-error']) {
    const implied = field === 'heatFlowMWm2' ? 'uncertaintyMWm2' : `${field}Sd`;
    warnings.push(`--measurement-error is deprecated: use --error-field ${errorField ?? implied}`);
    errorField ??= implied;
  }
  if (errorField !== undefined && a.method !== 'kriging')
    throw new InputError(
      '--error-field needs --method kriging',
      [{ field: 'error-field', problem: 'measurement errors enter the kriging system' }],
      'bad_option',
    );

  // Inputs.
  const crs = a.crs ?? 'EPSG:4326';
  const crsDef = await loadCrsDefinition(crs);
  const read = await readPointsFile(a.points, field, { pointsCrs: a['points-crs'] ?? a.crs, skipMissing: a['skip-missing'], errorField, layer: a.layer });
  const points: PointData = read.points;
  warnings.push(...read.warnings);
  const hashes: Record<string, string> = { points: read.sha256 };
  let faults: number[][][] | null = null;
  if (a.faults !== undefined) {
    const txt = await readText(a.faults, 'faults');
    hashes.faults = sha256(txt);
    const ds = parseFeatureCollection('faults', parseJson(txt, a.faults));
    warnings.push(...ds.warnings);
    faults = [];
    for (const f of ds.collection.features) {
      const g = f.geometry as { type: string; coordinates: number[][] | number[][][] };
      if (g.type === 'LineString') faults.push(g.coordinates as number[][]);
      else faults.push(...(g.coordinates as number[][][]));
    }
  }
  let region: number[][][] | null = null;
  if (a.region !== undefined) {
    const txt = await readText(a.region, 'region');
    hashes.region = sha256(txt);
    const ds = parseFeatureCollection('regions', parseJson(txt, a.region));
    region = [];
    for (const f of ds.collection.features) {
      const g = f.geometry as { type: string; coordinates: number[][][] | number[][][][] };
      if (g.type === 'Polygon') region.push(...(g.coordinates as number[][][]));
      else for (const poly of g.coordinates as number[][][][]) region.push(...poly);
    }
  }

  let blocks: BlockPolygon[] | null = null;
  if (a.block !== undefined) {
    if (a.method !== 'kriging')
      throw new InputError('--block needs --method kriging', [{ field: 'block', problem: 'block estimates come from block kriging' }], 'bad_option');
    const txt = await readText(a.block, 'block');
    hashes.block = sha256(txt);
    blocks = blockPolygonsFromGeoJson(parseJson(txt, a.block), a.block);
  }
  // Options.
  const size = sizeOption(a.size);
  const bbox = bboxOption(a.bbox);
  const neighbors = neighborsOption(a.neighbors);
  let qualityWeights: Record<string, number> | undefined;
  if (a['quality-weights'] !== undefined) {
    qualityWeights = {};
    for (const part of a['quality-weights'].split(',')) {
      const [k, v] = part.split('=').map((s) => s.trim());
      if (!['high', 'medium', 'low'].includes(k) || v === undefined)
        throw new InputError(
          `--quality-weights: expected high=W,medium=W,low=W, got "${part}"`,
          [{ field: 'quality-weights', problem: 'e.g. high=1,medium=0.5,low=0.25' }],
          'bad_option',
        );
      qualityWeights[k] = numberOption('quality-weights', v);
    }
  }
  const opt = (name: keyof typeof a) => (a[name] === undefined ? undefined : numberOption(String(name), a[name] as string));
  const options: InterpolationOptions = {
    method: a.method,
    neighbors,
    radiusKm: opt('radius-km'),
    power: opt('power'),
    useQuality: a['use-quality'],
    qualityWeights,
    variogram: parseVariogramOption(a.variogram),
    lagKm: opt('lag-km'),
    maxLagKm: opt('max-lag-km'),
    anisotropy: parseAnisotropyOption(a.anisotropy),
    measurementError: errorField !== undefined,
    faults,
    region,
    maxDistanceKm: opt('max-distance-km') ?? null,
    grid: { bbox, cellKm: opt('cell-km'), size, crs: crsDef === WGS84_DEF ? 'EPSG:4326' : crs, crsDef },
    sd: a.sd === 'grid',
    crossValidation: a.cv === 'on',
    maxCells: opt('max-cells'),
    units: field === 'heatFlowMWm2' ? 'mW/m²' : '',
  };
  const readMs = performance.now() - t0;

  // Point predictions only.
  if (a.at !== undefined) {
    const txt = await readText(a.at, 'at');
    const targets = targetsFromGeoJson(parseJson(txt, a.at), a.at);
    const r = predictAtPoints(points, options, targets);
    const blockOut =
      blocks === null ? undefined : blockEstimates(prepareInterpolation(points, { ...options, region: null, crossValidation: false }, false), blocks);
    const body = {
      predictions: r.predictions,
      blocks: blockOut,
      units: options.units,
      variogram: r.variogram,
      crossValidation: cvOut(r.crossValidation, a.residuals),
      warnings: [...warnings, ...r.warnings],
      timingsMs: { read: readMs, ...r.timingsMs },
    };
    if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
    else for (const p of r.predictions) process.stdout.write(`${p.id}\t${p.value ?? 'no data'}\t${p.sd ?? ''}\n`);
    return 0;
  }

  // Grid.
  const prep = prepareInterpolation(points, options);
  let result: InterpolationResult;
  const workers = a.workers === undefined ? 1 : numberOption('workers', a.workers);
  if (!(Number.isInteger(workers) && workers >= 1 && workers <= 64))
    throw new InputError(`--workers must be an integer 1..64, got ${a.workers}`, [{ field: 'workers', problem: 'expected 1..64' }], 'bad_option');
  if (workers > 1) {
    const { createInterpPool, poolRowFiller, sharedFloat32 } = await import('../workers/interp-worker.ts');
    const pool = createInterpPool(workers);
    try {
      result = await heatFlowSurface(prep, { fill: poolRowFiller(pool, prep.plan), allocate: sharedFloat32 });
    } finally {
      await pool.destroy();
    }
  } else {
    result = await heatFlowSurface(prep);
  }

  const files: string[] = [];
  const tw = performance.now();
  if (a.out !== undefined) {
    const provenance = {
      tool: TOOL_NAME,
      version: VERSION,
      verb: 'interpolate',
      method: a.method,
      field,
      units: options.units,
      variogram:
        result.variogram === null
          ? null
          : {
              model: result.variogram.model,
              nugget: result.variogram.nugget,
              partialSill: result.variogram.partialSill,
              rangeKm: result.variogram.rangeKm,
              anisotropy: result.variogram.anisotropy,
            },
      neighbors: neighbors ?? (a.method === 'idw' ? 12 : 16),
      power: a.method === 'idw' ? (options.power ?? 2) : undefined,
      inputSha256: hashes,
      created: new Date().toISOString(),
    };
    const name = a.out;
    await writeGeoTiffFile(name, result.grid, {
      description: `${field} (${options.units || 'value'}), ${a.method === 'idw' ? 'inverse-distance weighting' : 'ordinary kriging'}`,
      metadata: provenance,
    });
    files.push(name);
    if (result.sd !== undefined) {
      const sdName = name.replace(/\.tiff?$/i, '') + '.sd.tif';
      await writeGeoTiffFile(sdName, result.sd, {
        description: `${field} kriging standard deviation (${options.units || 'value units'})`,
        metadata: provenance,
      });
      files.push(sdName);
    }
  }
  const body = {
    grid: { ...gridSummary(result.grid, result.cellKm), units: options.units },
    sd: result.sd !== undefined ? (({ min, max, mean }) => ({ min, max, mean }))(gridSummary(result.sd, result.cellKm)) : null,
    variogram: result.variogram,
    crossValidation: cvOut(result.crossValidation, a.residuals),
    blocks: blocks === null ? undefined : blockEstimates(prep, blocks),
    files,
    caution: CAUTION,
    warnings: [...warnings, ...result.warnings],
    timingsMs: { read: readMs, ...result.timingsMs, write: performance.now() - tw, total: performance.now() - t0 },
  };
  if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
  else {
    const g = body.grid;
    process.stdout.write(
      `grid ${g.nx} × ${g.ny} (${g.cellKm.toFixed(3)} km cells, ${g.crs}); ${field} min ${g.min} max ${g.max} mean ${g.mean}; ${g.noData} no-data cells\n`,
    );
    if (body.variogram)
      process.stdout.write(
        `variogram ${body.variogram.model}: nugget ${body.variogram.nugget}, partial sill ${body.variogram.partialSill}, range ${body.variogram.rangeKm} km\n`,
      );
    if (body.crossValidation)
      process.stdout.write(
        `cross-validation: RMSE ${body.crossValidation.rmse}, mean error ${body.crossValidation.meanError}, MSDR ${body.crossValidation.meanSquaredDeviationRatio ?? '-'}\n`,
      );
    for (const f of files) process.stdout.write(`wrote ${f}\n`);
    for (const w of body.warnings) process.stdout.write(`warning: ${w}\n`);
    process.stdout.write(CAUTION + '\n');
  }
  return 0;
}

/** Cross-validation for output: the residual list only with --residuals (it can be long). */
function cvOut(cv: InterpolationResult['crossValidation'], residuals: boolean) {
  if (cv === null) return null;
  return residuals ? cv : { ...cv, residuals: undefined, residualsOmitted: cv.residuals.length };
}

/** Block polygons: Polygon or MultiPolygon features; id from properties.id, the feature id, or the position. */
function blockPolygonsFromGeoJson(input: unknown, source: string): BlockPolygon[] {
  const fc = input as { type?: unknown; features?: unknown };
  if (input === null || typeof input !== 'object' || fc.type !== 'FeatureCollection' || !Array.isArray(fc.features) || fc.features.length === 0) {
    throw new InputError(
      `${source}: expected a GeoJSON FeatureCollection of polygons`,
      [{ field: 'features', problem: 'expected at least one Polygon or MultiPolygon' }],
      'bad_geojson',
    );
  }
  return (fc.features as { id?: unknown; geometry?: { type?: unknown; coordinates?: unknown } | null; properties?: Record<string, unknown> | null }[]).map(
    (f, i) => {
      const pid = f?.properties?.id;
      const id =
        typeof pid === 'string' || typeof pid === 'number'
          ? String(pid)
          : typeof f?.id === 'string' || typeof f?.id === 'number'
            ? String(f.id)
            : `block-${i + 1}`;
      const g = f?.geometry;
      const ok = (rings: unknown): rings is number[][][] =>
        Array.isArray(rings) &&
        rings.length > 0 &&
        rings.every(
          (r) =>
            Array.isArray(r) &&
            r.length >= 4 &&
            r.every(
              (p) =>
                Array.isArray(p) &&
                p.length >= 2 &&
                Number.isFinite(p[0]) &&
                Number.isFinite(p[1]) &&
                (p[0] as number) >= -180 &&
                (p[0] as number) <= 180 &&
                (p[1] as number) >= -90 &&
                (p[1] as number) <= 90,
            ),
        );
      if (g?.type === 'Polygon' && ok(g.coordinates)) return { id, rings: g.coordinates };
      if (g?.type === 'MultiPolygon' && Array.isArray(g.coordinates) && g.coordinates.every(ok)) return { id, rings: g.coordinates.flat() };
      throw new InputError(
        `${source}: feature ${id} is not a valid Polygon or MultiPolygon in lon/lat degrees`,
        [{ feature: id, field: 'geometry', problem: 'expected Polygon or MultiPolygon rings of ≥ 4 [lon, lat] positions' }],
        'invalid_features',
      );
    },
  );
}
