import { z } from 'zod';
import { swappedLonLatError } from './lonlat-order.ts';
import { InputError, problemsError, type InputProblem } from '../errors.ts';
import { parseCsv } from '../io/csv.ts';
import { coordinateColumns, rowProperties } from './csv-points.ts';
import { parseFeatureCollection } from './features.ts';
import { collectionFeatures, pointGeometry, lonLat } from './geojson.ts';
import { VARIOGRAM_MODELS, type VariogramModel, type VariogramModelName } from '../interp/variogram.ts';
import type { PointData } from '../interp/interpolate.ts';
import { TREND_KINDS, type DriftKind, type TrendKind } from '../interp/drift.ts';
import { DIRECTIONS_NEED_AUTO, directionsWithoutAuto } from '../interp/anisotropy-select.ts';

/** Contracts of the interpolation engine's inputs (CLI and HTTP validate with these). */

export const variogramModelSchema = z.object({
  model: z.enum(VARIOGRAM_MODELS),
  nugget: z.number().finite().min(0, 'nugget must be ≥ 0'),
  partialSill: z.number().finite().gt(0, 'partial sill must be > 0'),
  rangeKm: z.number().finite().gt(0, 'range must be > 0 km'),
});

export const anisotropySchema = z.object({
  angleDeg: z.number().finite(),
  ratio: z.number().gt(0, 'ratio must be in (0, 1]').max(1, 'ratio must be in (0, 1]'),
});

/**
 * The direction classes of the directional semivariograms `anisotropy: 'auto'` is estimated from
 * (shared/interp/directional-variogram.ts, which holds the defaults).
 */
export const directionsSchema = z
  .strictObject({
    azimuthsDeg: z
      .array(z.number().min(0, 'an azimuth must be ≥ 0°').lt(180, 'an azimuth must be < 180° (a direction and its opposite are one class)'))
      .min(2, 'at least 2 azimuths')
      .max(36, 'at most 36 azimuths')
      .refine((a) => new Set(a).size === a.length, 'the azimuths must be distinct')
      .optional()
      .describe('azimuths of the direction classes, degrees clockwise from north, each in [0, 180); default 0, 45, 90, 135'),
    toleranceDeg: z.number().gt(0).max(90).optional().describe('half-width of each class in angle, degrees, (0, 90]; default 90 / the number of azimuths'),
    bandwidthKm: z.number().gt(0).max(1e5).optional().describe("largest distance of a pair's lag vector from its class's line, km; default none"),
  })
  .describe("with anisotropy 'auto': the direction classes of the directional semivariograms it is estimated from");

/** Options of an interpolation request (HTTP body / library call), units in the names. */
/** A run's drift from a grid data set: `drift:<datasetId>` or `auto:drift:<datasetId>`. */
export const DRIFT_DATASET_FORM = /^(auto:)?drift:([A-Za-z0-9_-]{1,64})$/;

/**
 * A run's `interpolation.trend` as the engine takes it: the drift kind (a grid data set's form gives 'external', or
 * 'auto' with it among the candidates) and the grid data set's id (null when the trend names none).
 */
export function runTrend(trend: string | undefined): { trend: DriftKind | 'auto' | undefined; driftDataset: string | null } {
  const m = trend === undefined ? null : DRIFT_DATASET_FORM.exec(trend);
  if (m === null) return { trend: trend as DriftKind | 'auto' | undefined, driftDataset: null };
  return { trend: m[1] ? 'auto' : 'external', driftDataset: m[2] };
}

