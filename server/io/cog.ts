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
 * the run workers, where it is already off the main thread); `writeCogFile` packs tiles on the calling thread and
 * deflates them on node:zlib's thread pool into a temporary file in COG order, writes the IFDs in front and renames
 * it.
 */
import { deflate, deflateSync } from 'node:zlib';
import { open, rename, rm, type FileHandle } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { packTileFp, pyramid, tilesAcross, type Level } from './cog-tiles.ts';
import { buildHeader, checkOptions, emptyArrays, leaderTrailer, placeTiles, type CogOptions } from './cog-header.ts';

export { COG_TILE_SIZE, halveGrid, packTileFp } from './cog-tiles.ts';
export type { CogGeo, CogOptions } from './cog-header.ts';

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
// The file writer: tiles packed on this thread, deflated on node:zlib's thread pool.

/** Tiles deflated at once by writeCogFile: one per core, at most 4 (libuv's thread pool has 4 threads by default). */
export function cogThreads(): number {
  return Math.max(1, Math.min(4, availableParallelism()));
}

interface TileJob {
  level: number;
  tx: number;
  ty: number;
  /** Row-major tile index within the level. */
  index: number;
}

/** Every tile, smallest level first and row-major within a level: the order of the data in a COG. */
function cogJobs(levels: Level[], ts: number): TileJob[] {
  const jobs: TileJob[] = [];
  for (let i = levels.length - 1; i >= 0; i--) {
    const { nx, ny } = tilesAcross(levels[i], ts);
    for (let ty = 0; ty < ny; ty++) for (let tx = 0; tx < nx; tx++) jobs.push({ level: i, tx, ty, index: ty * nx + tx });
  }
  return jobs;
}

/**
 * Writes compressed tiles to a file strictly in job order from `pos` (each with its leader and trailer), holding
 * those that finish early, and records their sizes.
 */
class OrderedTileWriter {
  written = 0;
  private readonly done = new Map<number, Uint8Array>();
  private chain: Promise<void> = Promise.resolve();

  constructor(
    private readonly fh: FileHandle,
    private readonly jobs: TileJob[],
    private readonly sizes: Uint32Array[],
    public pos: number,
  ) {}

  /** Takes job `id`'s tile; the promise settles when every tile in order so far is written. */
  add(id: number, z: Uint8Array): Promise<void> {
    this.done.set(id, z);
    this.chain = this.chain.then(() => this.flush());
    return this.chain;
  }

  /** Settles when the writes so far have. */
  settled(): Promise<void> {
    return this.chain;
  }

  private async flush(): Promise<void> {
    while (this.done.has(this.written)) {
      const z = this.done.get(this.written)!;
      this.done.delete(this.written);
      const j = this.jobs[this.written];
      this.sizes[j.level][j.index] = z.length;
      const { leader, trailer } = leaderTrailer(z);
      const buf = Buffer.concat([leader, z, trailer]);
      await this.fh.write(buf, 0, buf.length, this.pos);
      this.pos += buf.length;
      this.written++;
    }
  }
}

/**
 * Packs the jobs' tiles on this thread and deflates them on node:zlib's thread pool, `threads` at a time, into
 * `sink`; resolves when all are written. The output chunk holds a whole tile's stream, so each tile is one pass on
 * the pool (zlib's default 16 KiB chunks would come back to this thread every 16 KiB).
 */
function compressTiles(levels: Level[], ts: number, opts: CogOptions, threads: number, jobs: TileJob[], sink: OrderedTileWriter): Promise<void> {
  const chunkSize = ts * ts * 4 + 1024; // above zlib's deflateBound for one tile
  const row = new Float32Array(ts);
  return new Promise<void>((resolve, reject) => {
    let next = 0,
      active = 0;
    let failure: unknown = null;
    const fail = (e: unknown) => {
      if (failure === null) {
        failure = e;
        reject(e instanceof Error ? e : new Error(String(e)));
      }
    };
    const dispatch = () => {
      while (failure === null && active < threads && next < jobs.length) {
        const id = next++;
        const j = jobs[id],
          l = levels[j.level];
        const packed = new Uint8Array(ts * ts * 4);
        packTileFp(l.values, l.width, l.height, j.tx, j.ty, ts, opts.nodata, packed, row);
        active++;
        deflate(packed, { level: opts.level ?? 6, chunkSize }, (err, z) => {
          active--;
          if (err !== null) return fail(err);
          sink.add(id, z).catch(fail);
          dispatch();
        });
      }
      if (failure === null && active === 0 && next >= jobs.length) sink.settled().then(() => resolve(), fail);
    };
    dispatch();
  });
}

/**
 * Writes a grid as a COG file: overviews built once, tiles packed on this thread and deflated `threads` at a time on
 * node:zlib's thread pool (so both cores work while this thread packs the next tiles), written in COG order to
 * `path`.partial as they arrive (at most a few tiles held), then the IFDs in front and the file renamed to `path`.
 * The grid is read where it is: no copy of it is made. On failure the partial file is removed and nothing is left
 * at `path`.
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
  const levels = pyramid({ width, height, values }, ts, opts.resampling ?? 'average', (n) => new Float32Array(n));
  const jobs = cogJobs(levels, ts);
  const sizes = emptyArrays(levels, ts);
  const headerBytes = buildHeader(levels, ts, opts, emptyArrays(levels, ts), sizes).length;
  const partial = `${path}.partial`;
  const fh = await open(partial, 'w');
  try {
    const sink = new OrderedTileWriter(fh, jobs, sizes, headerBytes);
    await compressTiles(levels, ts, opts, Math.max(1, opts.threads ?? cogThreads()), jobs, sink);
    if (sink.written !== jobs.length) throw new Error(`COG writer wrote ${sink.written} of ${jobs.length} tiles`);
    const header = buildHeader(levels, ts, opts, placeTiles(levels, ts, headerBytes, sizes), sizes);
    await fh.write(header, 0, header.length, 0);
    await fh.close();
    await rename(partial, path);
    return { bytes: sink.pos };
  } catch (e) {
    await fh.close().catch(() => undefined);
    await rm(partial, { force: true });
    throw e;
  }
}
