import { z } from 'zod';
import { InputError, problemsError, type InputProblem } from '../errors.ts';
import { parseCsv } from '../io/csv.ts';
import { checkDegreeColumns, dataSetCoordinateColumns, rowProperties, wellFeaturesFromRows, type CsvPoint } from './csv-points.ts';
import { swappedLonLatError } from './lonlat-order.ts';
import { zoneNameProblem } from '../petrology/zones.ts';
import {
  pointGeometry,
  lineStringGeometry,
  multiLineStringGeometry,
  polygonGeometry,
  multiPolygonGeometry,
  type FeatureCollection,
  type PointGeometry,
  type LineGeometry,
  type PolygonGeometry,
} from './geojson.ts';

/** The kinds of data set the tool takes (DESIGN.md §3). */
export const DATASET_KINDS = ['sites', 'samples', 'faults', 'wells', 'regions'] as const;
export type DatasetKind = (typeof DATASET_KINDS)[number];

const featureId = z.union([z.string().min(1).max(200), z.number().finite()]).transform((v) => String(v));
const text = z.string().max(2000);

/** Heat-flow site properties; units in the names (DESIGN.md §3). */
export const siteProperties = z.looseObject({
  id: featureId,
  name: text.optional(),
  heatFlowMWm2: z.number().gt(0, 'heat flow must be positive (mW/m²)').lt(2000, 'heat flow above 2000 mW/m² is not a conductive measurement'),
  uncertaintyMWm2: z.number().min(0, 'uncertainty must be ≥ 0 (mW/m²)').optional(),
  quality: z.enum(['high', 'medium', 'low']).optional(),
  gradientCPerKm: z.number().optional(),
  conductivityWmK: z.number().gt(0, 'conductivity must be > 0 (W/m/K)').optional(),
  heatProductionUWm3: z.number().min(0, 'heat production must be ≥ 0 (µW/m³)').optional(),
  /** Depths (m below ground) of the interval the gradient was measured over, for the heat-flow corrections. */
  intervalTopM: z.number().min(0, 'interval top must be ≥ 0 m below ground').optional(),
  intervalBottomM: z.number().gt(0, 'interval bottom must be > 0 m below ground').optional(),
  /** For sites derived from wells: the source well and the method that gave the heat flow. */
  sourceWellId: z.string().max(200).optional(),
  heatFlowMethod: z.string().max(200).optional(),
});
export type SiteProperties = z.infer<typeof siteProperties>;

/** Grade-sample properties: at least one of zone, facies, or peak T and P together. */
export const sampleProperties = z
  .looseObject({
    id: featureId,
    zone: z.string().min(1).max(100).optional(),
    facies: z.string().min(1).max(100).optional(),
    peakTemperatureC: z.number().gt(-50).lt(2000).optional(),
    peakPressureKbar: z.number().min(0).lt(200).optional(),
    assemblage: text.optional(),
    lithology: text.optional(),
  })
  .superRefine((p, ctx) => {
    const hasPeak = p.peakTemperatureC !== undefined && p.peakPressureKbar !== undefined;
    if (p.zone === undefined && p.facies === undefined && !hasPeak) {
      ctx.addIssue({ code: 'custom', path: ['zone'], message: 'a grade sample needs a zone, a facies, or peakTemperatureC with peakPressureKbar' });
    }
    if ((p.peakTemperatureC === undefined) !== (p.peakPressureKbar === undefined)) {
      ctx.addIssue({
        code: 'custom',
        path: [p.peakTemperatureC === undefined ? 'peakTemperatureC' : 'peakPressureKbar'],
        message: 'peak temperature and peak pressure go together',
      });
    }
    // Zone names are checked at upload, with the nearest valid name (both the Barrovian and low-pressure scales).
    const zoneProblem = p.zone === undefined ? null : zoneNameProblem(p.zone);
    if (zoneProblem !== null) ctx.addIssue({ code: 'custom', path: ['zone'], message: zoneProblem });
  });
export type SampleProperties = z.infer<typeof sampleProperties>;