export const interpolationOptionsSchema = z
  .object({
    method: z.enum(['idw', 'kriging']),
    field: z.string().min(1).max(100).default('heatFlowMWm2'),
    neighbors: z.union([z.number().int().min(1), z.literal('all')]).optional(),
    radiusKm: z.number().gt(0).optional(),
    power: z.number().gt(0).max(20).optional(),
    useQuality: z.boolean().optional(),
    qualityWeights: z
      .object({ high: z.number().min(0), medium: z.number().min(0), low: z.number().min(0) })
      .partial()
      .optional(),
    variogram: z.union([z.literal('auto'), z.enum(VARIOGRAM_MODELS), variogramModelSchema]).optional(),
    lagKm: z.number().gt(0).optional(),
    maxLagKm: z.number().gt(0).optional(),
    /** Geometric anisotropy for kriging: { angleDeg (major-axis azimuth, ° clockwise from north), ratio }, null (none), or 'auto' (estimated). */
    anisotropy: z
      .union([anisotropySchema, z.literal('auto')])
      .nullable()
      .optional(),
    directions: directionsSchema.optional(),
    /**
     * Drift of the mean for kriging: none (ordinary kriging), linear or quadratic in the coordinates (universal
     * kriging; the variogram is fitted on least-squares residuals), auto (the lowest leave-one-out RMSE), or in a run
     * `drift:<datasetId>` (kriging with an external drift whose covariate is the project's grid data set) and
     * `auto:drift:<datasetId>` (auto comparing that drift too).
     */
    trend: z
      .union([
        z.enum([...TREND_KINDS, 'auto']),
        z.string().regex(DRIFT_DATASET_FORM, 'expected none, linear, quadratic, auto, drift:<datasetId> or auto:drift:<datasetId>'),
      ])
      .optional(),
    /**
     * Cell declustering of the histogram the heat-flow simulation's normal-score transform reproduces: none (default),
     * auto (the cell size of the smallest declustered mean) or a cell side in km.
     */
    decluster: z.union([z.enum(['none', 'auto']), z.number().gt(0).max(1e5)]).optional(),
    measurementError: z.boolean().optional(),
    maxDistanceKm: z.number().gt(0).nullable().optional(),
    bbox: z.tuple([z.number(), z.number(), z.number(), z.number()]).optional(),
    cellKm: z.number().gt(0).optional(),
    size: z.tuple([z.number().int().min(1), z.number().int().min(1)]).optional(),
    crs: z.string().min(1).max(2000).optional(),
    sd: z.boolean().optional(),
    crossValidation: z.boolean().optional(),
  })
  .superRefine((o, ctx) => {
    for (const k of directionsWithoutAuto(o.anisotropy, o.directions)) ctx.addIssue({ code: 'custom', path: ['directions', k], message: DIRECTIONS_NEED_AUTO });
  });
export type InterpolationRequest = z.infer<typeof interpolationOptionsSchema>;

/**
 * Parses `--variogram`: `auto`, a model name (fitted), or `MODEL:NUGGET,PARTIAL_SILL,RANGE_KM` (fixed), e.g.
 * `exponential:0,10,10`.
 */
export function parseVariogramOption(raw: string | undefined): 'auto' | VariogramModelName | VariogramModel {
  if (raw === undefined || raw === 'auto') return 'auto';
  const m = /^([a-z]+)(?::(.*))?$/i.exec(raw.trim());
  const name = m?.[1]?.toLowerCase();
  if (!m || !(VARIOGRAM_MODELS as readonly string[]).includes(name ?? '')) {
    throw new InputError(
      `variogram: unknown model in "${raw}"`,
      [{ field: 'variogram', problem: `expected auto, ${VARIOGRAM_MODELS.join(', ')}, or MODEL:NUGGET,PARTIAL_SILL,RANGE_KM` }],
      'bad_option',
    );
  }
  if (m[2] === undefined) return name as VariogramModelName;
  const parts = m[2].split(',').map((s) => Number(s.trim()));
  const r = variogramModelSchema.safeParse({ model: name, nugget: parts[0], partialSill: parts[1], rangeKm: parts[2] });
  if (parts.length !== 3 || !r.success) {
    throw new InputError(
      `variogram: expected MODEL:NUGGET,PARTIAL_SILL,RANGE_KM, got "${raw}"`,
      [{ field: 'variogram', problem: r.success ? 'expected three numbers' : r.error.issues.map((i) => i.message).join('; ') }],
      'bad_option',
    );
  }
  return r.data;
}

/** Every form `--trend` accepts, for messages (the drift-grid forms are read by server/cli/drift-input.ts). */
export const TREND_FORMS = 'none|linear|quadratic|auto|drift:G.tif|auto:drift:G.tif';

