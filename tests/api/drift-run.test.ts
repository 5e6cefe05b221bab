// A run whose interpolation.trend names a grid data set (drift:<datasetId>): kriging with an external drift
// (docs/sources.md#external-drift) through the real run worker. The covariate is uploaded as a data set of kind grid
// (a GeoTIFF, checked before decoding); the run's heat-flow map equals `subtherm interpolate --trend drift:G.tif` on
// the same sites, options and file, and at three cells R gstat's krige(z ~ s) (Debian r-cran-gstat; Pebesma 2004)
// with the covariate from the grid's own formula: s = 100 + 3·c + 2·r + 0.5·c·r at cell (column c, row r), bilinear
// in the fractional cell position, so the bilinear read reproduces it exactly.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { runCliJson } from '../helpers/cli.ts';
import { runSummarySchema } from '../../shared/schema/run.ts';
import { readGeoTiff, writeGeoTiff } from '../../server/io/geotiff.ts';
import { localProjectionFor, lonLatToLocalKm } from '../../shared/interp/projection.ts';

const W = -129.5,
  N = -36.7,
  D = 0.05,
  NX = 80,
  NY = 50;
const sAt = (c: number, r: number) => 100 + 3 * c + 2 * r + 0.5 * c * r;
const covariateOf = (lon: number, lat: number) => sAt((lon - W) / D - 0.5, (N - lat) / D - 0.5);
const tif = new Uint8Array(
  writeGeoTiff({
    width: NX,
    height: NY,
    west: W,
    north: N,
    dx: D,
    dy: D,
    crs: 'EPSG:4326',
    units: 'm',
    values: Float32Array.from({ length: NX * NY }, (_, i) => sAt(i % NX, Math.floor(i / NX))),
  }),
);
const BBOX = [-129.1, -38.9, -126.9, -37.1] as const;
const SIZE = [22, 18] as const;
const MODEL = { model: 'spherical', nugget: 20, partialSill: 150, rangeKm: 120 } as const;
const SITES = new URL('../../fixtures/demo/sites.geojson', import.meta.url);

let t: TestApp;
let dir: string;
beforeAll(async () => {
  t = await startTestApp('drift-run');
  dir = mkdtempSync(join(process.env.TMPDIR ?? process.cwd(), 'drift-run-'));
  writeFileSync(join(dir, 'thickness.tif'), tif);
});
afterAll(async () => {
  await t.close();
  rmSync(dir, { recursive: true, force: true });
});

const upload = (body: Uint8Array<ArrayBuffer> | string, type: string, kind = 'grid') =>
  t.app.request(`/api/datasets?kind=${kind}`, { method: 'POST', headers: { 'content-type': type }, body });

