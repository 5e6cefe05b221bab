// A project's terrain: a DEM GeoTIFF in EPSG:4326 or a projected EPSG CRS, reprojected to longitude/latitude and
// served as raster-dem tiles under the project; a DEM that is not a GeoTIFF, is over the size limit or claims more
// pixels than it holds is refused before its pixels are decoded, and the project does not change.
import { readFileSync } from 'node:fs';
import proj4 from 'proj4';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { DEMO_TERRAIN } from '../../server/demo.ts';
import { decodeTerrainRgb } from '../../shared/grid/terrain-rgb.ts';
import { decodePngRgb } from '../helpers/png.ts';

let t: TestApp;
let pid: string;
let token: string;

// UTM zone 6 north (EPSG:32606), as the EPSG registry defines it; the reference for the check below is proj4 itself.
const UTM6N = '+proj=utm +zone=6 +datum=WGS84 +units=m +no_defs';
const X0 = 500_000,
  Y0 = 3_350_000; // near 30.3° N, 147° W: open ocean (an invented survey area)
// Elevation linear in easting and northing: bilinear resampling reproduces it exactly.
const elevation = (x: number, y: number) => -4000 + 0.01 * (x - X0) + 0.005 * (Y0 - y);

function utmDem(): Uint8Array {
  const width = 120,
    height = 100,
    dx = 500,
    dy = 500;
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = elevation(X0 + (c + 0.5) * dx, Y0 - (r + 0.5) * dy);
  return writeGeoTiff({ width, height, west: X0, north: Y0, dx, dy, crs: 'EPSG:32606', units: 'm', values });
}

const post = (body: Uint8Array, type = 'image/tiff', headers: Record<string, string> = { authorization: `Bearer ${token}` }) =>
  t.app.request(`/api/projects/${pid}/terrain?name=Seamount%20DEM`, {
    method: 'POST',
    headers: { 'content-type': type, ...headers },
    body: body as Uint8Array<ArrayBuffer>,
  });
const terrainOf = async () => ((await (await t.app.request(`/api/projects/${pid}/datasets`)).json()) as { terrain: unknown }).terrain;

beforeAll(async () => {
  t = await startTestApp('terrain', { limits: { maxTerrainBytes: 2_000_000 } });
  ({ id: pid, editToken: token } = (await (await t.post('/api/projects', { title: 'terrain' })).json()) as { id: string; editToken: string });
});
afterAll(() => t.close());

describe('terrain uploads are checked before decoding', () => {
  it('refuses what is not a GeoTIFF (415), a file over the limit (413) and one claiming more pixels than it holds (422)', async () => {
    const png = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0]);
    const r1 = await post(png);
    expect(r1.status).toBe(415);
    expect(((await r1.json()) as { error: { code: string } }).error.code).toBe('not_geotiff');
    const demo = new Uint8Array(readFileSync(DEMO_TERRAIN));
    const r2 = await post(demo); // 669 kB of pixels + header: under 2 MB
    expect(r2.status).toBe(201);
    const big = new Uint8Array(2_000_001);
    big.set([0x49, 0x49, 0x2a, 0]);
    const r3 = await post(big);
    expect(r3.status).toBe(413);
    expect(((await r3.json()) as { error: { message: string } }).error.message).toContain('2000000 bytes');
    // The demo DEM cut short: its header still claims 410 × 408 Float32 pixels.
    const r4 = await post(demo.slice(0, 300_000));
    expect(r4.status).toBe(422);
    const e4 = (await r4.json()) as { error: { code: string; message: string } };
    expect(e4.error.code).toBe('truncated_geotiff');
    expect(e4.error.message).toMatch(/beyond the end of the file|holds/);
    expect((await post(demo, 'image/tiff', {})).status).toBe(401);
  });

  it('refuses a DEM whose CRS needs a datum grid file with that answer (crs_needs_datum_grid), not "not in the offline list"', async () => {
    // EPSG:27700 shifts its datum with the OSTN15 grid file in the EPSG registry's proj4 definition (epsg-index), which
    // is not shipped. The project is left as it was.
    const before = JSON.stringify(await terrainOf());
    const values = new Float32Array(4 * 4).fill(100);
    const gridShift = await post(writeGeoTiff({ width: 4, height: 4, west: 400_000, north: 300_000, dx: 50, dy: 50, crs: 'EPSG:27700', units: 'm', values }));
    expect(gridShift.status).toBe(422);
    const e = (await gridShift.json()) as { error: { code: string; message: string } };
    expect(e.error.code).toBe('crs_needs_datum_grid');
    expect(e.error.message).toContain('EPSG:27700');
    expect(e.error.message).toContain('grid file');
    expect(e.error.message).not.toContain('not in the offline CRS list');
    expect(JSON.stringify(await terrainOf())).toBe(before);
  });

  it('leaves the project unchanged when an upload is refused', async () => {
    const before = JSON.stringify(await terrainOf());
    expect((await post(new Uint8Array([0x49, 0x49, 0x2a, 0, 8, 0, 0, 0]))).status).toBe(422);
    expect(JSON.stringify(await terrainOf())).toBe(before);
  });
});