/**
 * Parses `--trend none|linear|quadratic|auto` (default none). The drift-grid forms (`drift:G.tif`,
 * `auto:drift:G.tif`) are recognised before this by the command line, which reads the grid; anything else is an
 * error listing every accepted form.
 */
export function parseTrendOption(raw: string | undefined): TrendKind | 'auto' {
  if (raw === undefined) return 'none';
  const t = raw.trim().toLowerCase();
  if (t === 'auto' || (TREND_KINDS as readonly string[]).includes(t)) return t as TrendKind | 'auto';
  throw new InputError(
    `--trend must be one of ${TREND_FORMS} (G.tif: a single-band GeoTIFF covariate, e.g. sediment thickness), got "${raw}"`,
    [{ field: 'trend', problem: `expected ${TREND_FORMS}` }],
    'bad_option',
  );
}

/**
 * Parses `--anisotropy ANGLE_DEG,RATIO|auto|none`: the major axis's azimuth (degrees clockwise from north) and the
 * minor/major range ratio; `auto` estimates them (shared/interp/anisotropy.ts); `none` (the default) is isotropic.
 */
export function parseAnisotropyOption(raw: string | undefined): { angleDeg: number; ratio: number } | 'auto' | null {
  if (raw === undefined || raw.trim().toLowerCase() === 'none') return null;
  if (raw.trim().toLowerCase() === 'auto') return 'auto';
  const p = raw.split(',').map((s) => Number(s.trim()));
  const r = anisotropySchema.safeParse({ angleDeg: p[0], ratio: p[1] });
  if (p.length !== 2 || !r.success)
    throw new InputError(
      `anisotropy: expected ANGLE_DEG,RATIO with ratio in (0, 1], auto or none, got "${raw}"`,
      [{ field: 'anisotropy', problem: 'e.g. 30,0.5 (major axis azimuth 30°, minor range half the major), auto (estimated) or none' }],
      'bad_option',
    );
  return r.data;
}

const genericProps = z.looseObject({
  id: z
    .union([z.string().min(1).max(200), z.number().finite()])
    .transform(String)
    .optional(),
});

/** Heat-flow points validated as sites (shared/schema/features.ts), with their quality and uncertainty. */
function pointsFromSites(input: unknown): { points: PointData; warnings: string[] } {
  const ds = parseFeatureCollection('sites', input);
  const f = ds.collection.features as { geometry: { coordinates: number[] }; properties: Record<string, unknown> }[];
  return {
    points: {
      ids: f.map((x) => String(x.properties.id)),
      lon: Float64Array.from(f, (x) => x.geometry.coordinates[0]),
      lat: Float64Array.from(f, (x) => x.geometry.coordinates[1]),
      values: Float64Array.from(f, (x) => x.properties.heatFlowMWm2 as number),
      quality: f.map((x) => x.properties.quality as string | undefined),
      errorSd: Float64Array.from(f, (x) => (typeof x.properties.uncertaintyMWm2 === 'number' ? x.properties.uncertaintyMWm2 : NaN)),
    },
    warnings: ds.warnings,
  };
}

/** The features of a FeatureCollection, refused when not one or empty. */
function nonEmptyFeatures(input: unknown, src: string): unknown[] {
  const feats = collectionFeatures(input, `${src}: expected a GeoJSON FeatureCollection`, 'expected "FeatureCollection" with a features array');
  if (feats.length === 0)
    throw new InputError(`${src}: the collection is empty`, [{ field: 'features', problem: 'expected at least one feature' }], 'empty_dataset');
  return feats;
}

/**
 * Features without the field: an error naming them, or with `skipMissing` a warning naming them (an error when
 * no feature is left, `kept` being how many have the field).
 */
