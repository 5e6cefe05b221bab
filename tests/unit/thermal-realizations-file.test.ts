// `simulate --keep-realizations` writes every realization (raw float32 + JSON header + a GDAL VRT), and
// `isotherms --realizations-from` computes its percentile maps from those same fields.
//
// Checks against outside references:
// - GDAL (Debian's gdal-bin) opens the VRT as one band per realization on the GeoTIFFs' georeferencing, and
//   `gdallocationinfo` reads the same float32 as the data file at a pixel;
// - with one layer, no heat production and constant conductivity the geotherm is linear, T(z) = T0 + q·z/k
//   (Turcotte & Schubert 2002, eq. 4-31 with A = 0), so the depth to T is k·(T − T0)/q, decreasing in q. With 11
//   realizations the type-7 P10/P50/P90 (Hyndman & Fan 1996) are the 2nd, 6th and 10th order statistics exactly,
//   so the depth's P10 is k·(T − T0)/q₍₁₀₎ and its P90 k·(T − T0)/q₍₂₎, with q₍ᵢ₎ the sorted heat flows read from
//   the data file in the test.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdirSync, mkdtempSync, writeFileSync, existsSync, rmSync, readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { runCli, runCliJson } from '../helpers/cli.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';
import { requireGdal } from '../helpers/gdal.ts';

const root = new URL('../..', import.meta.url).pathname;
let dir = '';
const R = 11,
  NX = 8,
  NY = 6,
  K = 2.5,
  T0 = 15,
  T_ISO = 300;

/** Runs a verb in-process with `--json`; it must exit 0. */
async function cli(args: string[]): Promise<Record<string, any>> {
  const { code, json } = await runCliJson(args);
  expect(code).toBe(0);
  return json;
}
const tif = async (p: string) => {
  const b = readFileSync(p);
  return (await readGeoTiff(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength))).grid;
};

