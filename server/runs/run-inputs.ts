/**
 * A run's inputs, parsed once at the start of a run: the request (shared/schema/run.ts), the interpolation options
 * (shared/schema/interp.ts), the sites, the thermal model (the strict reader, shared/products/model-input.ts), the
 * faults (barriers), the regions (model overrides and the mask), the output CRS, and the SHA-256 of each input for
 * the provenance. Every problem is an InputError naming the field.
 */
import { HEAT_FLOW_CORRELATION_DEPRECATED } from './heat-flow-simulation.ts';
import { InputError, type InputProblem } from '../../shared/errors.ts';
import type { Rings } from '../../shared/grid/polygon-cells.ts';
import { runRequestSchema, type RunRequest } from '../../shared/schema/run.ts';
import { interpolationOptionsSchema, pointsFromGeoJson, runTrend, type InterpolationRequest } from '../../shared/schema/interp.ts';
import { driftGridFromBytes, gridDatasetBytes } from '../io/grid-dataset.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import type { InterpolationOptions, PointData } from '../../shared/interp/interpolate.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { parseModelDocument, parseModelText, type ModelDocument } from '../../shared/products/model-input.ts';
import { overrideRegions, type OverrideRegion } from '../../shared/products/overrides.ts';
import { sha256Hex, sha256Json } from '../io/export.ts';
import type { StoredDataset } from './types.ts';

export interface RunInputs {
  request: RunRequest;
  /** The interpolation options as the request gave them (after defaults). */
  interpolation: InterpolationRequest;
  points: PointData;
  doc: ModelDocument;
  faults: number[][][] | null;
  regions: OverrideRegion[];
  /** The output CRS code and its proj4 definition. */
  crs: string;
  crsDef: string;
  faciesDepthKm: number;
  seed: number;
  heatFlowErrorCorrelation: 'full' | 'independent';
  /** What the interpolation engine gets (grid, barriers, mask and an external drift's covariate grid included). */
  interpOptions: InterpolationOptions;
  /** SHA-256 per input (sites, model, faults, regions, request). */
  hashes: Record<string, string>;
  warnings: string[];
}