export const FAULT_KINDS = ['normal', 'reverse', 'thrust', 'strike-slip', 'unknown'] as const;
export const faultProperties = z.looseObject({
  id: featureId,
  name: text.optional(),
  kind: z.enum(FAULT_KINDS).default('unknown'),
  dipDeg: z.number().gt(0).max(90).optional(),
  dipDirectionDeg: z.number().min(0).max(360).optional(),
});
export type FaultProperties = z.infer<typeof faultProperties>;

/** A well measurement after unit conversion: depth in m below ground, temperature in °C. */
export const wellMeasurement = z
  .looseObject({
    depthM: z.number().optional(),
    depthFt: z.number().optional(),
    temperatureC: z.number().optional(),
    temperatureF: z.number().optional(),
    kind: z.enum(['bht', 'log', 'test']),
    hoursSinceCirculation: z.number().gt(0, 'time since circulation must be > 0 h').optional(),
    circulationHours: z.number().gt(0, 'circulation time must be > 0 h').optional(),
  })
  .superRefine((m, ctx) => {
    if (m.depthM === undefined && m.depthFt === undefined) ctx.addIssue({ code: 'custom', path: ['depthM'], message: 'a measurement needs depthM or depthFt' });
    if (m.depthM !== undefined && m.depthFt !== undefined) ctx.addIssue({ code: 'custom', path: ['depthFt'], message: 'give depthM or depthFt, not both' });
    if (m.temperatureC === undefined && m.temperatureF === undefined)
      ctx.addIssue({ code: 'custom', path: ['temperatureC'], message: 'a measurement needs temperatureC or temperatureF' });
    if (m.temperatureC !== undefined && m.temperatureF !== undefined)
      ctx.addIssue({ code: 'custom', path: ['temperatureF'], message: 'give temperatureC or temperatureF, not both' });
  })
  .transform((m) => {
    const { depthFt, temperatureF, ...rest } = m;
    // 1 ft = 0.3048 m exactly (international foot); °C = (°F − 32)·5/9.
    const depthM = m.depthM ?? (depthFt as number) * 0.3048;
    const temperatureC = m.temperatureC ?? (((temperatureF as number) - 32) * 5) / 9;
    return { ...rest, depthM, temperatureC };
  })
  .refine((m) => m.depthM >= 0, { message: 'depth must be ≥ 0 (below the ground surface)', path: ['depthM'] });

export const wellProperties = z.looseObject({
  id: featureId,
  name: text.optional(),
  elevationM: z.number().optional(),
  measurements: z.array(wellMeasurement).min(1, 'a well needs at least one measurement').max(100000),
  conductivityColumn: z
    .array(
      z
        .object({ topM: z.number().min(0), bottomM: z.number(), conductivityWmK: z.number().gt(0) })
        .refine((c) => c.bottomM > c.topM, { message: 'bottomM must be below topM' }),
    )
    .optional(),
});
export type WellProperties = z.infer<typeof wellProperties>;

/** A region (polygon) with optional layer overrides for the thermal model. */
export const regionProperties = z.looseObject({
  id: featureId.optional(),
  name: text.optional(),
  layers: z.array(z.record(z.string(), z.unknown())).optional(),
});

const KIND_SPECS = {
  sites: { types: ['Point'], geometry: pointGeometry, properties: siteProperties },
  samples: { types: ['Point'], geometry: pointGeometry, properties: sampleProperties },
  faults: { types: ['LineString', 'MultiLineString'], geometry: z.union([lineStringGeometry, multiLineStringGeometry]), properties: faultProperties },
  wells: { types: ['Point'], geometry: pointGeometry, properties: wellProperties },
  regions: { types: ['Polygon', 'MultiPolygon'], geometry: z.union([polygonGeometry, multiPolygonGeometry]), properties: regionProperties },
} as const;

export type SiteCollection = FeatureCollection<PointGeometry, SiteProperties>;
export type SampleCollection = FeatureCollection<PointGeometry, SampleProperties>;
export type FaultCollection = FeatureCollection<LineGeometry, FaultProperties>;
export type WellCollection = FeatureCollection<PointGeometry, WellProperties>;
export type RegionCollection = FeatureCollection<PolygonGeometry, z.infer<typeof regionProperties>>;

