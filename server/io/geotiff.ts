import { writeArrayBuffer, fromArrayBuffer } from 'geotiff';
import type { Grid } from '../../shared/grid/grid.ts';
import { checkSpec } from '../../shared/grid/grid.ts';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';

/**
 * GeoTIFF (OGC GeoTIFF 1.1) codec for the project's Grid: single band Float32, NoData −9999 (GDAL_NODATA tag),
 * GeoKeys for EPSG:4326 (GTModelType 2, geographic) or a projected EPSG code (GTModelType 1), raster type
 * PixelIsArea with the tie point at the grid's north-west corner. The caution and the provenance travel in the
 * ImageDescription tag as one ASCII JSON object `{ caution, description, metadata }` (non-ASCII characters
 * \u-escaped, since TIFF ASCII is 7-bit); GDAL shows it as TIFFTAG_IMAGEDESCRIPTION.
 */

export const NODATA = -9999;

export interface GeoTiffWriteOptions {
  /** What the raster holds, e.g. 'heat flow (mW/m²), ordinary kriging'. */
  description?: string;
  /** Provenance (tool version, method, model, input hashes) and anything else worth keeping. */
  metadata?: Record<string, unknown>;
}

function epsgCode(crs: string): number {
  const m = /^EPSG:(\d{4,6})$/i.exec(crs.trim());
  if (!m) throw new InputError(`GeoTIFF export needs an EPSG code, got CRS "${crs}"`, [{ field: 'crs', problem: 'use --crs EPSG:nnnn' }], 'bad_crs');
  return Number(m[1]);
}

function asciiJson(v: unknown): string {
  return JSON.stringify(v).replace(/[\u007f-\uffff]/g, (c) => '\\u' + c.charCodeAt(0).toString(16).padStart(4, '0'));
}

/** Writes a grid as a GeoTIFF; NaN cells become −9999. Returns the file's bytes. */
export function writeGeoTiff(grid: Grid<Float32Array | Float64Array>, opts: GeoTiffWriteOptions = {}): ArrayBuffer {
  checkSpec(grid);
  if (grid.values.length !== grid.width * grid.height) throw new RangeError(`grid has ${grid.values.length} values for ${grid.width} × ${grid.height} cells`);
  const code = epsgCode(grid.crs);
  const values = new Float32Array(grid.values.length);
  for (let i = 0; i < values.length; i++) {
    const v = grid.values[i];
    values[i] = Number.isFinite(v) ? v : NODATA;
  }
  const description = asciiJson({ caution: CAUTION, description: opts.description ?? '', units: grid.units, metadata: opts.metadata ?? {} });
  const meta: Record<string, unknown> = {
    width: grid.width,
    height: grid.height,
    ModelPixelScale: [grid.dx, grid.dy, 0],
    ModelTiepoint: [0, 0, 0, grid.west, grid.north, 0],
    GTRasterTypeGeoKey: 1,
    GDAL_NODATA: String(NODATA),
    // A placeholder: geotiff's writer keeps all tag values in a fixed 1000-byte header, too small for the caution
    // and provenance, so the real text is appended after the pixels and the tag re-pointed (see withDescription).
    ImageDescription: 'subtherm',
  };
  if (code === 4326) {
    meta.GTModelTypeGeoKey = 2;
    meta.GeographicTypeGeoKey = 4326;
  } else {
    meta.GTModelTypeGeoKey = 1;
    meta.ProjectedCSTypeGeoKey = code;
  }
  return withDescription(writeArrayBuffer(values, meta as never) as ArrayBuffer, description);
}

/**
 * Replaces the ImageDescription (tag 270) value of a big-endian classic TIFF written by geotiff with `text`,
 * appended (NUL-terminated, word aligned) at the end of the file; the IFD entry's count and offset are rewritten.
 * TIFF 6.0 §2 allows a tag value anywhere in the file.
 */
