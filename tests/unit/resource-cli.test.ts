import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { kmFromLonLat, trueHeatFlowMWm2 } from '../../fixtures/field.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { heatInPlace } from '../../server/cli/heat-in-place.ts';
import { InputError } from '../../shared/errors.ts';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { putDoneRun, storeHeatFlowGrids, waitJob as waitFor } from '../helpers/stored-runs.ts';
import { CAUTION } from '../../shared/caution.ts';
import type { Grid } from '../../shared/grid/grid.ts';

const root = new URL('../..', import.meta.url).pathname;
mkdirSync(join(root, '.tmp'), { recursive: true });
const dir = mkdtempSync(join(root, '.tmp', 'heat-in-place-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// Heat flow of the invented demo region (fixtures/field.ts) on a small lon/lat grid, and a constant sd.
const W = 40,
  H = 32,
  west = -129,
  north = -37.2,
  dx = 2 / W,
  dy = 1.6 / H;
const base = { width: W, height: H, west, north, dx, dy, crs: 'EPSG:4326' };
const hfValues = new Float32Array(W * H);
for (let r = 0; r < H; r++)
  for (let c = 0; c < W; c++) {
    const [x, y] = kmFromLonLat(west + (c + 0.5) * dx, north - (r + 0.5) * dy);
    hfValues[r * W + c] = trueHeatFlowMWm2(x, y);
  }
const hf: Grid = { ...base, values: hfValues, units: 'mW/m²' };
const sd: Grid = { ...base, values: new Float32Array(W * H).fill(6), units: 'mW/m²' };
const hfPath = join(dir, 'hf.tif'),
  sdPath = join(dir, 'hf.sd.tif'),
  polyPath = join(dir, 'area.geojson'),
  offPath = join(dir, 'off.geojson');
writeFileSync(hfPath, Buffer.from(writeGeoTiff(hf)));
writeFileSync(sdPath, Buffer.from(writeGeoTiff(sd)));
const polygon = {
  type: 'Feature',
  properties: { name: '<b>Rift</b> & "block"' },
  geometry: {
    type: 'Polygon',
    coordinates: [
      [
        [-128.8, -37.4],
        [-128.0, -37.4],
        [-128.0, -38.2],
        [-128.8, -38.2],
        [-128.8, -37.4],
      ],
    ],
  },
};
writeFileSync(polyPath, JSON.stringify(polygon));
writeFileSync(
  offPath,
  JSON.stringify({
    type: 'Polygon',
    coordinates: [
      [
        [10, 10],
        [11, 10],
        [11, 11],
        [10, 10],
      ],
    ],
  }),
);
const modelPath = join(root, 'fixtures/demo/model-uncertain.json');

function run(args: string[]) {
  const r = spawnSync(process.execPath, ['bin/subtherm.mjs', 'heat-in-place', ...args], { cwd: root, encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

/** The heat-flow grid, its sd, the model and the polygon, with 40 realizations and seed 5 (the job's options below). */
const POLYGON_ARGS = ['--heat-flow', hfPath, '--heat-flow-sd', sdPath, '--model', modelPath, '--polygon', polyPath, '--realizations', '40', '--seed', '5'];

describe('subtherm heat-in-place', () => {
  it('prints the report JSON and writes CSV and HTML', () => {
    const csv = join(dir, 'r.csv'),
      html = join(dir, 'r.html');
    const r = run([...POLYGON_ARGS, '--out-csv', csv, '--out-html', html, '--json']);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(j.area).toBe('polygon');
    expect(j.cells).toBeGreaterThan(100);
    expect(j.areaKm2).toBeGreaterThan(1000);
    expect((j.heatInPlaceEJ.p50 * 1e18) / j.heatInPlaceJ.p50).toBeCloseTo(1, 12);
    expect(j.electricMWe.p10).toBeLessThanOrEqual(j.electricMWe.p50);
    expect(j.electricMWe.p50).toBeLessThanOrEqual(j.electricMWe.p90);
    expect(j.method.route).toBe('exergy');
    expect(j.method.routeLabel).toMatch(/W\/Q = 1 − T0·ln\(TR\/T0\)/);
    expect(j.caution).toBe(CAUTION);
    expect(j.provenance.inputs.heatFlow).toMatch(/^[0-9a-f]{64}$/);
    expect(j.monteCarlo.realizations).toBe(40);
    const text = readFileSync(csv, 'utf8');
    expect(text.split('\n')[0]).toBe(`# caution: ${CAUTION}`);
    // The central value leads (the mean of the realizations, then P50, P10, P90, sd); the deterministic run comes last.
    expect(text).toMatch(/^area,quantity,units,cells,area_km2,mean,p50,p10,p90,sd,nominal,mean_minus_nominal$/m);
    const hipRow = text
      .split('\n')
      .find((l) => /^"?polygon/.test(l) && l.includes(',heat in place,EJ,'))!
      .split(',');
    const v = j.heatInPlaceEJ;
    // The polygon's quoted label holds commas: the row's last seven fields are the numbers.
    expect(hipRow.slice(-7).map(Number)).toEqual([v.mean, v.p50, v.p10, v.p90, v.sd, v.nominal, v.meanMinusNominal]);
    const page = readFileSync(html, 'utf8');
    // The HTML report: a sentence with the mean first, before the results table, whose columns lead with the mean and
    // end with the deterministic run and the mean's difference from it; the heat-in-place row holds those values.
    const results = page.slice(page.indexOf('<h2>Results</h2>'));
    expect(results.indexOf('id="central-value"')).toBeLessThan(results.indexOf('<table class="totals">'));
    const sentence = /<p id="central-value">([^<]*)<\/p>/.exec(results)![1];
    expect(sentence).toMatch(/^Central value: heat in place [\d,.]+ EJ, the mean of 40 realizations \(P50 /);
    expect(sentence.indexOf('deterministic (kriged) run')).toBeGreaterThan(sentence.indexOf('P90'));
    const table = /<table class="totals"><thead><tr>(.*?)<\/tr><\/thead><tbody><tr>(.*?)<\/tr>/.exec(results)!;
    const cellsOf = (row: string, tag: string) => [...row.matchAll(new RegExp(`<${tag}[^>]*>([^<]*)</${tag}>`, 'g'))].map((m) => m[1]);
    expect(cellsOf(table[1], 'th')).toEqual(['Quantity', 'Mean (central value)', 'P50', 'P10', 'P90', 'Deterministic (kriged run)', 'Mean − deterministic']);
    const shown = cellsOf(table[2], 'td').map((c) => Number(c.replace(/,/g, '')));
    [v.mean, v.p50, v.p10, v.p90, v.nominal, v.meanMinusNominal].forEach((x: number, k: number) =>
      expect(Math.abs(shown[k] - x), `column ${k + 1}`).toBeLessThanOrEqual(5e-4 * Math.abs(x)),
    );
    expect(page).toContain('data:image/png;base64,');
    expect(page).toContain('&lt;b&gt;Rift&lt;/b&gt; &amp; &quot;block&quot;');
    expect(page).not.toContain('<b>Rift</b>');
    expect(page).toContain('"P90"'.replace(/"/g, '&quot;'));
  });

  it('gives nominal values and null percentiles without realizations', () => {
    const html = join(dir, 'nominal.html');
    const page = () => readFileSync(html, 'utf8');
    const r = run(['--heat-flow', hfPath, '--model', modelPath, '--json', '--out-html', html]);
    // Without realizations the HTML report shows the deterministic run alone, labelled so.
    expect(/<table class="totals"><thead><tr>(.*?)<\/tr>/.exec(page())![1]).toBe('<th>Quantity</th><th>Deterministic (kriged run)</th>');
    expect(page()).toMatch(/<p id="central-value">Heat in place [\d,.]+ EJ and electric power [\d,.]+ MWe from the deterministic \(kriged\) run alone/);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(j.area).toBe('grid');
    expect(j.electricMWe.p50).toBeNull();
    expect(j.electricMWe.nominal).toBeGreaterThan(0);
    expect(j.cells).toBe(W * H);
  });

  const bad: [string, string[], RegExp][] = [
    ['bottom ≤ top', ['--top-km', '5', '--bottom-km', '4'], /--bottom-km/],
    ['recovery outside (0, 1]', ['--recovery', '0'], /--recovery/],
    ['efficiency above 1', ['--efficiency', '1.2'], /--efficiency/],
    ['polygon off the grid', ['--polygon', offPath], /does not overlap/],
    ['Tmin below Tref', ['--min-temp-c', '10'], /--min-temp-c/],
    ['bad correlation', ['--correlation', 'some'], /--correlation/],
    ['missing model file', ['--model', join(dir, 'none.json')], /cannot read/],
  ];
  for (const [name, args, msg] of bad) {
    it(`rejects with a clear InputError: ${name}`, async () => {
      const hasModel = args.includes('--model');
      const p = heatInPlace(['--heat-flow', hfPath, ...(hasModel ? [] : ['--model', modelPath]), ...args, '--json']);
      await expect(p).rejects.toBeInstanceOf(InputError);
      await expect(p).rejects.toThrow(msg);
    });
  }

  it('exits 2 with one JSON error object and no stack trace', () => {
    const r = run(['--heat-flow', hfPath, '--model', modelPath, '--top-km', '5', '--bottom-km', '4', '--json']);
    expect(r.code).toBe(2);
    expect(JSON.parse(r.out).error.code).toBe('bad_option');
    expect(r.err).not.toMatch(/at .*\.ts:\d+/);
  });
});

describe('heat-in-place job routes', () => {
  const model = JSON.parse(readFileSync(modelPath, 'utf8'));
  let t: TestApp;
  beforeAll(async () => {
    t = await startTestApp('hip');
    // A finished run holding the same grids and model the CLI reads from files.
    await putDoneRun(t.store, 'run_hip', { model });
    const meta = (g: Grid) => ({ width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs: g.crs, units: 'mW/m²' });
    expect(meta(sd)).toEqual(meta(hf));
    await storeHeatFlowGrids(t.store, 'run_hip', meta(hf), hf.values, sd.values);
  });
  afterAll(async () => await t?.close());
  const waitJob = (url: string) => waitFor(t, url);

  it('POST queues a job (202); its JSON equals the CLI on the same inputs and seed; HTML and CSV come from the same job', async () => {
    const body = { polygon, options: { realizations: 40, seed: 5 } };
    const res = await t.post('/api/runs/run_hip/heat-in-place', body);
    expect(res.status).toBe(202);
    const j = (await res.json()) as { jobId: string; status: string; url: string; links: Record<string, string> };
    expect(j.jobId).toMatch(/^hip_/);
    expect(j.links).toEqual({ json: j.url, html: `${j.url}.html`, csv: `${j.url}.csv` });
    // The links never repeat the request.
    expect(JSON.stringify(j).length).toBeLessThan(600);
    const done = await waitJob(j.url);
    expect(done.status).toBe(200);
    const report = (await done.json()) as Record<string, unknown>;
    // Reference: the CLI (`subtherm heat-in-place --json`) on the same grids, model, polygon and seed.
    const cli = run([...POLYGON_ARGS, '--json']);
    expect(cli.code).toBe(0);
    const ref = JSON.parse(cli.out) as Record<string, unknown>;
    for (const k of ['cells', 'areaKm2', 'heatInPlaceJ', 'electricMWe', 'monteCarlo', 'method']) expect(report[k]).toEqual(ref[k]);
    const page = await t.app.request(j.links.html);
    expect(page.headers.get('content-type')).toMatch(/text\/html/);
    expect(await page.text()).toContain('&lt;b&gt;Rift&lt;/b&gt;');
    const csv = await t.app.request(j.links.csv);
    expect((await csv.text()).startsWith('# caution: ')).toBe(true);
  }, 60_000);

  it('answers 4xx JSON errors before queuing: bad options, polygons, unknown runs and jobs, and non-JSON bodies', async () => {
    const a = await t.post('/api/runs/run_hip/heat-in-place', { options: { recoveryFactor: 2 } });
    expect(a.status).toBe(400);
    expect(((await a.json()) as { error: { details: { field: string }[] } }).error.details[0].field).toBe('recoveryFactor');
    expect((await t.post('/api/runs/nope/heat-in-place', {})).status).toBe(404);
    expect((await t.post('/api/runs/run_hip/heat-in-place', { polygon: { type: 'Point', coordinates: [0, 0] } })).status).toBe(400);
    expect((await t.app.request('/api/runs/run_hip/heat-in-place/hip_unknown')).status).toBe(404);
    // A page on another site can send text/plain or a form without asking: refused.
    const plain = await t.app.request('/api/runs/run_hip/heat-in-place', { method: 'POST', headers: { 'content-type': 'text/plain' }, body: '{}' });
    expect(plain.status).toBe(415);
    expect((await t.app.request('/api/runs/run_hip/heat-in-place', { method: 'POST', body: '{}' })).status).toBe(415);
    // No GET form of the computation.
    expect((await t.app.request('/api/runs/run_hip/heat-in-place.html?request=e30')).status).toBe(404);
  });
});