function missingFieldWarnings(missing: string[], kept: number, field: string, src: string, skipMissing: boolean | undefined): string[] {
  const warnings: string[] = [];
  if (missing.length > 0) {
    const names = `${missing.slice(0, 20).join(', ')}${missing.length > 20 ? `, ... (${missing.length} in all)` : ''}`;
    if (!skipMissing) {
      throw new InputError(
        `${missing.length} feature(s) in ${src} have no "${field}": ${names}`,
        missing.slice(0, 50).map((m) => ({ feature: m, field: `properties.${field}`, problem: 'missing (skipMissing leaves such features out)' })),
        'missing_field',
      );
    }
    if (kept === 0)
      throw new InputError(
        `no feature in ${src} has a "${field}" value`,
        [{ field: `properties.${field}`, problem: 'missing on every feature' }],
        'missing_field',
      );
    warnings.push(`${missing.length} feature(s) without "${field}" were left out: ${names}`);
  }
  return warnings;
}

/**
 * Interpolation points from a parsed GeoJSON object. For `heatFlowMWm2` the features are validated as heat-flow
 * sites (shared/schema/features.ts); for any other numeric property, generically: Point geometry, an id, and the
 * field as a finite number. Features missing the field are an error naming them, or, with `skipMissing`, a
 * warning naming them (an error if none is left).
 */
export function pointsFromGeoJson(
  input: unknown,
  field: string,
  opts: { skipMissing?: boolean; source?: string; errorField?: string } = {},
): { points: PointData; warnings: string[] } {
  const src = opts.source ?? 'points';
  if (field === 'heatFlowMWm2' && (opts.errorField === undefined || opts.errorField === 'uncertaintyMWm2')) return pointsFromSites(input);
  const feats = nonEmptyFeatures(input, src);
  const problems: InputProblem[] = [];
  const missing: string[] = [];
  const ids: string[] = [],
    lon: number[] = [],
    lat: number[] = [],
    values: number[] = [],
    quality: (string | undefined)[] = [],
    errSd: number[] = [];
  const seen = new Set<string>();
  const errField = opts.errorField ?? `${field}Sd`;
  feats.forEach((f, i) => {
    if (problems.length >= 50) return;
    const feat = (f ?? {}) as { type?: unknown; id?: unknown; geometry?: unknown; properties?: unknown };
    const props = (feat.properties && typeof feat.properties === 'object' ? feat.properties : {}) as Record<string, unknown>;
    const pr = genericProps.safeParse(props);
    const id =
      pr.success && pr.data.id !== undefined ? pr.data.id : typeof feat.id === 'string' || typeof feat.id === 'number' ? String(feat.id) : `point-${i + 1}`;
    const label = `${i} (${id})`;
    if (feat.type !== 'Feature') {
      problems.push({ feature: i, field: 'type', problem: 'expected a GeoJSON Feature' });
      return;
    }
    const g = pointGeometry.safeParse(feat.geometry);
    if (!g.success) {
      problems.push(...g.error.issues.map((e) => ({ feature: label, field: ['geometry', ...e.path.map(String)].join('.'), problem: e.message })));
      return;
    }
    if (seen.has(id)) {
      problems.push({ feature: label, field: 'properties.id', problem: `duplicate id "${id}"` });
      return;
    }
    seen.add(id);
    const v = props[field];
    if (v === undefined || v === null || v === '') {
      missing.push(id);
      return;
    }
    if (typeof v !== 'number' || !Number.isFinite(v)) {
      problems.push({ feature: label, field: `properties.${field}`, problem: `expected a finite number, got ${JSON.stringify(v)}` });
      return;
    }
    const e = props[errField];
    if (e !== undefined && !(typeof e === 'number' && e >= 0 && Number.isFinite(e))) {
      problems.push({ feature: label, field: `properties.${errField}`, problem: 'expected a finite number ≥ 0' });
      return;
    }
    ids.push(id);
    lon.push(g.data.coordinates[0]);
    lat.push(g.data.coordinates[1]);
    values.push(v);
    quality.push(typeof props.quality === 'string' ? props.quality : undefined);
    errSd.push(typeof e === 'number' ? e : NaN);
  });
  if (problems.length > 0) throw new InputError(`${problems.length} problem(s) in ${src}`, problems, 'invalid_features');
  const warnings = missingFieldWarnings(missing, ids.length, field, src, opts.skipMissing);
  return {
    points: { ids, lon: Float64Array.from(lon), lat: Float64Array.from(lat), values: Float64Array.from(values), quality, errorSd: Float64Array.from(errSd) },
    warnings,
  };
}