describe('a projected DEM', () => {
  it('is reprojected to longitude/latitude and served as raster-dem tiles under the project', async () => {
    const res = await post(utmDem());
    expect(res.status).toBe(201);
    const v = (await res.json()) as { sourceCrs: string; bbox: number[]; source: { tiles: string[]; encoding: string; minzoom: number } };
    expect(v.sourceCrs).toBe('EPSG:32606');
    expect(v.source.encoding).toBe('mapbox');
    // The UTM box's corners in lon/lat by proj4 (a general-purpose reference library) bound the lon/lat grid.
    const [w0, n0] = proj4(UTM6N, 'WGS84', [X0, Y0]);
    expect(v.bbox[0]).toBeLessThanOrEqual(w0 + 1e-9);
    expect(v.bbox[3]).toBeGreaterThanOrEqual(n0 - 1e-9);
    // A tile over the middle of the DEM, decoded with MapLibre's mapbox encoding (-10000 + 0.1·(R·65536 + G·256 + B)),
    // against the elevation function at that pixel's lon/lat projected by proj4.
    const [lon, lat] = proj4(UTM6N, 'WGS84', [X0 + 30_000, Y0 - 25_000]);
    const z = 10;
    const xf = ((lon + 180) / 360) * 2 ** z;
    const yf = ((1 - Math.log(Math.tan((lat * Math.PI) / 180) + 1 / Math.cos((lat * Math.PI) / 180)) / Math.PI) / 2) * 2 ** z;
    const tile = await t.app.request(`/api/projects/${pid}/terrain/${z}/${Math.floor(xf)}/${Math.floor(yf)}.png`);
    expect(tile.status).toBe(200);
    const { rgb, width } = decodePngRgb(new Uint8Array(await tile.arrayBuffer()));
    const px = Math.floor((xf % 1) * 256),
      py = Math.floor((yf % 1) * 256);
    const o = (py * width + px) * 3;
    // The pixel's own centre in lon/lat (Web Mercator inverse), projected to UTM by proj4.
    const plon = ((Math.floor(xf) + (px + 0.5) / 256) / 2 ** z) * 360 - 180;
    const plat = (Math.atan(Math.sinh(Math.PI * (1 - (2 * (Math.floor(yf) + (py + 0.5) / 256)) / 2 ** z))) * 180) / Math.PI;
    const [x, y] = proj4('WGS84', UTM6N, [plon, plat]);
    // Tolerance: the lon/lat grid is bilinear in lon/lat, not in UTM (curvature over a 500 m cell), plus the 0.1 m step.
    expect(Math.abs(decodeTerrainRgb(rgb[o], rgb[o + 1], rgb[o + 2]) - elevation(x, y))).toBeLessThan(1);
    const listed = (await terrainOf()) as { name: string };
    expect(listed.name).toBe('Seamount DEM');
  });
});