beforeAll(() => {
  mkdirSync(join(root, '.tmp'), { recursive: true });
  dir = mkdtempSync(join(root, '.tmp', 'realizations-file-'));
  const features = [];
  for (let i = 0; i < 5; i++)
    for (let j = 0; j < 5; j++)
      features.push({
        type: 'Feature',
        geometry: { type: 'Point', coordinates: [-128 + i * 0.1, -38 + j * 0.08] },
        properties: { id: `s${i}-${j}`, heatFlowMWm2: 55 + 4 * i + 3 * j + ((i * j) % 4) },
      });
  writeFileSync(join(dir, 'sites.geojson'), JSON.stringify({ type: 'FeatureCollection', features }));
  writeFileSync(
    join(dir, 'model.json'),
    JSON.stringify({ surfaceTemperatureC: T0, layers: [{ name: 'crust', bottomKm: 60, conductivityWmK: K, heatProductionUWm3: 0, densityKgM3: 2700 }] }),
  );
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('realizations file', () => {
  it('simulate --keep-realizations writes the stack; GDAL reads it as one band per realization; isotherms --realizations-from uses those fields', async () => {
    const sim = join(dir, 'sim');
    const s = await cli([
      'simulate',
      '--points',
      join(dir, 'sites.geojson'),
      '--bbox=-128.05,-38.05,-127.55,-37.63',
      '--size',
      `${NX}x${NY}`,
      '--realizations',
      String(R),
      '--seed',
      '5',
      '--keep-realizations',
      '--out-dir',
      sim,
    ]);
    const headerPath = join(sim, 'heatFlowMWm2.realizations.json');
    expect(s.files).toContain(headerPath);
    const header = JSON.parse(readFileSync(headerPath, 'utf8')) as Record<string, any>;
    expect(header).toMatchObject({ format: 'subtherm-realizations', realizations: R, width: NX, height: NY, units: 'mW/m²', seed: 5 });
    const raw = readFileSync(join(sim, header.dataFile as string));
    expect(raw.byteLength).toBe(4 * R * NX * NY);
    const q = (r: number, c: number) => raw.readFloatLE(4 * (r * NX * NY + c));
    // The mean layer is the mean of the kept realizations (float32 rounding).
    const mean = await tif(join(sim, 'heatFlowMWm2.mean.tif'));
    for (const c of [0, 17, NX * NY - 1]) {
      let m = 0;
      for (let r = 0; r < R; r++) m += q(r, c);
      expect(mean.values[c]).toBeCloseTo(m / R, 3);
    }

    // GDAL reads the realizations' VRT as the reference reader: without it this check fails, it does not skip.
    requireGdal('gdalinfo', 'gdallocationinfo');
    const vrt = join(sim, 'heatFlowMWm2.realizations.vrt');
    const info = JSON.parse(spawnSync('gdalinfo', ['-json', vrt], { encoding: 'utf8' }).stdout) as {
      size: number[];
      bands: unknown[];
      geoTransform: number[];
    };
    const ref = JSON.parse(spawnSync('gdalinfo', ['-json', join(sim, 'heatFlowMWm2.mean.tif')], { encoding: 'utf8' }).stdout) as { geoTransform: number[] };
    expect(info.size).toEqual([NX, NY]);
    expect(info.bands.length).toBe(R);
    for (let i = 0; i < 6; i++) expect(info.geoTransform[i]).toBeCloseTo(ref.geoTransform[i], 12);
    const col = 5,
      row = 2;
    const v = Number(spawnSync('gdallocationinfo', ['-valonly', '-b', '4', vrt, String(col), String(row)], { encoding: 'utf8' }).stdout.trim());
    expect(v).toBe(q(3, row * NX + col));

    const iso = join(dir, 'iso');
    await cli([
      'isotherms',
      '--heat-flow',
      join(sim, 'heatFlowMWm2.mean.tif'),
      '--model',
      join(dir, 'model.json'),
      '--isotherms',
      String(T_ISO),
      '--realizations-from',
      headerPath,
      '--out-dir',
      iso,
    ]);
    const p10 = await tif(join(iso, 'depth-300C.p10.tif'));
    const p50 = await tif(join(iso, 'depth-300C.p50.tif'));
    const p90 = await tif(join(iso, 'depth-300C.p90.tif'));
    for (let c = 0; c < NX * NY; c++) {
      const qs = Array.from({ length: R }, (_, r) => q(r, c)).sort((a, b) => a - b);
      const depth = (qm: number) => (K * (T_ISO - T0)) / qm; // km for q in mW/m²
      expect(p10.values[c]).toBeCloseTo(depth(qs[9]), 3);
      expect(p50.values[c]).toBeCloseTo(depth(qs[5]), 3);
      expect(p90.values[c]).toBeCloseTo(depth(qs[1]), 3);
    }
  }, 400_000);

  it('refuses a file on another grid, and a data file that changed, naming the option', async () => {
    const sim = join(dir, 'sim');
    const other = join(dir, 'other');
    await cli(['simulate', '--points', join(dir, 'sites.geojson'), '--size', '4x3', '--realizations', '2', '--seed', '1', '--out-dir', other]);
    const args = (h: string) => [
      'isotherms',
      '--heat-flow',
      join(other, 'heatFlowMWm2.mean.tif'),
      '--model',
      join(dir, 'model.json'),
      '--realizations-from',
      h,
      '--out-dir',
      join(dir, 'x'),
    ];
    // Exit 2 with one JSON error naming the code and the option (the CLI's error contract).
    const fails = async (argv: string[]): Promise<string> => {
      const { code, err } = await runCli([...argv, '--json']);
      expect(code).toBe(2);
      return err;
    };

    expect(await fails(args(join(sim, 'heatFlowMWm2.realizations.json')))).toMatch(/not on the heat-flow grid/);
    const data = join(sim, 'heatFlowMWm2.realizations.f32');
    const b = readFileSync(data);
    b[0] ^= 1;
    writeFileSync(data, b);
    const changed = [
      'isotherms',
      '--heat-flow',
      join(sim, 'heatFlowMWm2.mean.tif'),
      '--model',
      join(dir, 'model.json'),
      '--realizations-from',
      join(sim, 'heatFlowMWm2.realizations.json'),
      '--out-dir',
      join(dir, 'y'),
    ];
    expect(await fails(changed)).toMatch(/SHA-256[\s\S]*field realizations-from/);
    expect(existsSync(join(dir, 'y', 'summary.json'))).toBe(false);
  }, 200_000);
});
