/**
 * Cloud-Optimized GeoTIFF writer (single band Float32), in the layout GDAL's COG driver writes and recognises
 * (GDAL ≥ 3.1, https://gdal.org/drivers/raster/cog.html; the layout is the one of `gdal_translate -of COG`):
 *
 *   classic little-endian TIFF header (TIFF 6.0 §2) → GDAL's structural-metadata "ghost" block (LAYOUT=IFDS_BEFORE_DATA,
 *   BLOCK_ORDER=ROW_MAJOR, BLOCK_LEADER=SIZE_AS_UINT4, BLOCK_TRAILER=LAST_4_BYTES_REPEATED) → every IFD, full
 *   resolution first, then the overviews from largest to smallest, each followed by its tag values → the tile offset
 *   and byte-count arrays → tile data, smallest overview first and full resolution last, each level row-major, each
 *   tile preceded by its byte count (uint32) and followed by its last 4 bytes repeated.
 *
 * Tiles are square (512 × 512 by default), DEFLATE-compressed (zlib stream, TIFF Compression 8) after the
 * floating-point predictor (TIFF Technical Note 3 / Adobe Photoshop TIFF Technical Note 3: Predictor 3 — each row's
 * floats split into byte planes, most significant byte first, then byte-wise horizontal differencing). Overviews halve
 * the size (rounded up) until both sides fit in one tile; they average the 2 × 2 cells below that hold data, or take
 * the north-west cell of each block for class grids (nearest neighbour). NaN and ±∞ are written as the NoData value.
 *
 * Georeferencing follows OGC GeoTIFF 1.1: ModelPixelScale + ModelTiepoint at the north-west corner, PixelIsArea, and
 * GeoKeys for EPSG:4326 (GTModelType 2, GeographicType) or a projected EPSG code (GTModelType 1, ProjectedCSType).
 * Free text travels in GDAL's metadata tag (42112, XML of `<Item>`s) and NoData in GDAL_NODATA (42113).
 *
 * Two entry points share the layout: `encodeCog` compresses on the calling thread and returns the bytes (used inside
 * the run workers, where it is already off the main thread); `writeCogFile` compresses tiles on worker threads
 * (node:worker_threads + node:zlib) into a temporary file in COG order, writes the IFDs in front and renames it.
 */
import { deflateSync } from 'node:zlib';
import { Worker } from 'node:worker_threads';
import { open, rename, rm } from 'node:fs/promises';
import { availableParallelism, endianness } from 'node:os';

export const COG_TILE_SIZE = 512;

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

interface Level {
  width: number;
  height: number;
  values: Float32Array | Float64Array;
}

/** One overview: half the size (rounded up), by the mean of the data cells of each 2 × 2 block or by its NW cell. */
export function halveGrid(src: Level, resampling: 'average' | 'nearest', out?: Float32Array): Level {
  const w = Math.ceil(src.width / 2),
    h = Math.ceil(src.height / 2);
  const o = out ?? new Float32Array(w * h);
  const v = src.values,
    sw = src.width,
    sh = src.height;
  for (let r = 0; r < h; r++) {
    const r0 = 2 * r,
      r1 = Math.min(sh - 1, r0 + 1);
    for (let c = 0; c < w; c++) {
      const c0 = 2 * c,
        c1 = Math.min(sw - 1, c0 + 1);
      if (resampling === 'nearest') {
        o[r * w + c] = v[r0 * sw + c0];
        continue;
      }
      let s = 0,
        n = 0;
      const a = v[r0 * sw + c0],
        b = v[r0 * sw + c1],
        d = v[r1 * sw + c0],
        e = v[r1 * sw + c1];
      if (a - a === 0) {
        s += a;
        n++;
      }
      if (c1 !== c0 && b - b === 0) {
        s += b;
        n++;
      }
      if (r1 !== r0 && d - d === 0) {
        s += d;
        n++;
      }
      if (c1 !== c0 && r1 !== r0 && e - e === 0) {
        s += e;
        n++;
      }
      o[r * w + c] = n > 0 ? s / n : NaN;
    }
  }
  return { width: w, height: h, values: o };
}

