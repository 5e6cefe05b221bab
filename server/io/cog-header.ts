/**
 * The TIFF side of a Cloud-Optimized GeoTIFF (cog.ts): GDAL's structural-metadata ghost block, one IFD per level
 * (TIFF 6.0 tags, GeoTIFF 1.1 georeferencing, GDAL metadata and NoData), the header holding them all in front of the
 * tile data, and where each tile lands in COG order.
 */
import { endianness } from 'node:os';
import { COG_TILE_SIZE, tilesAcross, type Level } from './cog-tiles.ts';

/** GDAL's ghost header text (padded with one space to GDAL's 140 bytes), byte for byte. */
const GHOST_BODY =
  'LAYOUT=IFDS_BEFORE_DATA\nBLOCK_ORDER=ROW_MAJOR\nBLOCK_LEADER=SIZE_AS_UINT4\nBLOCK_TRAILER=LAST_4_BYTES_REPEATED\nKNOWN_INCOMPATIBLE_EDITION=NO\n ';
const GHOST = `GDAL_STRUCTURAL_METADATA_SIZE=${String(GHOST_BODY.length).padStart(6, '0')} bytes\n${GHOST_BODY}`;

export interface CogGeo {
  west: number;
  north: number;
  dx: number;
  dy: number;
  /** EPSG code: 4326 or a projected CRS. */
  epsg: number;
}

export interface CogOptions {
  geo: CogGeo;
  /** NoData value written for NaN cells (also in GDAL_NODATA). */
  nodata: number;
  /** Overview resampling: 'average' for continuous values, 'nearest' for class grids. */
  resampling?: 'average' | 'nearest';
  /** GDAL metadata XML (`<GDALMetadata>…</GDALMetadata>`), or '' for none. */
  gdalMetadataXml?: string;
  tileSize?: number;
  /** zlib level 1–9 (default 6, as GDAL's ZLEVEL). */
  level?: number;
}

// ---------------------------------------------------------------------------------------------------------------
// IFDs.

const SHORT = 3,
  LONG = 4,
  DOUBLE = 12,
  ASCII = 2;
const TYPE_BYTES: Record<number, number> = { [SHORT]: 2, [LONG]: 4, [DOUBLE]: 8, [ASCII]: 1 };

interface Entry {
  tag: number;
  type: number;
  values: number[] | Uint32Array | Uint8Array;
  /** Tile arrays are placed together after all IFDs, as GDAL does. */
  late?: boolean;
}

function asciiBytes(s: string): Uint8Array {
  const b = new TextEncoder().encode(s);
  const out = new Uint8Array(b.length + 1);
  out.set(b);
  return out;
}

function levelEntries(l: Level, index: number, ts: number, opts: CogOptions, offsets: Uint32Array, counts: Uint32Array): Entry[] {
  const dim = (n: number): Entry['type'] => (n < 65536 ? SHORT : LONG);
  const e: Entry[] = [];
  if (index > 0) e.push({ tag: 254, type: LONG, values: [1] }); // NewSubfileType: reduced-resolution image
  e.push(
    { tag: 256, type: dim(l.width), values: [l.width] },
    { tag: 257, type: dim(l.height), values: [l.height] },
    { tag: 258, type: SHORT, values: [32] },
    { tag: 259, type: SHORT, values: [8] }, // Adobe DEFLATE
    { tag: 262, type: SHORT, values: [1] }, // BlackIsZero
    { tag: 277, type: SHORT, values: [1] },
    { tag: 284, type: SHORT, values: [1] },
    { tag: 317, type: SHORT, values: [3] }, // floating-point predictor
    { tag: 322, type: SHORT, values: [ts] },
    { tag: 323, type: SHORT, values: [ts] },
    { tag: 324, type: LONG, values: offsets, late: true },
    { tag: 325, type: LONG, values: counts, late: true },
    { tag: 339, type: SHORT, values: [3] }, // IEEE floating point
  );
  if (index === 0) {
    const g = opts.geo;
    e.push({ tag: 33550, type: DOUBLE, values: [g.dx, g.dy, 0] });
    e.push({ tag: 33922, type: DOUBLE, values: [0, 0, 0, g.west, g.north, 0] });
    const keys =
      g.epsg === 4326
        ? [
            [1024, 2],
            [1025, 1],
            [2048, 4326],
          ] // ModelTypeGeographic, RasterPixelIsArea, GCS_WGS_84
        : [
            [1024, 1],
            [1025, 1],
            [3072, g.epsg],
          ]; // ModelTypeProjected, RasterPixelIsArea, ProjectedCSType
    const dir = [1, 1, 0, keys.length];
    for (const [k, v] of keys) dir.push(k, 0, 1, v);
    e.push({ tag: 34735, type: SHORT, values: dir });
    if ((opts.gdalMetadataXml ?? '') !== '') e.push({ tag: 42112, type: ASCII, values: asciiBytes(opts.gdalMetadataXml!) });
  }
  e.push({ tag: 42113, type: ASCII, values: asciiBytes(String(opts.nodata)) });
  return e;
}

