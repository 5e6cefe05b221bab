// isotherms --points: the Monte Carlo's heat flow comes from conditional simulations of the sites on the heat-flow
// grid. Conditional simulation honours the data (Journel & Huijbregts 1978, §VII.C): with no nugget, every
// realization equals a datum at its location, so in a cell centred on a site the depth to an isotherm is the same in
// every realization, z = (T − T0)·k/q (Turcotte & Schubert 2002, eq. 4-31 with A = 0), and P10 = P50 = P90 there;
// far from the sites the realizations spread.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { writeGeoTiff, readGeoTiff } from '../../server/io/geotiff.ts';
import { runCliJson } from '../helpers/cli.ts';
import { writeLinearModel, writeSites } from '../helpers/linear-geotherm.ts';

const K_WMK = 2.5,
  T0 = 10,
  Q_SITE = 72;
let dir: string;

beforeAll(() => {
  dir = mkdtempSync(join(process.cwd(), '.tmp-iso-points-'));
  // 10 × 10 cells of 0.04°; site s0 sits on the centre of cell (row 4, column 5).
  const grid = { width: 10, height: 10, west: 10, north: 0.4, dx: 0.04, dy: 0.04, crs: 'EPSG:4326', units: 'mW/m²', values: new Float32Array(100).fill(65) };
  writeFileSync(join(dir, 'hf.tif'), Buffer.from(writeGeoTiff(grid)));
  const sites = [
    [10.22, 0.22, Q_SITE],
    [10.05, 0.05, 60],
    [10.35, 0.06, 64],
    [10.06, 0.36, 58],
    [10.3, 0.34, 70],
  ];
  writeSites(join(dir, 'sites.geojson'), { lon: sites.map((p) => p[0]), lat: sites.map((p) => p[1]), q: sites.map((p) => p[2]) });
  writeLinearModel(join(dir, 'model.json'), T0, K_WMK);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('isotherms --points', () => {
  it('honours the site in its cell (P10 = P90 = the analytic depth) and spreads away from the sites', async () => {
    const { code, json } = await runCliJson([
      'isotherms',
      '--heat-flow',
      join(dir, 'hf.tif'),
      '--model',
      join(dir, 'model.json'),
      '--out-dir',
      join(dir, 'out'),
      '--isotherms',
      '300',
      '--points',
      join(dir, 'sites.geojson'),
      '--variogram',
      'exponential:0,16,40',
      '--transform',
      'none',
      '--neighbors',
      'all',
      '--realizations',
      '60',
      '--seed',
      '3',
    ]);
    expect(code).toBe(0);
    const summary = json as { monteCarlo: { heatFlow: string; heatFlowErrorCorrelation: unknown } };
    expect(summary.monteCarlo.heatFlow).toMatch(/conditional simulations of the sites/);
    expect(summary.monteCarlo.heatFlowErrorCorrelation).toBeNull();
    const tif = async (name: string) => (await readGeoTiff(readFileSync(join(dir, 'out', name)))).grid.values;
    const p10 = await tif('depth-300C.p10.tif'),
      p90 = await tif('depth-300C.p90.tif');
    const c = 4 * 10 + 5;
    const z = ((300 - T0) * K_WMK) / Q_SITE; // km, with q in mW/m²
    expect(Math.abs(p10[c] - z)).toBeLessThan(1e-3);
    expect(Math.abs(p90[c] - z)).toBeLessThan(1e-3);
    // A corner cell far from every site spreads.
    expect(p90[9 * 10 + 0] - p10[9 * 10 + 0]).toBeGreaterThan(0.1);
  }, 60_000);
});
