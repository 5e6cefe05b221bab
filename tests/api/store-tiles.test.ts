// Map tiles of a stored layer read only what they need from the store, in both stores: the COG's header once per
// layer, then, per tile, the compressed tiles it samples (bytes counted through the Store interface). The byte ranges
// are checked against the file's own tile offset and byte-count tables as geotiff.js reads them from the whole file
// (docs/sources.md#tiff-tile-tables), the tiles against the ones rendered from the whole file
// on disk, and the download against GDAL's gdalinfo. Stores made before blobs were chunked are migrated.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { fromArrayBuffer } from 'geotiff';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { MIGRATIONS } from '../../server/store/sqlite-schema.ts';
import { PostgresStore, PG_MIGRATIONS, migratePostgres } from '../../server/store/postgres.ts';
import { BLOB_CHUNK_BYTES } from '../../server/store/sql-store.ts';
import { StoredBlobSource } from '../../server/store/blob-source.ts';
import type { RunRecord, Store } from '../../server/store/types.ts';
import { GeoTiffFile, writeGeoTiff } from '../../server/io/geotiff.ts';
import { gridTileRoutes } from '../../server/routes/grid-tiles.ts';
import { startPgCluster, type PgCluster } from '../helpers/pg-cluster.ts';
import { prng } from '../helpers/prng.ts';
import { requireGdal } from '../helpers/gdal.ts';

const ROOT = new URL('../..', import.meta.url).pathname;
mkdirSync(join(ROOT, '.tmp'), { recursive: true });

/** A 1536 × 1024 heat-flow layer (6 COG tiles at full resolution) in the invented demo region, with fine noise. */
function layer(): Uint8Array {
  const width = 1536,
    height = 1024,
    rnd = prng(7);
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = 60 + 20 * Math.sin(c / 90) * Math.cos(r / 70) + rnd() * 4;
  return writeGeoTiff({ width, height, west: -129, north: -37, dx: 0.0005, dy: 0.0005, crs: 'EPSG:4326', values, units: 'mW/m²' });
}

/** The (offset, length) of every tile of every image of a GeoTIFF, and where tile data starts (after the header). */
async function tileTable(bytes: Uint8Array): Promise<{ tiles: Set<string>; headerBytes: number }> {
  const tiff = await fromArrayBuffer(bytes.slice().buffer);
  const tiles = new Set<string>();
  let headerBytes = Infinity;
  for (let i = 0, n = await tiff.getImageCount(); i < n; i++) {
    const fd = (await tiff.getImage(i)).fileDirectory as unknown as { loadValue(k: string): Promise<ArrayLike<number>> };
    const offsets = await fd.loadValue('TileOffsets');
    const counts = await fd.loadValue('TileByteCounts');
    for (let k = 0; k < offsets.length; k++) {
      tiles.add(`${offsets[k]}+${counts[k]}`);
      headerBytes = Math.min(headerBytes, offsets[k] - 4); // each tile is led by its byte count (uint32)
    }
  }
  return { tiles, headerBytes };
}

/** Slippy-map tile of a point (Web Mercator, the scheme MapLibre requests). */
function tileOf(lon: number, lat: number, z: number): [number, number] {
  const n = 2 ** z,
    phi = (lat * Math.PI) / 180;
  return [Math.floor(((lon + 180) / 360) * n), Math.floor(((1 - Math.log(Math.tan(phi) + 1 / Math.cos(phi)) / Math.PI) / 2) * n)];
}

/** The store with every blob byte it hands out counted. */
function counting(store: Store): { store: Store; bytes: () => number; wholeReads: () => number } {
  let bytes = 0,
    whole = 0;
  const wrapped = new Proxy(store, {
    get(target, key, receiver) {
      const v = Reflect.get(target, key, receiver) as unknown;
      if (key === 'readBlobChunks')
        return async (hash: string, a: number, b: number) => {
          const got = await target.readBlobChunks(hash, a, b);
          for (const c of got) bytes += c.byteLength;
          return got;
        };
      if (key === 'getBlob' || key === 'getRunFile') whole++;
      return typeof v === 'function' ? (v as (...x: unknown[]) => unknown).bind(target) : v;
    },
  });
  return { store: wrapped, bytes: () => bytes, wholeReads: () => whole };
}

const runRecord = (id: string): RunRecord => {
  const now = new Date().toISOString();
  return {
    id,
    cacheKey: id,
    request: {},
    status: 'done',
    progress: 1,
    message: 'done',
    layers: [],
    summary: null,
    warnings: [],
    model: null,
    grids: [],
    client: 'c',
    createdAt: now,
    updatedAt: now,
  };
};