function writeValues(dv: DataView, at: number, type: number, values: Entry['values']): void {
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (type === SHORT) dv.setUint16(at + 2 * i, v, true);
    else if (type === LONG) dv.setUint32(at + 4 * i, v, true);
    else if (type === DOUBLE) dv.setFloat64(at + 8 * i, v, true);
    else dv.setUint8(at + i, v);
  }
}

const align4 = (n: number) => (n + 3) & ~3;

/**
 * The header: TIFF header, ghost block and every IFD with its values, tile arrays last. Its length depends only on
 * the tile counts, so it can be sized before any tile is compressed and filled in at the end.
 */
export function buildHeader(levels: Level[], ts: number, opts: CogOptions, offsets: Uint32Array[], counts: Uint32Array[]): Uint8Array {
  const perLevel = levels.map((l, i) => levelEntries(l, i, ts, opts, offsets[i], counts[i]));
  // Sizing pass.
  let pos = align4(8 + GHOST.length);
  const ifdAt: number[] = [];
  for (const entries of perLevel) {
    ifdAt.push(pos);
    pos += 2 + 12 * entries.length + 4;
    for (const e of entries) {
      const n = TYPE_BYTES[e.type] * e.values.length;
      if (n > 4 && !e.late) pos = align4(pos) + n;
    }
    pos = align4(pos);
  }
  for (const entries of perLevel) for (const e of entries) if (e.late && TYPE_BYTES[e.type] * e.values.length > 4) pos += TYPE_BYTES[e.type] * e.values.length;
  const out = new Uint8Array(pos);
  const dv = new DataView(out.buffer);
  out[0] = 0x49;
  out[1] = 0x49;
  dv.setUint16(2, 42, true);
  dv.setUint32(4, ifdAt[0], true);
  out.set(new TextEncoder().encode(GHOST), 8);
  // Writing pass.
  let late = 0;
  for (let i = 0; i < perLevel.length; i++) {
    let extra = ifdAt[i] + 2 + 12 * perLevel[i].length + 4;
    for (const e of perLevel[i]) if (!e.late && TYPE_BYTES[e.type] * e.values.length > 4) extra = align4(extra) + TYPE_BYTES[e.type] * e.values.length;
    late = Math.max(late, align4(extra));
  }
  let latePos = late;
  for (let i = 0; i < perLevel.length; i++) {
    const entries = perLevel[i];
    let at = ifdAt[i];
    dv.setUint16(at, entries.length, true);
    at += 2;
    let extra = ifdAt[i] + 2 + 12 * entries.length + 4;
    for (const e of entries) {
      const n = TYPE_BYTES[e.type] * e.values.length;
      dv.setUint16(at, e.tag, true);
      dv.setUint16(at + 2, e.type, true);
      dv.setUint32(at + 4, e.values.length, true);
      if (n <= 4) {
        writeValues(dv, at + 8, e.type, e.values);
      } else if (e.late) {
        dv.setUint32(at + 8, latePos, true);
        writeValues(dv, latePos, e.type, e.values);
        latePos += n;
      } else {
        extra = align4(extra);
        dv.setUint32(at + 8, extra, true);
        writeValues(dv, extra, e.type, e.values);
        extra += n;
      }
      at += 12;
    }
    dv.setUint32(at, i + 1 < perLevel.length ? ifdAt[i + 1] : 0, true);
  }
  return out;
}

export function checkOptions(width: number, height: number, opts: CogOptions): number {
  if (endianness() !== 'LE') throw new Error('the COG writer packs floats for a little-endian host');
  const ts = opts.tileSize ?? COG_TILE_SIZE;
  if (!(Number.isInteger(ts) && ts >= 16 && ts % 16 === 0 && ts < 65536)) throw new RangeError(`tile size must be a multiple of 16, got ${ts}`);
  if (!(Number.isInteger(width) && width > 0 && Number.isInteger(height) && height > 0)) throw new RangeError(`bad grid size ${width} × ${height}`);
  return ts;
}

/** Where each tile lands: data offsets per level given the compressed sizes, in COG order (smallest level first). */
export function placeTiles(levels: Level[], ts: number, headerBytes: number, sizes: Uint32Array[]): Uint32Array[] {
  const offsets = levels.map((l) => {
    const { nx, ny } = tilesAcross(l, ts);
    return new Uint32Array(nx * ny);
  });
  let pos = headerBytes;
  for (let i = levels.length - 1; i >= 0; i--) {
    for (let t = 0; t < sizes[i].length; t++) {
      pos += 4; // leader
      if (pos + sizes[i][t] + 4 > 0xffffffff) throw new RangeError('the GeoTIFF would exceed 4 GiB (BigTIFF is not written)');
      offsets[i][t] = pos;
      pos += sizes[i][t] + 4; // data + trailer
    }
  }
  return offsets;
}

export function leaderTrailer(data: Uint8Array): { leader: Uint8Array; trailer: Uint8Array } {
  const leader = new Uint8Array(4);
  new DataView(leader.buffer).setUint32(0, data.length, true);
  return { leader, trailer: data.slice(data.length - 4) };
}

export function emptyArrays(levels: Level[], ts: number): Uint32Array[] {
  return levels.map((l) => {
    const { nx, ny } = tilesAcross(l, ts);
    return new Uint32Array(nx * ny);
  });
}