export interface ParsedDataset {
  kind: DatasetKind;
  collection: FeatureCollection;
  warnings: string[];
}

function issuesToProblems(feature: number | string, prefix: string, error: z.ZodError): InputProblem[] {
  return error.issues.map((i) => ({ feature, field: [prefix, ...i.path.map(String)].filter(Boolean).join('.'), problem: i.message }));
}

/** Every [lon, lat] position of the features' geometries, with the feature it belongs to (for swappedLonLatError). */
function* positionsOf(features: unknown[], labels?: string[]): Generator<{ lon: number; lat: number; where: string }> {
  for (let i = 0; i < features.length; i++) {
    const g = (features[i] as { geometry?: { coordinates?: unknown } } | null)?.geometry;
    const where = labels?.[i] ?? `feature ${i}`;
    const stack: unknown[] = [g?.coordinates];
    while (stack.length > 0) {
      const x = stack.pop();
      if (!Array.isArray(x)) continue;
      if (x.length >= 2 && typeof x[0] === 'number' && typeof x[1] === 'number') yield { lon: x[0], lat: x[1], where };
      else for (const c of x) stack.push(c);
    }
  }
}

/** The features of a FeatureCollection (or a single Feature), refused when not one, empty or over `maxFeatures`. */
function collectionFeatures(kind: DatasetKind, input: unknown, maxFeatures: number): unknown[] {
  if (input === null || typeof input !== 'object' || Array.isArray(input)) {
    throw new InputError(
      'expected a GeoJSON FeatureCollection object',
      [{ problem: `got ${Array.isArray(input) ? 'an array' : typeof input}` }],
      'bad_geojson',
    );
  }
  const obj = input as Record<string, unknown>;
  let features: unknown[];
  if (obj.type === 'FeatureCollection') {
    if (!Array.isArray(obj.features))
      throw new InputError('FeatureCollection.features must be an array', [{ field: 'features', problem: 'missing or not an array' }], 'bad_geojson');
    features = obj.features;
  } else if (obj.type === 'Feature') {
    features = [obj];
  } else {
    throw new InputError(
      'expected a GeoJSON FeatureCollection',
      [{ field: 'type', problem: `expected "FeatureCollection", got ${JSON.stringify(obj.type ?? null)}` }],
      'bad_geojson',
    );
  }
  if (features.length === 0)
    throw new InputError(`the ${kind} collection is empty`, [{ field: 'features', problem: 'expected at least one feature' }], 'empty_dataset');
  if (features.length > maxFeatures) {
    throw new InputError(
      `too many features: ${features.length} (limit maxFeatures = ${maxFeatures})`,
      [{ field: 'features', problem: `at most ${maxFeatures} features per data set` }],
      'too_many_features',
    );
  }
  return features;
}

/** Each fault trace must have a length (a trace whose vertices all coincide has no strike). */
function faultTraceProblems(label: number | string, geometry: { type: string; coordinates: unknown }): InputProblem[] {
  const lines = geometry.type === 'LineString' ? [geometry.coordinates as number[][]] : (geometry.coordinates as number[][][]);
  const problems: InputProblem[] = [];
  for (const line of lines) {
    let length = 0;
    for (let k = 1; k < line.length; k++) length += Math.hypot(line[k][0] - line[k - 1][0], line[k][1] - line[k - 1][1]);
    if (!(length > 0)) problems.push({ feature: label, field: 'geometry.coordinates', problem: 'a fault trace has zero length' });
  }
  return problems;
}

/** A feature's properties with its id: `properties.id`, else the feature's own `id`, else made from its index (`made`). */
function propertiesWithId(
  kind: DatasetKind,
  feat: { id?: unknown; properties?: unknown },
  index: number,
): { rawProps: Record<string, unknown>; made: boolean } {
  const rawProps =
    feat.properties && typeof feat.properties === 'object' && !Array.isArray(feat.properties) ? { ...(feat.properties as Record<string, unknown>) } : {};
  if (rawProps.id === undefined || rawProps.id === null || rawProps.id === '') {
    if (typeof feat.id === 'string' || typeof feat.id === 'number') rawProps.id = feat.id;
    else if (kind !== 'regions') {
      rawProps.id = `${kind}-${index + 1}`;
      return { rawProps, made: true };
    }
  }
  return { rawProps, made: false };
}

