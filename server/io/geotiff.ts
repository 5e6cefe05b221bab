import type { fromArrayBuffer } from 'geotiff';
import { GeoTIFF, fromFile } from 'geotiff';
import { epsgOf, firstImage, georeferencing, hasTag, tagValue, type GeoTiffImage } from './geotiff-header.ts';
import type { Grid, GridSpec } from '../../shared/grid/grid.ts';
import { checkSpec } from '../../shared/grid/grid.ts';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { encodeCog, writeCogFile, type CogOptions } from './cog.ts';

/**
 * The project's one GeoTIFF codec (OGC GeoTIFF 1.1).
 *
 * Writing: Cloud-Optimized GeoTIFF (server/io/cog.ts) — single band Float32, 512 × 512 DEFLATE tiles with the
 * floating-point predictor, internal overviews (averages, or nearest neighbour for class grids), NoData −9999
 * (GDAL_NODATA), GeoKeys for EPSG:4326 or a projected EPSG code, PixelIsArea with the tie point at the north-west
 * corner. The caution, title, units and provenance travel in GDAL's metadata tag as items `CAUTION`, `TITLE`, `UNITS`
 * and `METADATA` (JSON), and as the band's description and unit type, so `gdalinfo` shows them.
 *
 * Reading: any GeoTIFF geotiff.js decodes — striped or tiled, uncompressed, DEFLATE, LZW or PackBits, with or
 * without a predictor (horizontal or floating point), any sample type — one band to a Float32 grid with NoData → NaN.
 */

export const NODATA = -9999;

export interface GeoTiffWriteOptions {
  /** What the raster holds, e.g. 'heat flow (mW/m²), ordinary kriging'. */
  description?: string;
  /** Provenance (tool version, method, model, input hashes) and anything else worth keeping. */
  metadata?: Record<string, unknown>;
  /** Class grids (integer codes) take nearest-neighbour overviews; continuous grids averages. */
  classes?: boolean;
}

function epsgCode(crs: string): number {
  const m = /^EPSG:(\d{4,6})$/i.exec(crs.trim());
  if (!m) throw new InputError(`GeoTIFF export needs an EPSG code, got CRS "${crs}"`, [{ field: 'crs', problem: 'use --crs EPSG:nnnn' }], 'bad_crs');
  return Number(m[1]);
}