function invalid(what: string, details: InputProblem[]): InputError {
  return new InputError(`invalid ${what}: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_request');
}

function dataset(datasets: Record<string, StoredDataset>, id: string, field: string): StoredDataset {
  const d = datasets[id];
  if (d === undefined)
    throw new InputError(`data set "${id}" (${field}) was not found`, [{ field, problem: `no data set with id "${id}"` }], 'unknown_dataset');
  return d;
}

function parseJsonBody(d: StoredDataset, id: string, field: string): unknown {
  try {
    return JSON.parse(d.body);
  } catch (e) {
    throw new InputError(`data set "${id}" (${field}) is not valid JSON`, [{ field, problem: e instanceof Error ? e.message : String(e) }], 'bad_dataset');
  }
}

/** The data set `id` that `field` names, refused unless it is of `kind` (`what`: how a problem names that kind). */
function datasetOfKind(datasets: Record<string, StoredDataset>, id: string, field: string, kind: StoredDataset['kind'], what: string): StoredDataset {
  const d = dataset(datasets, id, field);
  if (d.kind !== kind)
    throw new InputError(
      `data set "${id}" is a ${d.kind} data set, not a ${kind}`,
      [{ field, problem: `expected a data set of kind "${kind}"${what}` }],
      'invalid_request',
    );
  return d;
}

function readModel(req: RunRequest, datasets: Record<string, StoredDataset>, hashes: Record<string, string>): ModelDocument {
  if (typeof req.model !== 'string') {
    hashes.model = sha256Json(req.model);
    return parseModelDocument(req.model, 'model');
  }
  const md = datasetOfKind(datasets, req.model, 'model', 'model', '');
  hashes.model = sha256Hex(md.body);
  return parseModelText(md.body, `model ${req.model}`);
}

function readFaults(req: RunRequest, datasets: Record<string, StoredDataset>, hashes: Record<string, string>, warnings: string[]): number[][][] | null {
  if (req.faults === undefined) return null;
  const fd = dataset(datasets, req.faults, 'faults');
  const ds = parseFeatureCollection('faults', parseJsonBody(fd, req.faults, 'faults'));
  warnings.push(...ds.warnings);
  hashes.faults = sha256Hex(fd.body);
  return faultLines(ds.collection.features);
}

/** The traces of a faults data set's features (LineString or MultiLineString) as lines of [lon, lat] degrees. */
export function faultLines(features: readonly { geometry: { type: string; coordinates: unknown } }[]): number[][][] {
  const lines: number[][][] = [];
  for (const f of features) {
    const g = f.geometry;
    if (g.type === 'LineString') lines.push(g.coordinates as number[][]);
    else lines.push(...(g.coordinates as number[][][]));
  }
  return lines;
}

function readRegions(
  req: RunRequest,
  datasets: Record<string, StoredDataset>,
  hashes: Record<string, string>,
  warnings: string[],
): { regions: OverrideRegion[]; mask: Rings | null } {
  if (req.regions === undefined) {
    if (req.maskToRegion) throw new InputError('maskToRegion needs a regions data set', [{ field: 'regions', problem: 'missing' }], 'invalid_request');
    return { regions: [], mask: null };
  }
  const rd = dataset(datasets, req.regions, 'regions');
  const ds = parseFeatureCollection('regions', parseJsonBody(rd, req.regions, 'regions'));
  warnings.push(...ds.warnings);
  const found = overrideRegions(ds.collection.features);
  const mask = req.maskToRegion && found.plain.length > 0 ? found.plain[0] : null;
  if (req.maskToRegion && mask === null)
    throw new InputError(
      'maskToRegion is set but the regions data set has no feature without "layers" to serve as the mask',
      [{ field: 'maskToRegion', problem: 'add a polygon without layers, or unset maskToRegion' }],
      'invalid_request',
    );
  hashes.regions = sha256Hex(rd.body);
  return { regions: found.regions, mask };
}

/** The run request and its interpolation options, checked against their schemas; a run grids heat flow. */
function parseRequest(request: unknown): { req: RunRequest; iopt: InterpolationRequest } {
  const parsed = runRequestSchema.safeParse(request);
  if (!parsed.success)
    throw invalid(
      'run request',
      parsed.error.issues.map((i) => ({ field: i.path.map(String).join('.') || '(request)', problem: i.message })),
    );
  const req = parsed.data;
  const ip = interpolationOptionsSchema.safeParse(req.interpolation);
  if (!ip.success)
    throw invalid(
      'interpolation options',
      ip.error.issues.map((i) => ({ field: `interpolation.${i.path.map(String).join('.')}`, problem: i.message })),
    );
  const iopt = ip.data;
  if (iopt.field !== 'heatFlowMWm2')
    throw new InputError(
      `a run grids heat flow: interpolation.field must be "heatFlowMWm2", got "${iopt.field}"`,
      [{ field: 'interpolation.field', problem: 'expected heatFlowMWm2' }],
      'invalid_request',
    );
  return { req, iopt };
}

/** The output CRS code: the grid's, else the interpolation options', else EPSG:4326. */
function outputCrs(req: RunRequest, iopt: InterpolationRequest): string {
  const crs = req.grid.crs ?? iopt.crs ?? 'EPSG:4326';
  if (!/^EPSG:\d{4,6}$/i.test(crs))
    throw new InputError(
      `grid.crs must be EPSG:nnnn (GeoTIFF exports carry an EPSG code), got "${crs}"`,
      [{ field: 'grid.crs', problem: 'expected EPSG:4326 or EPSG:nnnn' }],
      'bad_crs',
    );
  return crs;
}

/** What the interpolation engine gets: the options, the barriers, the mask and the grid (the run's grid first). */
function engineOptions(
  req: RunRequest,
  iopt: InterpolationRequest,
  faults: number[][][] | null,
  mask: Rings | null,
  crs: string,
  crsDef: string,
): InterpolationOptions {
  return {
    method: iopt.method,
    neighbors: iopt.neighbors,
    radiusKm: iopt.radiusKm,
    power: iopt.power,
    useQuality: iopt.useQuality,
    qualityWeights: iopt.qualityWeights,
    variogram: iopt.variogram,
    lagKm: iopt.lagKm,
    maxLagKm: iopt.maxLagKm,
    anisotropy: iopt.anisotropy ?? null,
    directions: iopt.directions,
    trend: runTrend(iopt.trend).trend,
    measurementError: iopt.measurementError,
    maxDistanceKm: iopt.maxDistanceKm ?? null,
    faults,
    region: mask,
    sd: iopt.sd,
    crossValidation: iopt.crossValidation ?? true,
    units: 'mW/m²',
    grid: {
      bbox: req.grid.bbox ?? iopt.bbox,
      cellKm: req.grid.cellKm ?? iopt.cellKm,
      size: req.grid.size ?? iopt.size,
      crs: crsDef === WGS84_DEF ? 'EPSG:4326' : crs,
      crsDef,
    },
  };
}

/**
 * The covariate grid of `interpolation.trend` = `drift:<datasetId>` (or `auto:drift:<datasetId>`): a data set of kind
 * grid (server/io/grid-dataset.ts), read as the command line reads the same GeoTIFF; null for any other trend.
 */
async function readDriftGrid(iopt: InterpolationRequest, datasets: Record<string, StoredDataset>, hashes: Record<string, string>) {
  const id = runTrend(iopt.trend).driftDataset;
  if (id === null) return null;
  const d = datasetOfKind(datasets, id, 'interpolation.trend', 'grid', ' (a GeoTIFF)');
  hashes.drift = sha256Hex(d.body);
  return await driftGridFromBytes(gridDatasetBytes(d.body), `grid data set ${id}`);
}

/** Parses and checks a run request and the data sets it names. */
export async function readRunInputs(request: unknown, datasets: Record<string, StoredDataset>): Promise<RunInputs> {
  const { req, iopt } = parseRequest(request);
  const warnings: string[] = [];
  const sitesDs = dataset(datasets, req.sites, 'sites');
  const { points, warnings: pw } = pointsFromGeoJson(parseJsonBody(sitesDs, req.sites, 'sites'), 'heatFlowMWm2', { source: `data set ${req.sites}` });
  warnings.push(...pw);
  const hashes: Record<string, string> = { sites: sha256Hex(sitesDs.body) };
  const doc = readModel(req, datasets, hashes);
  const faults = readFaults(req, datasets, hashes, warnings);
  const { regions, mask } = readRegions(req, datasets, hashes, warnings);
  const crs = outputCrs(req, iopt);
  const crsDef = await loadCrsDefinition(crs);
  hashes.request = sha256Json(request);
  const interpOptions = { ...engineOptions(req, iopt, faults, mask, crs, crsDef), externalDrift: await readDriftGrid(iopt, datasets, hashes) };
  const faciesDepthKm = req.faciesDepthKm ?? (req.depthsKm.length > 0 ? Math.max(...req.depthsKm) : 10);
  if (req.heatFlowErrorCorrelation !== undefined) warnings.push(HEAT_FLOW_CORRELATION_DEPRECATED);
  return {
    request: req,
    interpolation: iopt,
    points,
    doc,
    faults,
    regions,
    crs,
    crsDef,
    faciesDepthKm,
    seed: req.seed ?? 0,
    heatFlowErrorCorrelation: req.heatFlowErrorCorrelation ?? 'full',
    interpOptions,
    hashes,
    warnings,
  };
}