/**
 * Validates a GeoJSON FeatureCollection (or a single Feature) of one kind. Each feature's problems are named by
 * its index and id; up to `maxProblems` are reported. Feature ids come from `properties.id`, else the feature's
 * own `id`, else its index (with a warning). Duplicate ids are an error: every later link (fault report, share
 * link, well → site) relies on them.
 */
export function parseFeatureCollection(
  kind: DatasetKind,
  input: unknown,
  opts: { maxFeatures?: number; maxProblems?: number; featureLabels?: string[] } = {},
): ParsedDataset {
  const maxProblems = opts.maxProblems ?? 50;
  const spec = KIND_SPECS[kind];
  const features = collectionFeatures(kind, input, opts.maxFeatures ?? 200_000);
  const swapped = swappedLonLatError(
    positionsOf(features, opts.featureLabels),
    opts.featureLabels !== undefined
      ? 'Check that the longitude column holds longitudes (east–west, -180 to 180) and the latitude column latitudes (north–south, -90 to 90).'
      : 'GeoJSON positions are [longitude, latitude] in that order (RFC 7946 §3.1.1).',
  );
  if (swapped) throw swapped;
  const problems: InputProblem[] = [];
  const warnings: string[] = [];
  const out: FeatureCollection['features'] = [];
  const seen = new Map<string, number>();
  let unnamed = 0;
  features.forEach((f, index) => {
    if (problems.length >= maxProblems) return;
    if (f === null || typeof f !== 'object' || (f as { type?: unknown }).type !== 'Feature') {
      problems.push({ feature: index, field: 'type', problem: 'expected a GeoJSON Feature' });
      return;
    }
    const feat = f as { id?: unknown; geometry?: unknown; properties?: unknown };
    const { rawProps, made } = propertiesWithId(kind, feat, index);
    if (made) unnamed++;
    const at = opts.featureLabels?.[index] ?? index;
    const label = typeof rawProps.id === 'string' || typeof rawProps.id === 'number' ? `${at} (${rawProps.id})` : at;
    const gType = feat.geometry && typeof feat.geometry === 'object' ? (feat.geometry as { type?: unknown }).type : undefined;
    if (!(spec.types as readonly unknown[]).includes(gType)) {
      problems.push({
        feature: label,
        field: 'geometry.type',
        problem: `${kind} need ${spec.types.join(' or ')} geometry, got ${gType === undefined ? 'none' : JSON.stringify(gType)}`,
      });
      return;
    }
    const g = spec.geometry.safeParse(feat.geometry);
    if (!g.success) problems.push(...issuesToProblems(label, 'geometry', g.error));
    const p = (spec.properties as z.ZodType).safeParse(rawProps);
    if (!p.success) problems.push(...issuesToProblems(label, 'properties', p.error));
    if (!g.success || !p.success) return;
    const props = p.data as Record<string, unknown>;
    const id = props.id as string | undefined;
    if (id !== undefined) {
      const prev = seen.get(id);
      if (prev !== undefined) {
        problems.push({ feature: label, field: 'properties.id', problem: `duplicate id "${id}" (also feature ${prev})` });
        return;
      }
      seen.set(id, index);
    }
    const geometry = g.data as { type: string; coordinates: unknown };
    if (kind === 'faults') problems.push(...faultTraceProblems(label, geometry));
    out.push({ type: 'Feature', id, geometry, properties: props });
  });
  if (problems.length > 0) {
    const more = problems.length >= maxProblems ? ` (first ${maxProblems} shown)` : '';
    throw new InputError(`${problems.length} problem${problems.length === 1 ? '' : 's'} in the ${kind} data${more}`, problems, 'invalid_features');
  }
  if (unnamed > 0) warnings.push(`${unnamed} feature${unnamed === 1 ? '' : 's'} had no id; ids were made from their position (${kind}-1, ${kind}-2, ...)`);
  return { kind, collection: { type: 'FeatureCollection', features: out }, warnings };
}