function xmlText(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

function xmlUnescape(s: string): string {
  return s
    .replace(/&#x([0-9a-f]+);/gi, (_, h: string) => String.fromCodePoint(parseInt(h, 16)))
    .replace(/&#(\d+);/g, (_, d: string) => String.fromCodePoint(Number(d)))
    .replace(/&lt;/g, '<')
    .replace(/&gt;/g, '>')
    .replace(/&quot;/g, '"')
    .replace(/&apos;/g, "'")
    .replace(/&amp;/g, '&');
}

/**
 * GDAL's metadata XML (as GDAL writes it in tag 42112): dataset items, the band's description and unit type, and
 * its smallest and largest value (GDAL's STATISTICS_MINIMUM/MAXIMUM items), which let a map-tile server choose its
 * value encoding without reading the whole grid.
 */
function gdalMetadataXml(grid: Grid<Float32Array | Float64Array>, opts: GeoTiffWriteOptions): string {
  let min = Infinity,
    max = -Infinity;
  const v = grid.values;
  for (let i = 0; i < v.length; i++) {
    const x = v[i];
    if (x - x !== 0) continue; // NaN and ±∞ are written as NoData
    if (x < min) min = x;
    if (x > max) max = x;
  }
  // Float32 values written as the shortest text that reads back to the same float.
  const f32 = (x: number) => String(Math.fround(x));
  const stats =
    min <= max ? [`  <Item name="STATISTICS_MAXIMUM" sample="0">${f32(max)}</Item>`, `  <Item name="STATISTICS_MINIMUM" sample="0">${f32(min)}</Item>`] : [];
  const items: string[] = [
    `  <Item name="CAUTION">${xmlText(CAUTION)}</Item>`,
    `  <Item name="TITLE">${xmlText(opts.description ?? '')}</Item>`,
    `  <Item name="UNITS">${xmlText(grid.units)}</Item>`,
    `  <Item name="METADATA">${xmlText(JSON.stringify(opts.metadata ?? {}))}</Item>`,
    `  <Item name="DESCRIPTION" sample="0" role="description">${xmlText(opts.description ?? '')}</Item>`,
    `  <Item name="UNITTYPE" sample="0" role="unittype">${xmlText(grid.units)}</Item>`,
    ...stats,
  ];
  return `<GDALMetadata>\n${items.join('\n')}\n</GDALMetadata>\n`;
}

function cogOptions(grid: Grid<Float32Array | Float64Array>, opts: GeoTiffWriteOptions): CogOptions {
  checkSpec(grid);
  if (grid.values.length !== grid.width * grid.height) throw new RangeError(`grid has ${grid.values.length} values for ${grid.width} × ${grid.height} cells`);
  return {
    geo: { west: grid.west, north: grid.north, dx: grid.dx, dy: grid.dy, epsg: epsgCode(grid.crs) },
    nodata: NODATA,
    resampling: opts.classes === true ? 'nearest' : 'average',
    gdalMetadataXml: gdalMetadataXml(grid, opts),
  };
}

/** Writes a grid as a Cloud-Optimized GeoTIFF, compressing on this thread; NaN cells become −9999. */
export function writeGeoTiff(grid: Grid<Float32Array | Float64Array>, opts: GeoTiffWriteOptions = {}): Uint8Array {
  return encodeCog(grid.values, grid.width, grid.height, cogOptions(grid, opts));
}

/**
 * Writes a grid as a Cloud-Optimized GeoTIFF file, deflating tiles on node:zlib's thread pool (server/io/cog.ts); the file
 * appears at `path` only when complete.
 */
export async function writeGeoTiffFile(
  path: string,
  grid: Grid<Float32Array | Float64Array>,
  opts: GeoTiffWriteOptions & { threads?: number } = {},
): Promise<{ bytes: number }> {
  return writeCogFile(path, grid.values, grid.width, grid.height, { ...cogOptions(grid, opts), threads: opts.threads });
}

export interface GeoTiffRead {
  grid: Grid<Float32Array>;
  description: string;
  caution: string | null;
  metadata: Record<string, unknown>;
  /** Bands in the file. */
  bands: number;
}

type Tiff = Awaited<ReturnType<typeof fromArrayBuffer>>;
type Image = GeoTiffImage;

interface Header {
  spec: { width: number; height: number; west: number; north: number; dx: number; dy: number; crs: string };
  bands: number;
  description: string;
  caution: string | null;
  metadata: Record<string, unknown>;
  units: string;
  /** The band's smallest and largest data value when the file records them (GDAL's STATISTICS_* items). */
  statistics: { min: number; max: number } | null;
}

async function tagText(image: Image, tag: string): Promise<string> {
  if (!hasTag(image, tag)) return '';
  try {
    const v = await tagValue(image, tag);
    return typeof v === 'string' ? v.replace(/\0+$/, '') : '';
  } catch {
    return '';
  }
}

/** Georeferencing, CRS, band count and the project's metadata (GDAL metadata items, or the older JSON description). */
async function readHeader(image: Image, src: string): Promise<Header> {
  const width = image.getWidth(),
    height = image.getHeight();
  const geo = georeferencing(image);
  if (geo === null)
    throw new InputError(
      `${src} has no georeferencing`,
      [{ feature: src, field: 'ModelTiepoint/ModelPixelScale', problem: 'expected a georeferenced GeoTIFF (tie point and pixel scale, or a transformation)' }],
      'bad_geotiff',
    );
  const { origin, resolution: res } = geo;
  const epsg = epsgOf(image);
  if (epsg === null)
    throw new InputError(
      `${src} has no EPSG coordinate system`,
      [{ feature: src, field: 'GeoKeys', problem: 'expected ProjectedCSTypeGeoKey or GeographicTypeGeoKey with an EPSG code' }],
      'bad_geotiff',
    );
  let description: string,
    caution: string | null = null,
    metadata: Record<string, unknown> = {},
    units = '';
  const xml = await tagText(image, 'GDAL_METADATA');
  const items = new Map<string, string>();
  for (const m of xml.matchAll(/<Item\s+name="([^"]*)"([^>]*)>([\s\S]*?)<\/Item>/g)) {
    const band = /sample="(\d+)"/.exec(m[2]);
    items.set(band ? `${m[1]}#${band[1]}` : m[1], xmlUnescape(m[3]));
  }
  if (items.has('CAUTION') || items.has('METADATA')) {
    caution = items.get('CAUTION') ?? null;
    description = items.get('TITLE') ?? items.get('DESCRIPTION#0') ?? '';
    units = items.get('UNITS') ?? items.get('UNITTYPE#0') ?? '';
    try {
      metadata = JSON.parse(items.get('METADATA') ?? '{}') as Record<string, unknown>;
    } catch {
      /* kept empty: not the project's */
    }
  } else {
    // Files written before the COG writer kept one JSON object in ImageDescription; foreign text is kept as is.
    const text = await tagText(image, 'ImageDescription');
    description = text;
    try {
      const j = JSON.parse(text) as { caution?: string; description?: string; units?: string; metadata?: Record<string, unknown> };
      description = j.description ?? '';
      caution = j.caution ?? null;
      metadata = j.metadata ?? {};
      units = j.units ?? '';
    } catch {
      /* a foreign description */
    }
    units ||= items.get('UNITTYPE#0') ?? '';
  }
  const smin = Number(items.get('STATISTICS_MINIMUM#0') ?? NaN),
    smax = Number(items.get('STATISTICS_MAXIMUM#0') ?? NaN);
  return {
    spec: { width, height, west: origin[0], north: origin[1], dx: Math.abs(res[0]), dy: Math.abs(res[1]), crs: `EPSG:${epsg.code}` },
    bands: image.getSamplesPerPixel(),
    description,
    caution,
    metadata,
    units,
    statistics: Number.isFinite(smin) && Number.isFinite(smax) && smin <= smax ? { min: smin, max: smax } : null,
  };
}

function checkBand(band: number, bands: number, src: string): void {
  if (!(Number.isInteger(band) && band >= 0 && band < bands))
    throw new InputError(
      `${src}: band ${band + 1} is out of range (the file has ${bands} band(s))`,
      [{ feature: src, field: 'band', problem: `expected 1..${bands}` }],
      'bad_geotiff',
    );
}

/** One band of a window [col0, col1) × [row0, row1) as Float32 with NoData → NaN. */
async function readBand(image: Image, band: number, window: [number, number, number, number] | undefined): Promise<Float32Array> {
  const rasters = (await image.readRasters({ samples: [band], interleave: false, ...(window ? { window } : {}) })) as unknown as ArrayLike<number>[];
  const raw = rasters[0];
  const nodata = image.getGDALNoData();
  // A Float32 band is converted where geotiff.js decoded it (no second grid-sized array).
  const values = raw instanceof Float32Array ? raw : new Float32Array(raw.length);
  // NoData is compared in the band's own type, as GDAL does: a Float32 band holds fround(nodata), never "-3.4e38".
  const nd = nodata === null ? NaN : raw instanceof Float32Array ? Math.fround(nodata) : nodata;
  for (let i = 0; i < values.length; i++) {
    const v = raw[i];
    values[i] = v === nd || !Number.isFinite(v) ? NaN : v;
  }
  return values;
}

async function openBuffer(buffer: ArrayBuffer | Uint8Array, src: string): Promise<Image> {
  try {
    return await firstImage(buffer);
  } catch (e) {
    throw new InputError(`${src} is not a readable GeoTIFF`, [{ feature: src, problem: e instanceof Error ? e.message : String(e) }], 'bad_geotiff');
  }
}

/**
 * Reads one band of a GeoTIFF into a Grid (NoData → NaN) with the project's metadata. `band` is 0-based (default 0);
 * with `chooseBand`, a file of several bands and no band given is refused with a message asking for one.
 */
export async function readGeoTiff(buffer: ArrayBuffer | Uint8Array, opts: { band?: number; source?: string; chooseBand?: boolean } = {}): Promise<GeoTiffRead> {
  const src = opts.source ?? 'GeoTIFF';
  const image = await openBuffer(buffer, src);
  const h = await readHeader(image, src);
  if (opts.band === undefined && opts.chooseBand === true && h.bands > 1)
    throw new InputError(
      `${src} has ${h.bands} bands: choose one with --band N (1 to ${h.bands})`,
      [{ feature: src, field: 'band', problem: `expected --band 1..${h.bands}` }],
      'bad_geotiff',
    );
  const band = opts.band ?? 0;
  checkBand(band, h.bands, src);
  let values: Float32Array;
  try {
    values = await readBand(image, band, undefined);
  } catch (e) {
    throw new InputError(`${src}: its pixels cannot be decoded`, [{ feature: src, problem: e instanceof Error ? e.message : String(e) }], 'bad_geotiff');
  }
  return { grid: { ...h.spec, values, units: h.units }, description: h.description, caution: h.caution, metadata: h.metadata, bands: h.bands };
}

/** What a byte-range source gives geotiff.js: the bytes of each slice, and the whole file's size. */
export interface RangeSource {
  fetch(slices: { offset: number; length: number }[]): Promise<ArrayBuffer[]>;
  readonly fileSize: number | null;
  close(): Promise<void>;
}

/**
 * One resolution of a file: the full grid (level 0) or an internal overview, with its georeferencing (the file's CRS
 * is in its header). Cell size dx, dy in CRS units: an overview's covers the full extent (full width × dx / its width).
 */
export type GeoTiffLevel = Omit<GridSpec, 'crs'>;

/**
 * A GeoTIFF file read window by window (only the tiles or strips a window touches are read from disk), at full
 * resolution or at any of its internal overviews: for grids too large to hold, such as continental runs served as
 * map tiles. `cellsRead` counts the cells decoded so far (windows' areas), for checks that a tile stays a small read.
 */
export class GeoTiffFile {
  cellsRead = 0;
  readonly levels: GeoTiffLevel[];

  private constructor(
    private readonly tiff: Tiff,
    private readonly images: Image[],
    readonly header: Header,
    private readonly band: number,
  ) {
    const { width, height, west, north, dx, dy } = header.spec;
    this.levels = images.map((im) => {
      const w = im.getWidth(),
        h = im.getHeight();
      return { width: w, height: h, west, north, dx: (dx * width) / w, dy: (dy * height) / h };
    });
  }

  static async open(path: string, opts: { band?: number } = {}): Promise<GeoTiffFile> {
    return GeoTiffFile.from(() => fromFile(path), path, opts);
  }

  /**
   * Opens a GeoTIFF through a byte-range source (geotiff.js's source protocol: `fetch(slices)` and `fileSize`), such
   * as a stored blob read chunk by chunk; `name` labels errors.
   */
  static async openSource(source: RangeSource, name: string, opts: { band?: number } = {}): Promise<GeoTiffFile> {
    return GeoTiffFile.from(() => GeoTIFF.fromSource(source as unknown as Parameters<typeof GeoTIFF.fromSource>[0]), name, opts);
  }

  private static async from(make: () => Promise<Tiff>, path: string, opts: { band?: number }): Promise<GeoTiffFile> {
    const images: Image[] = [];
    let tiff: Tiff;
    try {
      tiff = await make();
      const n = await tiff.getImageCount();
      for (let i = 0; i < n; i++) images.push(await tiff.getImage(i));
    } catch (e) {
      throw new InputError(`${path} is not a readable GeoTIFF`, [{ feature: path, problem: e instanceof Error ? e.message : String(e) }], 'bad_geotiff');
    }
    const h = await readHeader(images[0], path);
    checkBand(opts.band ?? 0, h.bands, path);
    // Overviews are the reduced-resolution images (NewSubfileType bit 0) of the same band layout, largest first.
    const overviews = images.slice(1).filter((im) => {
      const t = im.fileDirectory as unknown as { NewSubfileType?: number; getValue?: (k: string) => unknown };
      const v = typeof t.getValue === 'function' ? t.getValue('NewSubfileType') : t.NewSubfileType;
      return typeof v === 'number' && (v & 1) === 1 && im.getSamplesPerPixel() === h.bands;
    });
    overviews.sort((a, b) => b.getWidth() - a.getWidth());
    return new GeoTiffFile(tiff, [images[0], ...overviews], h, opts.band ?? 0);
  }

  /** Closes the file (its descriptor). */
  async close(): Promise<void> {
    await this.tiff.close();
  }

  /** Cells [col0, col1) × [row0, row1) of `level` (0 = full resolution), row-major, NaN = no data. */
  async window(col0: number, row0: number, col1: number, row1: number, level = 0): Promise<Float32Array> {
    this.cellsRead += (col1 - col0) * (row1 - row0);
    return readBand(this.images[level], this.band, [col0, row0, col1, row1]);
  }

  /**
   * Smallest and largest data value at full resolution: from the file's statistics metadata when it has them (the
   * project's writer records them), else read in bands of rows so the whole grid is never held.
   */
  async range(): Promise<{ min: number | null; max: number | null }> {
    const m = this.header.statistics;
    if (m !== null) return m;
    const { width, height } = this.levels[0];
    let min = Infinity,
      max = -Infinity;
    const rows = Math.max(1, Math.floor(2 ** 21 / width));
    for (let r = 0; r < height; r += rows) {
      const v = await this.window(0, r, width, Math.min(height, r + rows));
      for (let i = 0; i < v.length; i++) {
        const x = v[i];
        if (x < min) min = x;
        if (x > max) max = x;
      }
    }
    return min <= max ? { min, max } : { min: null, max: null };
  }
}
