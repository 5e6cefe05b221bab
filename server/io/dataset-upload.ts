/**
 * The body of a data set upload turned into what the store keeps: GeoJSON, point CSV (lon/lat, or projected x,y with
 * a CRS), a GeoPackage or a zipped Shapefile (reprojected to WGS 84 from the file's own CRS), or a thermal model
 * JSON, validated and canonicalized, with its SHA-256 and bounding box. A large body is parsed on a worker thread
 * (server/workers/compute-worker.ts, task `upload`), a small one where it arrives; both run this one function.
 */
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, parsePointCsv, type DatasetKind } from '../../shared/schema/features.ts';
import { parseModelDocument } from '../../shared/products/model-input.ts';
import { converter, loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { parseJsonText } from '../routes/context.ts';
import { geoJsonBbox } from '../store/bbox.ts';
import { sha256Hex } from './export.ts';
import { inFileLayer, readVectorFile, type VectorFormat } from './vector-input.ts';

/** Bodies up to this many bytes are parsed on the request thread (a few milliseconds); larger ones on a worker. */
export const INLINE_UPLOAD_BYTES = 256 * 1024;

export interface UploadInput {
  kind: DatasetKind | 'model';
  format: VectorFormat;
  bytes: Uint8Array;
  /** EPSG:nnnn of a CSV's x,y / easting,northing columns. */
  crs?: string;
  /** The GeoPackage table or the Shapefile in a zip. */
  layer?: string;
  /** The file as error messages name it. */
  source: string;
  maxBytes: number;
  maxFeatures: number;
}

export interface ParsedUpload {
  /** A feature kind, a thermal model, or a covariate grid (server/io/grid-dataset.ts). */
  kind: DatasetKind | 'model' | 'grid';
  /**
   * Canonical stored body as UTF-8: the validated GeoJSON, or the model without its descriptive name. Bytes, not a
   * string, so that a worker thread can move a large body to the request thread and on to the store's writer
   * thread without a copy (the view spans its whole buffer).
   */
  body: Uint8Array;
  featureCount: number;
  warnings: string[];
  /** The model's own `name` (a model upload) or the file's layer, offered as the data set's name when none is given. */
  suggestedName: string | null;
  /** SHA-256 (hex) of `body`, the content the store de-duplicates by. */
  contentHash: string;
  /** [west, south, east, north] of the body's positions, degrees; null for a model or a body without positions. */
  bbox: [number, number, number, number] | null;
}

const notJsonModel = () =>
  new InputError(
    'a thermal model is JSON: send it as application/json',
    [{ field: 'content-type', problem: 'expected application/json' }],
    'unsupported_media_type',
  );

const emptyBody = () => new InputError('the request body is empty', [{ field: '(body)', problem: 'empty' }], 'empty_body');

/** UTF-8 of `text` in a buffer of its own (never a slice of Node's shared pool, so it can be transferred). */
export function utf8(text: string): Uint8Array {
  return new TextEncoder().encode(text);
}

/** A validated collection as the stored body, with its content hash and bounding box. */
function finish(
  kind: DatasetKind,
  parsed: { collection: { features: unknown[] }; warnings: string[] },
  extra: { warnings?: string[]; suggestedName?: string | null } = {},
): ParsedUpload {
  const body = utf8(JSON.stringify(parsed.collection));
  return {
    kind,
    body,
    featureCount: parsed.collection.features.length,
    warnings: extra.warnings ?? parsed.warnings,
    suggestedName: extra.suggestedName ?? null,
    contentHash: sha256Hex(body),
    bbox: geoJsonBbox(parsed.collection),
  };
}

/** Validates and canonicalizes an upload (InputError 400/413/415/422 naming the file, layer and problem). */
export async function parseUploadBytes(u: UploadInput): Promise<ParsedUpload> {
  if (u.format === 'gpkg' || u.format === 'shapefile') {
    if (u.kind === 'model') throw notJsonModel();
    if (u.bytes.length === 0) throw emptyBody();
    const kind = u.kind;
    const r = await readVectorFile(u.bytes, { format: u.format, source: u.source, layer: u.layer, maxBytes: u.maxBytes, maxFeatures: u.maxFeatures });
    const parsed = inFileLayer(u.source, r.layer, () => parseFeatureCollection(kind, r.collection, { maxFeatures: u.maxFeatures }));
    const where = `${u.source}${r.layer ? `, layer "${r.layer}"` : ''}`;
    const warnings =
      r.sourceCrs === 'EPSG:4326' ? parsed.warnings : [`${where}: reprojected from ${r.sourceCrs} to WGS 84 longitude/latitude`, ...parsed.warnings];
    return finish(kind, parsed, { warnings, suggestedName: r.layer });
  }
  const text = new TextDecoder().decode(u.bytes);
  if (text.trim() === '') throw emptyBody();
  if (u.kind === 'model') {
    if (u.format !== 'geojson') throw notJsonModel();
    const { model, name } = parseModelDocument(parseJsonText(text), 'model');
    // The name is the data set's (editable per project), not part of the content: two uploads of the same layers
    // under different names are one stored model, and a renamed model never carries its old name into exports.
    const { name: _name, ...content } = model as typeof model & { name?: unknown };
    const body = utf8(JSON.stringify(content));
    return { kind: 'model', body, featureCount: model.layers.length, warnings: [], suggestedName: name, contentHash: sha256Hex(body), bbox: null };
  }
  let toLonLat: ((x: number, y: number) => [number, number]) | undefined;
  if (u.crs !== undefined) {
    const conv = converter(await loadCrsDefinition(u.crs), WGS84_DEF);
    toLonLat = (x, y) => conv.forward([x, y]);
  }
  const opts = { maxFeatures: u.maxFeatures, toLonLat, crsHint: 'give their CRS with the query parameter crs=EPSG:nnnn' };
  return finish(u.kind, u.format === 'csv' ? parsePointCsv(u.kind, text, opts) : parseFeatureCollection(u.kind, parseJsonText(text), opts));
}