/** Property names with numeric values (also used to restore names a dBASE table cut to 10 characters). */
export const NUMERIC_FIELDS = new Set([
  'heatFlowMWm2',
  'uncertaintyMWm2',
  'gradientCPerKm',
  'conductivityWmK',
  'heatProductionUWm3',
  'peakTemperatureC',
  'peakPressureKbar',
  'dipDeg',
  'dipDirectionDeg',
  'elevationM',
  'depthM',
  'depthFt',
  'temperatureC',
  'temperatureF',
  'hoursSinceCirculation',
  'circulationHours',
  'intervalTopM',
  'intervalBottomM',
]);

/**
 * Turns point CSV (header with `longitude,latitude` or `lon,lat`, then the property names) into a GeoJSON
 * FeatureCollection of Points, then validates it as `kind`. Numeric property columns are parsed as numbers; an
 * empty cell is a missing value. Wells use one row per measurement (see `wellsFromCsvRows`).
 * Projected coordinates come as `x,y` or `easting,northing` columns with `toLonLat` (built by the caller from the
 * CRS the user names); without it, such columns, or longitude/latitude columns whose numbers lie beyond ±180/±90,
 * are refused with a message asking for the CRS (`crsHint` says how to give it).
 */
export function parsePointCsv(
  kind: DatasetKind,
  csvText: string,
  opts: { maxFeatures?: number; toLonLat?: (x: number, y: number) => [number, number]; crsHint?: string } = {},
): ParsedDataset {
  if (kind === 'faults' || kind === 'regions') {
    throw new InputError(`CSV holds points only; send ${kind} as GeoJSON`, [{ problem: `${kind} need line or polygon geometry` }], 'bad_csv');
  }
  const hint = opts.crsHint ?? 'give their CRS (EPSG:nnnn)';
  const { header, rows, lines, headerLine } = parseCsv(csvText);
  const { lonCol, latCol, projected } = dataSetCoordinateColumns(header, opts.toLonLat !== undefined, hint);
  if (!projected) checkDegreeColumns(header, rows, lines, lonCol, latCol, hint);
  const problems: InputProblem[] = [];
  const points = rows.map((r, k): CsvPoint => {
    const props = rowProperties(header, r, [lonCol, latCol], NUMERIC_FIELDS, (h, cell) =>
      problems.push({ feature: `line ${lines[k]}`, field: h, problem: `expected a number, got "${cell}"` }),
    );
    let lon = Number(r[lonCol]);
    let lat = Number(r[latCol]);
    if (r[lonCol].trim() === '' || !Number.isFinite(lon))
      problems.push({ feature: `line ${lines[k]}`, field: header[lonCol], problem: `expected a number, got "${r[lonCol]}"` });
    if (r[latCol].trim() === '' || !Number.isFinite(lat))
      problems.push({ feature: `line ${lines[k]}`, field: header[latCol], problem: `expected a number, got "${r[latCol]}"` });
    if (projected && Number.isFinite(lon) && Number.isFinite(lat)) [lon, lat] = opts.toLonLat!(lon, lat);
    return { lon, lat, props };
  });
  if (problems.length > 0)
    throw problemsError(
      `${problems.length} problem(s) in the CSV (lines as a spreadsheet numbers them, the header on line ${headerLine})`,
      problems,
      'invalid_features',
    );
  // Each feature is labelled by its CSV line in later messages (a well by its first line).
  const { features, featureLabels } =
    kind === 'wells'
      ? wellFeaturesFromRows(points, lines)
      : {
          features: points.map((p) => ({ type: 'Feature', geometry: { type: 'Point', coordinates: [p.lon, p.lat] }, properties: p.props })),
          featureLabels: lines.map((l) => `line ${l}`),
        };
  return parseFeatureCollection(kind, { type: 'FeatureCollection', features }, { ...opts, featureLabels });
}
