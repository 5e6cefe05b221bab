/** Thin typed access to the server's JSON API. Errors carry the server's own message and details. */
import type { CrossValidationSummary, Legend, RunLayerInfo, RunSummary, VariogramSummary } from '../../shared/schema/run.ts';

export interface AppConfig {
  version: string;
  caution: string;
  demo: { name: string; invented: boolean; datasets: Record<string, string>; projectId?: string };
  terrain: { tiles: string; bounds: [number, number, number, number]; minzoom: number; maxzoom: number; encoding: 'mapbox'; tileSize: number } | null;
}

/** One problem of a server validation report: which feature, which field, what is wrong. */
export interface Problem {
  feature?: number | string;
  field?: string;
  problem: string;
}

export class ApiError extends Error {
  constructor(
    message: string,
    readonly status: number,
    readonly details: Problem[] = [],
    readonly code = '',
  ) {
    super(message);
  }
}

type ErrorBody = { error?: { code?: string; message?: string; details?: Problem[] } } | null;

async function handle<T>(res: Response): Promise<T> {
  const text = await res.text();
  let body: unknown;
  try {
    body = text === '' ? null : JSON.parse(text);
  } catch {
    body = null;
  }
  if (!res.ok) {
    const e = (body as ErrorBody)?.error;
    const details = Array.isArray(e?.details) ? e.details : [];
    throw new ApiError(
      e?.message ?? `${res.status} ${res.statusText}${text && body === null ? `: ${text.slice(0, 200)}` : ''}`,
      res.status,
      details,
      e?.code ?? '',
    );
  }
  return body as T;
}

export async function getJson<T>(path: string): Promise<T> {
  return handle<T>(await fetch(path, { headers: { accept: 'application/json' } }));
}

export async function sendJson<T>(method: 'POST' | 'PUT' | 'DELETE', path: string, body?: unknown, headers: Record<string, string> = {}): Promise<T> {
  const init: RequestInit = { method, headers: { accept: 'application/json', ...headers } };
  if (body !== undefined) {
    init.body = JSON.stringify(body);
    (init.headers as Record<string, string>)['content-type'] = 'application/json';
  }
  return handle<T>(await fetch(path, init));
}

/** Where an upload's coordinates are and which layer of a multi-layer file to read (the upload routes' crs= and layer=). */
export interface UploadOptions {
  /** EPSG:nnnn of a CSV's projected x,y columns (GeoPackage and Shapefile carry their own CRS). */
  crs?: string;
  /** The GeoPackage table or the Shapefile inside a zip, when the file holds several. */
  layer?: string;
}

/** The upload form's choices as the upload routes take them, or what is wrong with them (nothing is sent then). */
export type UploadChoice = UploadOptions & { problem?: string };

/** The media type an upload of `fileName` goes as: CSV, GeoPackage, zipped Shapefile, JSON (a model) or GeoJSON. */
export function uploadMediaType(fileName: string, kind: string): string {
  if (/\.(csv|txt)$/i.test(fileName)) return 'text/csv';
  if (/\.gpkg$/i.test(fileName)) return 'application/geopackage+sqlite3';
  if (/\.zip$/i.test(fileName)) return 'application/zip';
  if (/\.tiff?$/i.test(fileName) || kind === 'grid') return 'image/tiff';
  return kind === 'model' ? 'application/json' : 'application/geo+json';
}

/** The query string of an upload: its kind and name plus crs= and layer= when given. */
export function uploadQuery(base: Record<string, string>, opts: UploadOptions = {}): string {
  const q = new URLSearchParams(base);
  if (opts.crs) q.set('crs', opts.crs);
  if (opts.layer) q.set('layer', opts.layer);
  return q.toString();
}

/** Uploads a file as a data set of `kind` (not in a project). */
export async function uploadDataset(kind: string, file: Blob & { name: string }, opts: UploadOptions = {}): Promise<DatasetCreated> {
  const res = await fetch(`/api/datasets?${uploadQuery({ kind, title: file.name.slice(0, 200), filename: file.name.slice(0, 200) }, opts)}`, {
    method: 'POST',
    headers: { accept: 'application/json', 'content-type': uploadMediaType(file.name, kind) },
    body: file,
  });
  return handle<DatasetCreated>(res);
}

export interface DatasetCreated {
  id: string;
  kind: string;
  featureCount: number;
  warnings: (string | Problem)[];
}

export type { Legend, RunLayerInfo };

/** Tile description of a raster run layer (raster-dem, MapLibre `custom` encoding). */
export interface TileInfo {
  tiles: string[];
  bounds?: [number, number, number, number];
  minzoom?: number;
  maxzoom?: number;
  tileSize?: number;
  encoding: 'custom' | 'mapbox' | 'terrarium';
  redFactor: number;
  greenFactor: number;
  blueFactor: number;
  /** MapLibre's convention: value = R·redFactor + G·greenFactor + B·blueFactor − baseShift. */
  baseShift: number;
  /** The value the no-data code (0) decodes to, one step below every real value. */
  noDataValue: number;
  noDataBelow?: number;
}

/** A run layer as GET /api/runs/:id lists it, with whatever URLs the server adds. */
export type RunLayer = RunLayerInfo & { urls?: Record<string, string>; tiles?: TileInfo | string[]; contourOf?: RunLayer } & Partial<Omit<TileInfo, 'tiles'>>;

/** The run summary's variogram and cross-validation (the run contract, shared/schema/run.ts). */
export type Variogram = VariogramSummary;
export type CrossValidation = CrossValidationSummary;

export interface RunState {
  id: string;
  status: 'queued' | 'running' | 'done' | 'failed' | 'cancelled';
  progress: number;
  message: string;
  layers?: RunLayer[];
  /** A finished run's summary (null until it is done). */
  summary?: RunSummary | null;
  warnings?: string[];
  request?: Record<string, unknown>;
}
