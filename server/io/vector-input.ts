/**
 * Vector inputs in the formats GIS users hold, turned into GeoJSON (RFC 7946, WGS 84 longitude/latitude) for the
 * validators of shared/schema: GeoJSON as is, GeoPackage (server/io/geopackage.ts), zipped Shapefile
 * (.shp/.shx/.dbf/.prj, ESRI Shapefile Technical Description 1998, read by shpjs; the .prj is honoured and required).
 * CSV stays text (its columns depend on the data set kind) and is parsed by shared/schema with the CRS given here.
 * Every error is an InputError naming the file, the layer and the problem.
 */
import shp from 'shpjs';
import { InputError } from '../../shared/errors.ts';
import { readGeoPackage, type GeoJsonCollection } from './geopackage.ts';
import { NUMERIC_FIELDS, parseFeatureCollection, parsePointCsv, type DatasetKind, type ParsedDataset } from '../../shared/schema/features.ts';
import { converter, loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';

/** dBASE III field names hold at most 10 characters: the project's longer property names, restored from their cut. */
const DBF_CUT = new Map([...NUMERIC_FIELDS, 'dipDirectionDeg'].filter((n) => n.length > 10).map((n) => [n.slice(0, 10), n]));

export type VectorFormat = 'geojson' | 'csv' | 'gpkg' | 'shapefile';

/** Media types of uploads, by format. */
export const VECTOR_MEDIA_TYPES: Record<VectorFormat, string[]> = {
  geojson: ['application/geo+json', 'application/json'],
  csv: ['text/csv'],
  gpkg: ['application/geopackage+sqlite3', 'application/x-sqlite3', 'application/vnd.sqlite3'],
  shapefile: ['application/zip', 'application/x-zip-compressed'],
};

export function formatFromMediaType(type: string): VectorFormat | null {
  for (const [f, types] of Object.entries(VECTOR_MEDIA_TYPES)) if (types.includes(type)) return f as VectorFormat;
  return null;
}

/** The format of a file by its name (.geojson/.json, .csv, .gpkg, .zip/.shz). */
export function formatFromPath(path: string): VectorFormat {
  const m = /\.([a-z]+)$/i.exec(path);
  switch (m?.[1].toLowerCase()) {
    case 'csv':
    case 'txt':
      return 'csv';
    case 'gpkg':
      return 'gpkg';
    case 'zip':
    case 'shz':
      return 'shapefile';
    case 'shp':
      throw new InputError(
        `${path}: give the Shapefile as one .zip holding its .shp, .shx, .dbf and .prj`,
        [{ feature: path, problem: 'expected a zipped Shapefile' }],
        'bad_shapefile',
      );
    default:
      return 'geojson';
  }
}

/** File names in a zip archive, from its central directory (PKWARE APPNOTE 6.3 §4.3.12, §4.3.16). */
export function zipEntryNames(bytes: Uint8Array): string[] {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let eocd = -1;
  for (let i = bytes.length - 22; i >= Math.max(0, bytes.length - 65557); i--) {
    if (dv.getUint32(i, true) === 0x06054b50) {
      eocd = i;
      break;
    }
  }
  if (eocd < 0) throw new Error('not a zip archive (no end of central directory)');
  const count = dv.getUint16(eocd + 10, true);
  let at = dv.getUint32(eocd + 16, true);
  const names: string[] = [];
  const dec = new TextDecoder();
  for (let k = 0; k < count; k++) {
    if (at + 46 > bytes.length || dv.getUint32(at, true) !== 0x02014b50) throw new Error('corrupt zip central directory');
    const n = dv.getUint16(at + 28, true),
      x = dv.getUint16(at + 30, true),
      c = dv.getUint16(at + 32, true);
    names.push(dec.decode(bytes.subarray(at + 46, at + 46 + n)));
    at += 46 + n + x + c;
  }
  return names;
}

function shpError(source: string, message: string, problem: string, layer?: string, code = 'bad_shapefile'): InputError {
  return new InputError(
    `${source}${layer ? `, layer "${layer}"` : ''}: ${message}`,
    [{ feature: source, ...(layer ? { field: `layer ${layer}` } : {}), problem }],
    code,
  );
}

/**
 * Reads one Shapefile of a zip (chosen by `layer`, its name without extension, when there are several) as GeoJSON
 * in WGS 84, reprojected from its .prj.
 */
export async function readZippedShapefile(
  bytes: Uint8Array,
  opts: { source?: string; layer?: string } = {},
): Promise<{ collection: GeoJsonCollection; layer: string; sourceCrs: string; layers: string[] }> {
  const source = opts.source ?? 'Shapefile';
  let names: string[];
  try {
    names = zipEntryNames(bytes);
  } catch (e) {
    throw shpError(source, 'is not a readable zip archive', e instanceof Error ? e.message : String(e));
  }
  const base = (n: string) => n.replace(/\.[^./]+$/, '');
  const shps = names.filter((n) => /\.shp$/i.test(n) && !n.startsWith('__MACOSX/')).map(base);
  if (shps.length === 0)
    throw shpError(
      source,
      'holds no Shapefile',
      `expected a .shp (with .shx, .dbf and .prj) in the zip; it holds: ${names.join(', ') || 'nothing'}`,
      undefined,
      'no_features',
    );
  const short = (n: string) => n.replace(/^.*\//, '');
  let layer: string;
  if (opts.layer !== undefined) {
    const hit = shps.find((n) => n === opts.layer || short(n) === opts.layer);
    if (hit === undefined) throw shpError(source, `has no layer "${opts.layer}"`, `layers: ${shps.map(short).join(', ')}`, undefined, 'unknown_layer');
    layer = hit;
  } else if (shps.length > 1) {
    throw shpError(
      source,
      `holds ${shps.length} Shapefiles: choose one (layer=NAME, --layer NAME)`,
      `layers: ${shps.map(short).join(', ')}`,
      undefined,
      'choose_layer',
    );
  } else {
    layer = shps[0];
  }
  const prj = names.find((n) => n.toLowerCase() === `${layer}.prj`.toLowerCase());
  if (prj === undefined)
    throw shpError(
      source,
      'has no .prj (coordinate reference system)',
      `add ${short(layer)}.prj to the zip: without it the coordinates cannot be placed`,
      short(layer),
      'no_crs',
    );
  let parsed: unknown;
  try {
    parsed = await shp(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength));
  } catch (e) {
    throw shpError(source, 'cannot be read as a Shapefile', e instanceof Error ? e.message : String(e), short(layer));
  }
  const all = (Array.isArray(parsed) ? parsed : [parsed]) as (GeoJsonCollection & { fileName?: string })[];
  const got = all.find((c) => c.fileName === layer) ?? (all.length === 1 ? all[0] : undefined);
  if (!got) throw shpError(source, 'cannot be read as a Shapefile', 'the layer was not decoded (missing .shx or .dbf?)', short(layer));
  const restore = (p: Record<string, unknown> | null) => Object.fromEntries(Object.entries(p ?? {}).map(([k, v]) => [DBF_CUT.get(k) ?? k, v]));
  const collection: GeoJsonCollection = {
    type: 'FeatureCollection',
    features: got.features.map((f) => ({ type: 'Feature', geometry: f.geometry, properties: restore(f.properties) })),
  };
  return { collection, layer: short(layer), sourceCrs: 'from .prj', layers: shps.map(short) };
}

/**
 * Reads a vector file (GeoJSON, GeoPackage or zipped Shapefile) as a GeoJSON FeatureCollection in WGS 84.
 * `maxBytes` refuses larger inputs before parsing (413).
 */
export async function readVectorFile(
  bytes: Uint8Array,
  opts: { format: Exclude<VectorFormat, 'csv'>; source: string; layer?: string; maxBytes?: number; maxFeatures?: number },
): Promise<{ collection: unknown; layer: string | null; sourceCrs: string }> {
  if (opts.maxBytes !== undefined && bytes.length > opts.maxBytes) {
    throw new InputError(
      `${opts.source} is ${bytes.length} bytes (limit ${opts.maxBytes})`,
      [{ feature: opts.source, problem: `at most ${opts.maxBytes} bytes` }],
      'too_large',
    );
  }
  if (opts.format === 'gpkg') {
    const r = await readGeoPackage(bytes, { source: opts.source, layer: opts.layer, maxFeatures: opts.maxFeatures });
    return { collection: r.collection, layer: r.layer, sourceCrs: r.sourceCrs };
  }
  if (opts.format === 'shapefile') {
    const r = await readZippedShapefile(bytes, { source: opts.source, layer: opts.layer });
    return { collection: r.collection, layer: r.layer, sourceCrs: r.sourceCrs };
  }
  let v: unknown;
  try {
    v = JSON.parse(new TextDecoder().decode(bytes));
  } catch (e) {
    throw new InputError(`${opts.source} is not valid JSON`, [{ feature: opts.source, problem: e instanceof Error ? e.message : String(e) }], 'bad_json');
  }
  return { collection: v, layer: null, sourceCrs: 'EPSG:4326' };
}

/** Runs a validator on a converted file, naming the file and layer in its message. */
export function inFileLayer<T>(source: string, layer: string | null, f: () => T): T {
  try {
    return f();
  } catch (e) {
    if (e instanceof InputError) {
      const where = `${source}${layer ? `, layer "${layer}"` : ''}`;
      throw new InputError(
        `${where}: ${e.message}`,
        e.details.map((d) => ({ feature: d.feature ?? source, ...d })),
        e.code,
      );
    }
    throw e;
  }
}

/**
 * A data set file named on the command line, by extension: GeoJSON, GeoPackage (.gpkg, `layer` to choose), zipped
 * Shapefile (.zip), or point CSV (longitude,latitude; or x,y / easting,northing with `crs`, e.g. --points-crs), read
 * and validated as `kind`, in WGS 84.
 */
export async function readDatasetFile(
  path: string,
  bytes: Uint8Array,
  kind: DatasetKind,
  opts: { layer?: string; crs?: string; maxFeatures?: number } = {},
): Promise<ParsedDataset & { layer: string | null; sourceCrs: string }> {
  const format = formatFromPath(path);
  if (format === 'csv') {
    let toLonLat: ((x: number, y: number) => [number, number]) | undefined;
    if (opts.crs !== undefined) {
      const conv = converter(await loadCrsDefinition(opts.crs), WGS84_DEF);
      toLonLat = (x, y) => conv.forward([x, y]);
    }
    const text = new TextDecoder().decode(bytes);
    const parsed = inFileLayer(path, null, () =>
      parsePointCsv(kind, text, { maxFeatures: opts.maxFeatures, toLonLat, crsHint: 'give their CRS with --points-crs EPSG:nnnn' }),
    );
    return { ...parsed, layer: null, sourceCrs: opts.crs ?? 'EPSG:4326' };
  }
  const r = await readVectorFile(bytes, { format, source: path, layer: opts.layer, maxFeatures: opts.maxFeatures });
  const parsed = inFileLayer(path, r.layer, () => parseFeatureCollection(kind, r.collection, { maxFeatures: opts.maxFeatures }));
  return { ...parsed, layer: r.layer, sourceCrs: r.sourceCrs };
}