/** The pyramid: full resolution, then halvings while either side exceeds one tile (as GDAL's COG driver). */
function pyramid(full: Level, tileSize: number, resampling: 'average' | 'nearest', alloc: (n: number) => Float32Array): Level[] {
  const levels = [full];
  let l = full;
  while (l.width > tileSize || l.height > tileSize) {
    l = halveGrid(l, resampling, alloc(Math.ceil(l.width / 2) * Math.ceil(l.height / 2)));
    levels.push(l);
  }
  return levels;
}

/**
 * Packs tile (tx, ty) of a level for Predictor 3: NoData for non-finite cells and beyond the edges, each row's floats
 * as 4 byte planes (most significant first), each row differenced byte by byte. `out` has tileSize² · 4 bytes,
 * `row` tileSize floats. Self-contained (no imports, no closures): the worker threads run its source text.
 */
export function packTileFp(
  values: Float32Array | Float64Array,
  width: number,
  height: number,
  tx: number,
  ty: number,
  ts: number,
  nodata: number,
  out: Uint8Array,
  row: Float32Array,
): void {
  const rb = new Uint8Array(row.buffer, row.byteOffset, ts * 4);
  const x0 = tx * ts,
    y0 = ty * ts;
  const nx = Math.min(ts, width - x0);
  for (let r = 0; r < ts; r++) {
    const y = y0 + r;
    if (y < height) {
      const base = y * width + x0;
      for (let c = 0; c < nx; c++) {
        const v = values[base + c];
        row[c] = v - v === 0 ? v : nodata;
      }
      for (let c = nx; c < ts; c++) row[c] = nodata;
    } else {
      row.fill(nodata);
    }
    const o = r * ts * 4;
    // Little-endian host: byte 3 of each float is its most significant.
    for (let c = 0, b = 0; c < ts; c++, b += 4) {
      out[o + c] = rb[b + 3];
      out[o + ts + c] = rb[b + 2];
      out[o + 2 * ts + c] = rb[b + 1];
      out[o + 3 * ts + c] = rb[b];
    }
    for (let i = o + ts * 4 - 1; i > o; i--) out[i] = (out[i] - out[i - 1]) & 255;
  }
}