/** The points CSV's coordinate columns: longitude,latitude, else x,y (easting,northing) when `canProject`. */
function pointsCsvColumns(header: string[], src: string, canProject: boolean): [number, number, boolean] {
  const cols = coordinateColumns(header);
  if (cols.lon >= 0 && cols.lat >= 0) return [cols.lon, cols.lat, false];
  if (cols.x < 0 || cols.y < 0)
    throw new InputError(
      `${src}: CSV header needs longitude,latitude (or lon,lat), or x,y with their CRS (pointsCrs)`,
      [{ field: 'header', problem: `header is: ${header.join(',')}` }],
      'malformed_csv',
    );
  if (!canProject)
    throw new InputError(
      `${src}: CSV has projected x,y columns: give their CRS (pointsCrs, EPSG:nnnn)`,
      [{ field: 'pointsCrs', problem: 'missing' }],
      'bad_option',
    );
  return [cols.x, cols.y, true];
}

/**
 * Points from CSV: a header with `longitude,latitude` (or `lon,lat`), or with projected `x,y` (or
 * `easting,northing`) converted to lon/lat by `toLonLat` (the caller builds it from `--points-crs`); the field and
 * the known numeric columns as numbers (an unparsable number is an error naming row and column).
 */
export function pointsFromCsv(
  text: string,
  field: string,
  opts: { skipMissing?: boolean; source?: string; errorField?: string; toLonLat?: (x: number, y: number) => [number, number] } = {},
): { points: PointData; warnings: string[]; projectedColumns: boolean } {
  const src = opts.source ?? 'points';
  const { header, rows, lines } = parseCsv(text);
  const [xc, yc, projected] = pointsCsvColumns(header, src, opts.toLonLat !== undefined);
  if (!projected) {
    const swapped = swappedLonLatError(
      rows.map((r, k) => ({ lon: Number(r[xc]), lat: Number(r[yc]), where: `${src} line ${lines[k]}` })),
      `Check that the "${header[xc]}" column holds longitudes (east–west, -180 to 180) and "${header[yc]}" latitudes (north–south, -90 to 90).`,
      { lon: header[xc], lat: header[yc] },
    );
    if (swapped) throw swapped;
  }
  const numeric = new Set([
    field,
    'heatFlowMWm2',
    'uncertaintyMWm2',
    `${field}Sd`,
    ...(opts.errorField !== undefined ? [opts.errorField] : []),
    'gradientCPerKm',
    'conductivityWmK',
    'heatProductionUWm3',
  ]);
  const problems: InputProblem[] = [];
  const features = rows.map((r, k) => {
    const props = rowProperties(header, r, [xc, yc], numeric, (h, cell) =>
      problems.push({ feature: `line ${lines[k]}`, field: h, problem: `expected a finite number, got "${cell}"` }),
    );
    const a = Number(r[xc]),
      b = Number(r[yc]);
    if (r[xc].trim() === '' || !Number.isFinite(a) || r[yc].trim() === '' || !Number.isFinite(b)) {
      problems.push({
        feature: `line ${lines[k]}`,
        field: projected ? 'x,y' : 'longitude,latitude',
        problem: `expected two numbers, got "${r[xc]}", "${r[yc]}"`,
      });
    }
    const p = projected ? opts.toLonLat!(a, b) : [a, b];
    if (projected && !lonLat.safeParse(p).success)
      problems.push({ feature: `line ${lines[k]}`, field: 'x,y', problem: `outside the CRS's valid area (gives ${p[0]}, ${p[1]})` });
    return { type: 'Feature', geometry: { type: 'Point', coordinates: p }, properties: props };
  });
  if (problems.length > 0)
    throw problemsError(
      `${problems.length} problem(s) in ${src} (CSV lines as a spreadsheet numbers them, the header is line 1 unless comment lines precede it)`,
      problems,
      'invalid_features',
    );
  const r = pointsFromGeoJson({ type: 'FeatureCollection', features }, field, opts);
  return { ...r, projectedColumns: projected };
}