function withDescription(buf: ArrayBuffer, text: string): ArrayBuffer {
  const src = new DataView(buf);
  if (src.getUint16(0) !== 0x4d4d || src.getUint16(2) !== 42) throw new Error('unexpected TIFF layout from the geotiff writer');
  const bytes = new TextEncoder().encode(text + '\0');
  const start = buf.byteLength + (buf.byteLength & 1);
  const out = new Uint8Array(start + bytes.length);
  out.set(new Uint8Array(buf), 0);
  out.set(bytes, start);
  const dv = new DataView(out.buffer);
  const ifd = dv.getUint32(4);
  const n = dv.getUint16(ifd);
  for (let e = 0; e < n; e++) {
    const at = ifd + 2 + 12 * e;
    if (dv.getUint16(at) === 270) {
      dv.setUint32(at + 4, bytes.length);
      dv.setUint32(at + 8, start);
      return out.buffer;
    }
  }
  throw new Error('ImageDescription tag not found in the written TIFF');
}

export interface GeoTiffRead {
  grid: Grid<Float32Array>;
  description: string;
  caution: string | null;
  metadata: Record<string, unknown>;
}

/** Reads one band (default 0) of a GeoTIFF into a Grid (NoData → NaN), with the description written above. */
export async function readGeoTiff(buffer: ArrayBuffer, opts: { band?: number; source?: string } = {}): Promise<GeoTiffRead> {
  const src = opts.source ?? 'GeoTIFF';
  let tiff;
  try {
    tiff = await fromArrayBuffer(buffer);
  } catch (e) {
    throw new InputError(`${src} is not a readable GeoTIFF`, [{ problem: e instanceof Error ? e.message : String(e) }], 'bad_geotiff');
  }
  const image = await tiff.getImage(0);
  const band = opts.band ?? 0;
  const bands = image.getSamplesPerPixel();
  if (!(Number.isInteger(band) && band >= 0 && band < bands)) throw new InputError(`${src} has ${bands} band(s); band ${band} asked for`, [{ field: 'band', problem: `expected 0..${bands - 1}` }], 'bad_geotiff');
  const width = image.getWidth(), height = image.getHeight();
  let origin: number[], res: number[];
  try {
    origin = image.getOrigin();
    res = image.getResolution();
  } catch {
    throw new InputError(`${src} has no georeferencing`, [{ problem: 'expected ModelTiepoint and ModelPixelScale (or a ModelTransformation)' }], 'bad_geotiff');
  }
  const keys = (image.getGeoKeys() ?? {}) as Record<string, unknown>;
  const code = keys.ProjectedCSTypeGeoKey ?? keys.GeographicTypeGeoKey;
  if (typeof code !== 'number' || code === 32767) throw new InputError(`${src} has no EPSG coordinate system`, [{ problem: 'expected ProjectedCSTypeGeoKey or GeographicTypeGeoKey' }], 'bad_geotiff');
  const rasters = (await image.readRasters({ samples: [band], interleave: false })) as unknown as ArrayLike<number>[];
  const raw = rasters[0];
  const nodata = image.getGDALNoData();
  const values = new Float32Array(width * height);
  for (let i = 0; i < values.length; i++) {
    const v = raw[i];
    values[i] = (nodata !== null && v === nodata) || !Number.isFinite(v) ? NaN : v;
  }
  const dir = image.fileDirectory as unknown as { loadValue?: (k: string) => Promise<unknown>; hasTag?: (k: string) => boolean };
  let d: unknown;
  try {
    d = typeof dir.loadValue === 'function' ? await dir.loadValue('ImageDescription') : undefined;
  } catch {
    d = undefined; // no description tag
  }
  const text = typeof d === 'string' ? d.replace(/\0+$/, '') : '';
  let description = text, caution: string | null = null, metadata: Record<string, unknown> = {}, units = '';
  try {
    const j = JSON.parse(text) as { caution?: string; description?: string; units?: string; metadata?: Record<string, unknown> };
    description = j.description ?? '';
    caution = j.caution ?? null;
    metadata = j.metadata ?? {};
    units = j.units ?? '';
  } catch { /* a foreign description: kept as text */ }
  const grid: Grid<Float32Array> = { width, height, values, west: origin[0], north: origin[1], dx: Math.abs(res[0]), dy: Math.abs(res[1]), crs: `EPSG:${code}`, units };
  return { grid, description, caution, metadata };
}