function tilesAcross(l: { width: number; height: number }, ts: number): { nx: number; ny: number } {
  return { nx: Math.ceil(l.width / ts), ny: Math.ceil(l.height / ts) };
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
function buildHeader(levels: Level[], ts: number, opts: CogOptions, offsets: Uint32Array[], counts: Uint32Array[]): Uint8Array {
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

function checkOptions(width: number, height: number, opts: CogOptions): number {
  if (endianness() !== 'LE') throw new Error('the COG writer packs floats for a little-endian host');
  const ts = opts.tileSize ?? COG_TILE_SIZE;
  if (!(Number.isInteger(ts) && ts >= 16 && ts % 16 === 0 && ts < 65536)) throw new RangeError(`tile size must be a multiple of 16, got ${ts}`);
  if (!(Number.isInteger(width) && width > 0 && Number.isInteger(height) && height > 0)) throw new RangeError(`bad grid size ${width} × ${height}`);
  return ts;
}

/** Where each tile lands: data offsets per level given the compressed sizes, in COG order (smallest level first). */
function placeTiles(levels: Level[], ts: number, headerBytes: number, sizes: Uint32Array[]): Uint32Array[] {
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

function leaderTrailer(data: Uint8Array): { leader: Uint8Array; trailer: Uint8Array } {
  const leader = new Uint8Array(4);
  new DataView(leader.buffer).setUint32(0, data.length, true);
  return { leader, trailer: data.slice(data.length - 4) };
}

function emptyArrays(levels: Level[], ts: number): Uint32Array[] {
  return levels.map((l) => {
    const { nx, ny } = tilesAcross(l, ts);
    return new Uint32Array(nx * ny);
  });
}

/** Encodes a single-band grid (row-major, row 0 north, NaN = no data) as a COG, compressing on this thread. */
export function encodeCog(values: Float32Array | Float64Array, width: number, height: number, opts: CogOptions): Uint8Array {
  const ts = checkOptions(width, height, opts);
  if (values.length !== width * height) throw new RangeError(`${values.length} values for ${width} × ${height} cells`);
  const levels = pyramid({ width, height, values }, ts, opts.resampling ?? 'average', (n) => new Float32Array(n));
  const packed = new Uint8Array(ts * ts * 4),
    row = new Float32Array(ts);
  const tiles: Uint8Array[][] = levels.map(() => []);
  const sizes = emptyArrays(levels, ts);
  for (let i = levels.length - 1; i >= 0; i--) {
    const l = levels[i];
    const { nx, ny } = tilesAcross(l, ts);
    for (let ty = 0; ty < ny; ty++) {
      for (let tx = 0; tx < nx; tx++) {
        packTileFp(l.values, l.width, l.height, tx, ty, ts, opts.nodata, packed, row);
        const z = deflateSync(packed, { level: opts.level ?? 6 });
        tiles[i].push(z);
        sizes[i][ty * nx + tx] = z.length;
      }
    }
  }
  const headerBytes = buildHeader(levels, ts, opts, emptyArrays(levels, ts), sizes).length;
  const offsets = placeTiles(levels, ts, headerBytes, sizes);
  const header = buildHeader(levels, ts, opts, offsets, sizes);
  let total = header.length;
  for (const t of tiles) for (const z of t) total += z.length + 8;
  const out = new Uint8Array(total);
  out.set(header, 0);
  for (let i = levels.length - 1; i >= 0; i--) {
    for (let t = 0; t < tiles[i].length; t++) {
      const z = tiles[i][t],
        at = offsets[i][t];
      const { leader, trailer } = leaderTrailer(z);
      out.set(leader, at - 4);
      out.set(z, at);
      out.set(trailer, at + z.length);
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------------------------
// Worker threads.

/** The worker's program: receives the levels once (shared memory), then packs and deflates tiles on request. */
const WORKER_SOURCE = `
const { parentPort } = require('node:worker_threads');
const { deflateSync } = require('node:zlib');
var __name = (f) => f;
const packTileFp = ${packTileFp.toString()};
let levels = null, ts = 0, nodata = 0, zlevel = 6, packed = null, row = null;
parentPort.on('message', (m) => {
  if (m.type === 'init') {
    levels = m.levels.map((l) => ({ width: l.width, height: l.height, values: new Float32Array(l.buffer) }));
    ts = m.ts; nodata = m.nodata; zlevel = m.level;
    packed = new Uint8Array(ts * ts * 4); row = new Float32Array(ts);
    return;
  }
  const l = levels[m.level];
  packTileFp(l.values, l.width, l.height, m.tx, m.ty, ts, nodata, packed, row);
  const z = deflateSync(packed, { level: zlevel });
  const copy = new Uint8Array(z.length);
  copy.set(z);
  parentPort.postMessage({ id: m.id, bytes: copy }, [copy.buffer]);
});
`;

/** Threads used by writeCogFile: one per core, at most 4. */
export function cogThreads(): number {
  return Math.max(1, Math.min(4, availableParallelism()));
}

/**
 * Writes a grid as a COG file: overviews built in shared memory, tiles packed and deflated on `threads` worker
 * threads, written in COG order to `path`.partial as they arrive (at most a few tiles held), then the IFDs in front
 * and the file renamed to `path`. On failure the partial file is removed and nothing is left at `path`.
 */
export async function writeCogFile(
  path: string,
  values: Float32Array | Float64Array,
  width: number,
  height: number,
  opts: CogOptions & { threads?: number },
): Promise<{ bytes: number }> {
  const ts = checkOptions(width, height, opts);
  if (values.length !== width * height) throw new RangeError(`${values.length} values for ${width} × ${height} cells`);
  const shared = (n: number) => new Float32Array(new SharedArrayBuffer(n * 4));
  // Grids filled by worker threads already live in shared memory: the workers read them as they are, no copy.
  const inShared =
    values instanceof Float32Array && values.buffer instanceof SharedArrayBuffer && values.byteOffset === 0 && values.length === values.buffer.byteLength / 4;
  const full = inShared ? values : shared(width * height);
  if (!inShared) full.set(values);
  const levels = pyramid({ width, height, values: full }, ts, opts.resampling ?? 'average', shared);
  const jobs: { level: number; tx: number; ty: number; index: number }[] = [];
  for (let i = levels.length - 1; i >= 0; i--) {
    const { nx, ny } = tilesAcross(levels[i], ts);
    for (let ty = 0; ty < ny; ty++) for (let tx = 0; tx < nx; tx++) jobs.push({ level: i, tx, ty, index: ty * nx + tx });
  }
  const sizes = emptyArrays(levels, ts);
  const headerBytes = buildHeader(levels, ts, opts, emptyArrays(levels, ts), sizes).length;
  const partial = `${path}.partial`;
  const fh = await open(partial, 'w');
  const nThreads = Math.max(1, Math.min(opts.threads ?? cogThreads(), jobs.length));
  const workers: Worker[] = [];
  try {
    for (let k = 0; k < nThreads; k++) {
      const w = new Worker(WORKER_SOURCE, { eval: true, execArgv: [] });
      w.postMessage({
        type: 'init',
        levels: levels.map((l) => ({ width: l.width, height: l.height, buffer: (l.values as Float32Array).buffer })),
        ts,
        nodata: opts.nodata,
        level: opts.level ?? 6,
      });
      workers.push(w);
    }
    // Results are written strictly in job order; a small map holds those that finish early.
    const done = new Map<number, Uint8Array>();
    let next = 0,
      written = 0,
      pos = headerBytes;
    let failure: unknown = null;
    let writing: Promise<void> = Promise.resolve();
    const flush = async () => {
      while (done.has(written)) {
        const z = done.get(written)!;
        done.delete(written);
        const j = jobs[written];
        sizes[j.level][j.index] = z.length;
        const { leader, trailer } = leaderTrailer(z);
        const buf = Buffer.concat([leader, z, trailer]);
        await fh.write(buf, 0, buf.length, pos);
        pos += buf.length;
        written++;
      }
    };
    await new Promise<void>((resolve, reject) => {
      let active = 0;
      const fail = (e: unknown) => {
        if (failure === null) {
          failure = e;
          reject(e instanceof Error ? e : new Error(String(e)));
        }
      };
      const dispatch = (w: Worker) => {
        if (failure !== null) return;
        if (next >= jobs.length) {
          if (active === 0) writing.then(() => resolve(), fail);
          return;
        }
        const id = next++;
        active++;
        const j = jobs[id];
        w.postMessage({ id, level: j.level, tx: j.tx, ty: j.ty });
      };
      for (const w of workers) {
        w.on('message', (m: { id: number; bytes: Uint8Array }) => {
          active--;
          done.set(m.id, m.bytes);
          writing = writing.then(flush);
          writing.catch(fail);
          dispatch(w);
        });
        w.on('error', fail);
        w.on('exit', (code) => {
          if (code !== 0) fail(new Error(`COG worker exited with code ${code}`));
        });
      }
      for (const w of workers) dispatch(w);
    });
    if (written !== jobs.length) throw new Error(`COG writer wrote ${written} of ${jobs.length} tiles`);
    const offsets = placeTiles(levels, ts, headerBytes, sizes);
    const header = buildHeader(levels, ts, opts, offsets, sizes);
    await fh.write(header, 0, header.length, 0);
    await fh.close();
    await rename(partial, path);
    return { bytes: pos };
  } catch (e) {
    await fh.close().catch(() => undefined);
    await rm(partial, { force: true });
    throw e;
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
}
