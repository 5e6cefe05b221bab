// A grid data set (kind grid, an external drift's covariate) and a project's terrain share the GeoTIFF header checks
// made before any pixel is decoded; each refusal names the upload it refuses: "the grid …" for a grid data set,
// "the terrain …" for a terrain. Files with several bands or without georeferencing are written by GDAL's
// gdal_create (Debian gdal-bin), not by the project's own writer.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { requireGdal } from '../helpers/gdal.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';

const MAX_BYTES = 200_000;
let t: TestApp;
let pid: string;
let token: string;
let dir = '';

beforeAll(async () => {
  t = await startTestApp('grid-wording', { limits: { maxTerrainBytes: MAX_BYTES } });
  ({ id: pid, editToken: token } = (await (await t.post('/api/projects', { title: 'grid wording' })).json()) as { id: string; editToken: string });
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'grid-wording-'));
});
afterAll(async () => {
  await t.close();
  rmSync(dir, { recursive: true, force: true });
});

type Refusal = { status: number; code: string; message: string };
const refusal = async (r: Response): Promise<Refusal> => {
  const e = ((await r.json()) as { error: { code: string; message: string } }).error;
  return { status: r.status, code: e.code, message: e.message };
};
const body = (b: Uint8Array) => b as Uint8Array<ArrayBuffer>;
/** The three places a GeoTIFF is uploaded: a grid data set (global and in a project) and the project's terrain. */
const uploads = {
  grid: (b: Uint8Array) => t.app.request('/api/datasets?kind=grid', { method: 'POST', headers: { 'content-type': 'image/tiff' }, body: body(b) }),
  projectGrid: (b: Uint8Array) =>
    t.app.request(`/api/projects/${pid}/datasets?kind=grid`, {
      method: 'POST',
      headers: { 'content-type': 'image/tiff', authorization: `Bearer ${token}` },
      body: body(b),
    }),
  terrain: (b: Uint8Array) =>
    t.app.request(`/api/projects/${pid}/terrain`, {
      method: 'POST',
      headers: { 'content-type': 'image/tiff', authorization: `Bearer ${token}` },
      body: body(b),
    }),
};

/** A small valid one-band grid in EPSG:4326 (invented values). */
function goodGrid(): Uint8Array {
  const values = new Float32Array(40 * 30).map((_, i) => 100 + (i % 40));
  return writeGeoTiff({ width: 40, height: 30, west: -128.5, north: -37.5, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units: 'm', values });
}

/** A GeoTIFF written by gdal_create (GDAL as an outside writer). */
function gdalTiff(name: string, args: string[]): Uint8Array {
  requireGdal('gdal_create');
  const f = join(dir, name);
  const r = spawnSync('gdal_create', ['-q', '-of', 'GTiff', '-outsize', '8', '6', '-ot', 'Float32', '-burn', '5', ...args, f], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`gdal_create ${args.join(' ')}: ${r.stderr}`);
  return new Uint8Array(readFileSync(f));
}

/** The same bad file through each upload: the grid uploads say "the grid", the terrain upload "the terrain". */
async function expectWording(file: Uint8Array, status: number, code: string, says: RegExp): Promise<void> {
  for (const [where, send] of Object.entries(uploads)) {
    const e = await refusal(await send(file));
    const noun = where === 'terrain' ? 'the terrain' : 'the grid';
    expect(e.status, `${where}: ${e.message}`).toBe(status);
    expect(e.code, where).toBe(code === 'too large' ? (where === 'terrain' ? 'terrain_too_large' : 'too_large') : code);
    expect(e.message, where).toMatch(new RegExp(`^${noun} ${says.source}`));
    if (where !== 'terrain') expect(e.message, where).not.toMatch(/terrain|DEM/);
  }
}

describe('grid data set and terrain uploads name what they refuse', () => {
  it('not a TIFF (415), over the byte limit (413) and truncated (422): "the grid …" and "the terrain …"', async () => {
    const held = async () => JSON.stringify(await (await t.app.request(`/api/projects/${pid}/datasets`)).json());
    const before = await held();
    await expectWording(new TextEncoder().encode('elevation,value\n1,2\n'), 415, 'not_geotiff', /is not a GeoTIFF/);
    const big = new Uint8Array(MAX_BYTES + 1);
    big.set([0x49, 0x49, 0x2a, 0]);
    await expectWording(big, 413, 'too large', new RegExp(`is ${MAX_BYTES + 1} bytes, over the limit of ${MAX_BYTES} bytes`));
    // A valid grid cut short: its header still claims 40 × 30 Float32 pixels.
    const good = goodGrid();
    await expectWording(good.slice(0, good.length - 1000), 422, 'truncated_geotiff', /claims (pixel data up to byte|40 × 30 pixels)/);
    // Nothing of the project changed on a refusal; the whole file is accepted as a grid and as a terrain.
    expect(await held()).toBe(before);
    expect((await uploads.projectGrid(good)).status).toBe(201);
    expect((await uploads.terrain(good)).status).toBe(201);
  });

  it('several bands and no georeferencing (422, files from gdal_create): "the grid …" and "the terrain …"', async () => {
    const twoBands = gdalTiff('two-bands.tif', ['-bands', '2', '-a_srs', 'EPSG:4326', '-a_ullr', '-128.5', '-37.5', '-128.42', '-37.56']);
    await expectWording(twoBands, 422, 'bad_geotiff', /has 2 bands; a (grid data set has one \(the covariate\)|DEM has one \(elevation in metres\))/);
    const bare = gdalTiff('bare.tif', ['-bands', '1']);
    await expectWording(bare, 422, 'bad_geotiff', /has no georeferencing/);
  });
});