interface Backend {
  store: Store;
  close(): Promise<void>;
}
const backends: [string, () => Promise<Backend>][] = [
  [
    'SQLite',
    async () => {
      const dir = mkdtempSync(join(ROOT, '.tmp', 'store-tiles-'));
      const store = new SqliteStore(join(dir, 'db.sqlite'));
      return { store, close: async () => (await store.close(), rmSync(dir, { recursive: true, force: true })) };
    },
  ],
];
let cluster: PgCluster | null = null;
backends.push([
  'PostgreSQL',
  async () => {
    cluster = startPgCluster(ROOT);
    const store = await PostgresStore.open(cluster.url, { max: 4 });
    return { store, close: async () => (await store.close(), cluster?.stop()) };
  },
]);

describe.each(backends)('map tiles from the %s store', (_name, make) => {
  let b: Backend;
  let cog: Uint8Array;
  const dir = mkdtempSync(join(ROOT, '.tmp', 'store-tiles-files-'));
  beforeAll(async () => {
    b = await make();
    cog = layer();
    await b.store.putRun(runRecord('run1'));
    await b.store.storeRunResult('run1', { files: [{ name: 'heat-flow', ext: 'tif', bytes: cog, contentType: 'image/tiff' }], grids: [], record: {} });
  }, 120_000);
  afterAll(async () => {
    await b?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('reads the header once, then per tile only the compressed tiles it samples; tiles equal the whole file’s', async () => {
    const { tiles: table, headerBytes } = await tileTable(cog);
    const c = counting(b.store);
    const ranges: { offset: number; length: number }[] = [];
    const fromStore = gridTileRoutes({
      openLayerFile: async (runId, name) => {
        const f = (await c.store.findRunFile(runId, name, 'tif'))!;
        const source = new StoredBlobSource(c.store, f.hash, f.size);
        const fetch = source.fetch.bind(source);
        source.fetch = async (slices) => (ranges.push(...slices), fetch(slices));
        return GeoTiffFile.openSource(source, name);
      },
    });
    const path = join(dir, 'whole.tif');
    writeFileSync(path, cog);
    const fromFile = gridTileRoutes({ openLayerFile: async () => GeoTiffFile.open(path) });

    expect((await fromStore.request('/runs/run1/tiles/heat-flow.json')).status).toBe(200);
    const opened = c.bytes();
    // Opening reads the header (IFDs and tile tables), rounded up to whole chunks.
    expect(opened).toBeLessThanOrEqual(Math.ceil(headerBytes / BLOB_CHUNK_BYTES) * BLOB_CHUNK_BYTES);
    let total = opened;
    for (const [z, lon, lat] of [
      [13, -128.9, -37.1],
      [13, -128.4, -37.4],
      [11, -128.6, -37.25],
      [9, -128.6, -37.25],
    ] as const) {
      const [x, y] = tileOf(lon, lat, z);
      const before = c.bytes(),
        asked = ranges.length;
      const res = await fromStore.request(`/runs/run1/tiles/heat-flow/${z}/${x}/${y}.png`);
      expect(res.status).toBe(200);
      const read = c.bytes() - before;
      const tileRanges = ranges.slice(asked).filter((s) => s.offset >= headerBytes);
      // Every range read past the header is one compressed tile of the file, and the store gave no more than those
      // tiles' bytes, each rounded out to chunk boundaries.
      for (const s of tileRanges) expect(table.has(`${s.offset}+${s.length}`)).toBe(true);
      const tileBytes = tileRanges.reduce((n, s) => n + s.length, 0);
      expect(tileRanges.length).toBeGreaterThan(0);
      // Header ranges read again (entries of the tile tables, which geotiff.js loads lazily) cost at most the header.
      const headerAgain = ranges.slice(asked).some((s) => s.offset < headerBytes) ? Math.ceil(headerBytes / BLOB_CHUNK_BYTES) * BLOB_CHUNK_BYTES : 0;
      expect(read).toBeLessThanOrEqual(tileBytes + 2 * BLOB_CHUNK_BYTES * tileRanges.length + headerAgain);
      console.log(`${_name} z${z}: ${read} bytes read from the store for ${tileRanges.length} COG tile(s) of ${tileBytes} bytes; header ${headerBytes} bytes`);
      if (z === 13) expect(read).toBeLessThan(cog.byteLength / 4); // one of the six full-resolution tiles
      total += read;
      const whole = await fromFile.request(`/runs/run1/tiles/heat-flow/${z}/${x}/${y}.png`);
      expect(Buffer.from(await res.arrayBuffer()).equals(Buffer.from(await whole.arrayBuffer()))).toBe(true);
    }
    expect(c.wholeReads()).toBe(0);
    expect(total).toBeLessThan(cog.byteLength);
  }, 120_000);

  it('gives the whole file back for download, which gdalinfo opens', async () => {
    const f = (await b.store.getRunFile('run1', 'heat-flow', 'tif'))!;
    expect(Buffer.from(f.bytes).equals(Buffer.from(cog))).toBe(true);
    const path = join(dir, 'download.tif');
    writeFileSync(path, f.bytes);
    requireGdal('gdalinfo');
    const info = JSON.parse(execFileSync('gdalinfo', ['-json', path]).toString()) as { size: number[]; bands: { type: string }[] };
    expect(info.size).toEqual([1536, 1024]);
    expect(info.bands[0].type).toBe('Float32');
  });
});

describe('stores made before blobs were chunked', () => {
  const bytes = Uint8Array.from({ length: 3 * BLOB_CHUNK_BYTES + 123 }, (_, k) => (k * 31 + 7) % 251);
  const hash = createHash('sha256').update(bytes).digest('hex');

  it('SQLite: migration cuts existing blobs into chunks and drops the old column', async () => {
    const dir = mkdtempSync(join(ROOT, '.tmp', 'store-migrate-'));
    const path = join(dir, 'db.sqlite');
    const db = new Database(path);
    const before = MIGRATIONS.findIndex((m) => m.includes('CREATE TABLE blob_chunks'));
    for (let v = 0; v < before; v++) db.exec(MIGRATIONS[v]);
    db.pragma(`user_version = ${before}`);
    db.prepare('INSERT INTO blobs (hash, size, bytes) VALUES (?, ?, ?)').run(hash, bytes.length, Buffer.from(bytes));
    db.prepare('INSERT INTO blobs (hash, size, bytes) VALUES (?, 0, ?)').run('e'.repeat(64), Buffer.alloc(0));
    db.close();
    const store = new SqliteStore(path);
    expect(Buffer.from((await store.getBlob(hash))!).equals(Buffer.from(bytes))).toBe(true);
    expect((await store.getBlob('e'.repeat(64)))!.length).toBe(0);
    expect((await store.readBlobChunks(hash, 3, 3))[0].length).toBe(123);
    expect((store.db.prepare('PRAGMA table_info(blobs)').all() as { name: string }[]).map((c) => c.name)).toEqual(['hash', 'size']);
    await store.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('PostgreSQL: migration cuts existing blobs into chunks and drops the old column', async () => {
    const pg = startPgCluster(ROOT);
    try {
      const { default: pgLib } = await import('pg');
      const pool = new pgLib.Pool({ connectionString: pg.url, max: 2 });
      await pool.query('CREATE TABLE subtherm_migrations (version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TIMESTAMPTZ NOT NULL DEFAULT now())');
      for (let v = 1; v < PG_MIGRATIONS.length; v++) {
        await pool.query(PG_MIGRATIONS[v - 1].sql);
        await pool.query('INSERT INTO subtherm_migrations (version, name) VALUES ($1, $2)', [v, PG_MIGRATIONS[v - 1].name]);
      }
      await pool.query('INSERT INTO blobs (hash, size, bytes) VALUES ($1, $2, $3)', [hash, bytes.length, Buffer.from(bytes)]);
      expect(await migratePostgres(pool)).toBe(1);
      await pool.end();
      const store = await PostgresStore.open(pg.url, { max: 2 });
      expect(Buffer.from((await store.getBlob(hash))!).equals(Buffer.from(bytes))).toBe(true);
      expect((await store.readBlobChunks(hash, 0, 3)).map((c) => c.length)).toEqual([BLOB_CHUNK_BYTES, BLOB_CHUNK_BYTES, BLOB_CHUNK_BYTES, 123]);
      const cols = await store.pool.query<{ column_name: string }>(
        "SELECT column_name FROM information_schema.columns WHERE table_name = 'blobs' ORDER BY ordinal_position",
      );
      expect(cols.rows.map((r) => r.column_name)).toEqual(['hash', 'size']);
      await store.close();
    } finally {
      pg.stop();
    }
  }, 120_000);
});