describe('a run with an external drift from a grid data set', () => {
  it('equals interpolate --trend drift:G.tif and R gstat krige(z ~ s); the summary records the drift; bad grids and ids are 4xx', async () => {
    const up = await upload(tif, 'image/tiff');
    expect(up.status).toBe(201);
    const ds = (await up.json()) as { id: string; kind: string; bbox: number[] };
    expect(ds.kind).toBe('grid');
    expect(ds.bbox.map((v) => Number(v.toFixed(9)))).toEqual([W, N - NY * D, W + NX * D, N].map((v) => Number(v.toFixed(9))));
    const interpolation = { method: 'kriging', variogram: MODEL, neighbors: 16, trend: `drift:${ds.id}` };
    const res = await t.post('/api/runs', {
      sites: 'demo-sites',
      model: 'demo-model',
      realizations: 4,
      seed: 5,
      grid: { bbox: BBOX, size: SIZE },
      interpolation,
    });
    expect(res.status).toBe(202);
    const { id } = (await res.json()) as { id: string };
    expect((await t.waitEnd(id)).status).toBe('done');
    const view = (await (await t.app.request(`/api/runs/${id}`)).json()) as { summary: unknown };
    const summary = runSummarySchema.parse(view.summary);
    expect(summary.interpolation.trend?.kind).toBe('external');
    expect(summary.interpolation.trend?.covariate?.name).toBe(`grid data set ${ds.id}`);
    expect(summary.monteCarlo?.heatFlowSimulation?.trend).toBe('external');
    const grid = (await t.store.getRunGrid(id, 'heatFlow'))!;

    // The command line on the same inputs: the same map, cell for cell (both Float32).
    const out = join(dir, 'hf.tif');
    const v = `${MODEL.model}:${MODEL.nugget},${MODEL.partialSill},${MODEL.rangeKm}`;
    const cli = await runCliJson([
      'interpolate',
      '--points',
      SITES.pathname,
      '--method',
      'kriging',
      '--variogram',
      v,
      '--neighbors',
      '16',
      '--trend',
      `drift:${join(dir, 'thickness.tif')}`,
      `--bbox=${BBOX.join(',')}`,
      '--size',
      SIZE.join('x'),
      '--out',
      out,
    ]);
    expect(cli.code).toBe(0);
    const c = (await readGeoTiff(readFileSync(out), { source: out })).grid;
    expect([c.width, c.height]).toEqual([grid.meta.width, grid.meta.height]);
    let worst = 0;
    for (let i = 0; i < c.values.length; i++) worst = Math.max(worst, Math.abs(c.values[i] - grid.values[i]));
    expect(worst).toBeLessThan(1e-4); // mW/m² (Float32 of ~100 is 8e-6 apart)

    // R gstat at three cells (the same local km frame: the sites' own projection).
    const sites = JSON.parse(readFileSync(SITES, 'utf8')) as { features: { geometry: { coordinates: number[] }; properties: { heatFlowMWm2: number } }[] };
    const lon = sites.features.map((f) => f.geometry.coordinates[0]),
      lat = sites.features.map((f) => f.geometry.coordinates[1]);
    const proj = localProjectionFor(lon, lat);
    const local = (lo: number[], la: number[]) => {
      const x = new Float64Array(lo.length),
        y = new Float64Array(lo.length);
      lonLatToLocalKm(proj, lo, la, x, y);
      return { x, y };
    };
    const p = local(lon, lat);
    const cells = [
      [2, 3],
      [11, 9],
      [19, 15],
    ];
    const dx = (BBOX[2] - BBOX[0]) / SIZE[0],
      dy = (BBOX[3] - BBOX[1]) / SIZE[1];
    const cLon = cells.map(([col]) => BBOX[0] + (col + 0.5) * dx),
      cLat = cells.map(([, row]) => BBOX[3] - (row + 0.5) * dy);
    const q = local(cLon, cLat);
    const z = sites.features.map((f) => f.properties.heatFlowMWm2);
    writeFileSync(join(dir, 'p.csv'), 'x,y,s,z\n' + Array.from(p.x, (x, i) => `${x},${p.y[i]},${covariateOf(lon[i], lat[i])},${z[i]}`).join('\n'));
    writeFileSync(join(dir, 't.csv'), 'x,y,s\n' + Array.from(q.x, (x, i) => `${x},${q.y[i]},${covariateOf(cLon[i], cLat[i])}`).join('\n'));
    const script = [
      'suppressMessages({library(sp); library(gstat)})',
      `p <- read.csv("${join(dir, 'p.csv')}"); coordinates(p) <- ~x+y`,
      `t <- read.csv("${join(dir, 't.csv')}"); coordinates(t) <- ~x+y`,
      `k <- krige(z ~ s, p, t, model = vgm(${MODEL.partialSill}, "Sph", ${MODEL.rangeKm}, ${MODEL.nugget}), nmax = 16, debug.level = 0)`,
      'cat(sprintf("%.17g", k$var1.pred), "\\n")',
    ];
    writeFileSync(join(dir, 'k.R'), script.join('\n'));
    const r = spawnSync('Rscript', [join(dir, 'k.R')], { encoding: 'utf8' });
    if (r.error !== undefined || r.status !== 0)
      throw new Error(`R gstat is needed for this check (Debian r-cran-gstat): Rscript failed: ${r.error?.message ?? r.stderr}`);
    const ref = r.stdout.trim().split(/\s+/).map(Number);
    expect(ref).toHaveLength(3);
    cells.forEach(([col, row], k) => expect(Math.abs(grid.values[row * SIZE[0] + col] - ref[k])).toBeLessThan(1e-5 * Math.abs(ref[k])));

    // Bad input: not a GeoTIFF (415), a sites data set named as the drift (422 naming interpolation.trend).
    expect((await upload('not a tiff', 'image/tiff')).status).toBe(415);
    expect((await upload(tif, 'application/geo+json')).status).toBe(415);
    const wrong = await t.post('/api/runs', { sites: 'demo-sites', model: 'demo-model', interpolation: { method: 'kriging', trend: 'drift:demo-sites' } });
    expect(wrong.status).toBeGreaterThanOrEqual(400);
    expect(wrong.status).toBeLessThan(500);
    expect(await wrong.text()).toContain('interpolation.trend');
  }, 600_000);
});
