// A user's own region, end to end in a real browser, far from the demo (the demo lies near 38° S 128° W; this
// region is open ocean near 35° N 160° E, the other hemisphere in both latitude and longitude, and invented):
// a new project, its sites uploaded as CSV through the page (bad files first), the view fitting them, a kriging
// run with 100 realizations whose heat-flow, depth-to-300 °C and spread layers are checked by their pixels, a
// read-only link opened in a fresh context, heat in place for a polygon drawn on the map (from the run's own
// realizations; its nominal totals and its P10/P50/P90 compared with the `subtherm heat-in-place` command on the
// same inputs and seed), and a
// screenshot of every panel at 1440 × 900.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import proj4 from 'proj4';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import type { Browser, Page } from 'playwright-core';
import { openMap, startMapSession, type MapSession, waitForMapIdle, ROOT, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';
import { rampCoverage as coverage } from '../helpers/pixels.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const pageErrors: string[] = [];
const VIEWPORT = { width: 1440, height: 900 };
const TMP = join(ROOT, '.tmp');

/** Invented sites: a smooth heat-flow field (55–95 mW/m²) with seeded noise on a jittered 9 × 7 grid. */
function userSites(): { lon: number; lat: number; id: string; q: number; sd: number; quality: string }[] {
  let s = 20261202;
  const rnd = () => (s = (s * 1103515245 + 12345) % 2147483648) / 2147483648;
  const out = [];
  for (let j = 0; j < 7; j++) {
    for (let i = 0; i < 9; i++) {
      const lon = 159.2 + i * 0.2 + (rnd() - 0.5) * 0.08;
      const lat = 34.4 + j * 0.2 + (rnd() - 0.5) * 0.08;
      const q = 75 + 14 * Math.sin((lon - 159.2) * 1.9) + 9 * Math.cos((lat - 34.4) * 2.4) + (rnd() - 0.5) * 4;
      out.push({
        lon,
        lat,
        id: `VR-${j * 9 + i + 1}`,
        q: Math.round(q * 10) / 10,
        sd: 4 + Math.round(rnd() * 30) / 10,
        quality: ['high', 'medium', 'low'][(i + j) % 3],
      });
    }
  }
  return out;
}
const SITES = userSites();
const BBOX = [
  Math.min(...SITES.map((s) => s.lon)),
  Math.min(...SITES.map((s) => s.lat)),
  Math.max(...SITES.map((s) => s.lon)),
  Math.max(...SITES.map((s) => s.lat)),
];
const rampCoverage = (p: Page, layer: string) => coverage(p, layer, BBOX as [number, number, number, number]);
const sitesCsv = () =>
  [
    'longitude,latitude,id,heatFlowMWm2,uncertaintyMWm2,quality',
    ...SITES.map((s) => [s.lon.toFixed(5), s.lat.toFixed(5), s.id, s.q, s.sd, s.quality].join(',')),
  ].join('\n');

let session: MapSession | undefined;
beforeAll(async () => {
  mkdirSync(TMP, { recursive: true });
  // A loaded 2-core machine draws the map in software: every action may wait long for a frame.
  session = await startMapSession({ viewport: VIEWPORT, pageErrors, timeoutMs: 120_000 });
  ({ server, browser, page } = session);
}, 180_000);

afterAll(async () => await session?.close());

const shot = (p: Page, name: string) => p.screenshot({ path: join(SCREENSHOT_DIR, `user-region-${name}.png`) });

async function upload(p: Page, name: string, text: string, kind = 'sites'): Promise<void> {
  await p.locator('#upload-kind').selectOption(kind);
  await p.locator('#upload-file').setInputFiles({ name, mimeType: 'text/csv', buffer: Buffer.from(text) });
}

/** The upload report's text once it shows an answer (ok or error). */
async function uploadAnswer(p: Page): Promise<{ ok: boolean; text: string }> {
  const ans = p.locator('#upload-report .ok, #upload-report .error');
  await expect.poll(() => ans.count(), { timeout: 30_000 }).toBe(1);
  return { ok: (await p.locator('#upload-report .ok').count()) === 1, text: (await ans.textContent()) ?? '' };
}

/** The data and base entries the layer panel lists (shown, not left out for want of data). */
function listedLayers(page: Page): Promise<string[]> {
  return page.evaluate(() =>
    [...document.querySelectorAll<HTMLElement>('#data-layers section.layer, #base-layers section.layer')].filter((s) => !s.hidden).map((s) => s.dataset.layer!),
  );
}

describe('a user region in the other hemisphere, end to end in the page', { timeout: 900_000 }, () => {
  let projectUrl = '';
  let runId = '';

  it('starts a new empty project from the data panel', async () => {
    await page.locator('#tab-data').click();
    await shot(page, 'panel-data-demo');
    await page.locator('#new-project-title').fill('Velmar Rise survey');
    await Promise.all([page.waitForURL(/\/p\/[A-Za-z0-9_-]+.*#edit=/, { timeout: 30_000 }), page.locator('#new-project').click()]);
    projectUrl = page.url();
    await waitForMapIdle(page);
    await page.evaluate(() => window.subtherm!.ready);
    expect(await page.locator('#project-title').textContent()).toBe('Velmar Rise survey');
    await page.locator('#tab-data').click();
    await expect.poll(() => page.locator('#project-datasets').textContent(), { timeout: 20_000 }).toContain('holds no data sets yet');
    // The new project's model starts under a neutral name, not the demo's.
    expect(await page.locator('#model-name').inputValue()).toBe('Crustal model');
    // Nor does it show the demo island: no outline (land, coast), no sea mask, no demo relief; the world base stays.
    const base = await page.evaluate(() => {
      const map = window.subtherm!.map;
      const n = (id: string) => map.querySourceFeatures(id).length;
      return {
        outline: n('outline'),
        seaMask: n('sea-mask'),
        hillshade: map.getLayer('hillshade') !== undefined,
        world: map.getLayer('world-land') !== undefined,
      };
    });
    expect(base).toEqual({ outline: 0, seaMask: 0, hillshade: false, world: true });
    // The layer panel lists no data or terrain entry while the project holds none, and says where data comes from.
    expect(await listedLayers(page)).toEqual([]);
    expect(await page.locator('#data-layers-empty').isVisible()).toBe(true);
  });

  it('explains bad files clearly: swapped coordinates, a CSV without coordinates, an unknown or malformed CRS', async () => {
    const swapped = ['longitude,latitude,id,heatFlowMWm2', ...SITES.slice(0, 5).map((s) => [s.lat.toFixed(4), s.lon.toFixed(4), s.id, s.q].join(','))].join(
      '\n',
    );
    await upload(page, 'swapped.csv', swapped);
    let a = await uploadAnswer(page);
    expect(a.ok).toBe(false);
    // One message naming the file, the spreadsheet line (header = line 1), the value and the hint.
    expect(a.text).toContain('swapped.csv');
    expect(a.text).toMatch(/latitude 159\.\d+ at .*line 2\b/);
    expect(a.text).toContain('look swapped');
    await shot(page, 'bad-swapped');

    await upload(page, 'no-coordinates.csv', 'station,heat\nA,60\nB,70\n');
    a = await uploadAnswer(page);
    expect(a.ok).toBe(false);
    expect(a.text).toContain('no-coordinates.csv');
    expect(a.text.toLowerCase()).toMatch(/longitude|lon/);

    await page.locator('#upload-crs').selectOption('other');
    await page.locator('#upload-crs-code').fill('UTM57N');
    await upload(page, 'projected.csv', 'x,y,id,heatFlowMWm2\n500000,3900000,P1,60\n');
    a = await uploadAnswer(page);
    expect(a.ok).toBe(false);
    expect(a.text).toContain('EPSG:nnnn');
    expect(a.text).toContain('UTM57N');

    await page.locator('#upload-crs-code').fill('EPSG:99999');
    await upload(page, 'projected.csv', 'x,y,id,heatFlowMWm2\n500000,3900000,P1,60\n');
    a = await uploadAnswer(page);
    expect(a.ok).toBe(false);
    expect(a.text).toContain('EPSG:99999');
    expect(a.text).toContain('not in the offline CRS list');
    await shot(page, 'bad-crs');
    await page.locator('#upload-crs').selectOption('');
    expect(await page.evaluate(() => window.subtherm!.state.params.sites)).toBe('');
  });

  it('uploads the sites as CSV through the page, lists them, and fits the view to them', async () => {
    await upload(page, 'velmar-sites.csv', sitesCsv());
    const a = await uploadAnswer(page);
    expect(a.ok, a.text).toBe(true);
    expect(a.text).toContain(`${SITES.length} sites accepted`);
    await expect.poll(() => page.locator('#project-datasets tr[data-kind="sites"]').count(), { timeout: 20_000 }).toBe(1);
    expect(await page.locator('#project-datasets tr[data-kind="sites"] .name').textContent()).toContain('velmar-sites');
    await waitForMapIdle(page);
    const view = await page.evaluate(() => {
      const b = window.subtherm!.map.getBounds();
      return [b.getWest(), b.getSouth(), b.getEast(), b.getNorth()];
    });
    // Every site is in view, and the sites fill a good part of it (not the demo's view, not the whole world).
    expect(view[0]).toBeLessThan(BBOX[0]);
    expect(view[1]).toBeLessThan(BBOX[1]);
    expect(view[2]).toBeGreaterThan(BBOX[2]);
    expect(view[3]).toBeGreaterThan(BBOX[3]);
    expect((BBOX[2] - BBOX[0]) / (view[2] - view[0])).toBeGreaterThan(0.3);
    const rendered = await page.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['sites'] }).length);
    expect(rendered).toBeGreaterThanOrEqual(SITES.length * 0.9);
    // The sites are listed in the layer panel; the samples and faults the project does not hold are not.
    expect(await listedLayers(page)).toEqual(['sites']);
    expect(await page.locator('#data-layers-empty').isVisible()).toBe(false);
    await shot(page, 'uploaded');
  });

  it('runs kriging with 100 realizations on the user data alone, and the layers draw over the region', async () => {
    // The user names the model: the run and its exports carry that name.
    await page.locator('#tab-model').click();
    await page.locator('#model-name').fill('Velmar Rise crust');
    await page.locator('#tab-run').click();
    await page.locator('#run-method').selectOption('kriging');
    await page.locator('#run-cell').fill('4');
    await page.locator('#run-realizations').fill('100');
    await page.locator('#run-seed').fill('11');
    await page.locator('#run-realizations').dispatchEvent('change');
    await page.locator('#run-button').click();
    // Done, or a message in the panel (then the test fails showing it).
    const outcome = () =>
      page.evaluate(() =>
        window.subtherm!.run?.run.status === 'done'
          ? 'done'
          : document.getElementById('run-error')!.textContent || document.getElementById('run-param-error')!.textContent || null,
      );
    await expect.poll(outcome, { timeout: 600_000, interval: 1000 }).toBeTruthy();
    expect(await outcome()).toBe('done');
    runId = await page.evaluate(() => window.subtherm!.run!.run.id);
    // The loading note shows until the run's tiles are drawn, then goes.
    await expect.poll(() => page.locator('#tiles-loading').count(), { timeout: 120_000 }).toBe(0);
    await waitForMapIdle(page);
    await shot(page, 'run-done');

    // The run used exactly the user's data set: none of the demo's data sets, no samples or faults.
    const cfg = (await (await fetch(`${server.url}/api/config`)).json()) as { demo: { datasets: Record<string, string> } };
    const run = (await (await fetch(`${server.url}/api/runs/${runId}`)).json()) as {
      request: Record<string, unknown>;
      summary: unknown;
      layers: { name: string }[];
    };
    const sitesId = await page.evaluate(() => window.subtherm!.state.params.sites);
    expect(run.request.sites).toBe(sitesId);
    expect(run.request.samples).toBeUndefined();
    expect(run.request.faults).toBeUndefined();
    const everything = JSON.stringify({ request: run.request, summary: run.summary });
    expect((run.request.model as { name?: string }).name).toBe('Velmar Rise crust');
    // The exported GeoTIFF's provenance (GDAL metadata) names the user's model, never the demo's.
    const tif = Buffer.from(await (await fetch(`${server.url}/api/runs/${runId}/layers/depth-300C.tif`)).arrayBuffer()).toString('latin1');
    expect(tif).toContain('Velmar Rise crust');
    expect(tif).not.toContain('Orrindel');
    expect(everything).not.toContain('Orrindel');
    for (const [kind, id] of Object.entries(cfg.demo.datasets)) expect(everything.includes(`"${id}"`), `demo ${kind} data set ${id} in the run`).toBe(false);
    expect(run.layers.map((l) => l.name)).toEqual(expect.arrayContaining(['heat-flow', 'depth-300C']));

    for (const layer of ['run-heat-flow', 'run-depth-300C']) {
      const cov = await rampCoverage(page, layer);
      expect(cov.n).toBeGreaterThan(500);
      expect(cov.ramp, `${layer}: ${JSON.stringify(cov)}`).toBeGreaterThan(0.8);
      expect(cov.base, `${layer}: ${JSON.stringify(cov)}`).toBeLessThan(0.05);
    }
  });

  it("adds the spread (P90 − P10) and exceedance-probability layers from the run's realizations", async () => {
    await page.locator('#unc-isotherm').fill('300');
    await page.locator('#unc-spread').click();
    await expect.poll(() => page.locator('#unc-status').textContent(), { timeout: 180_000, interval: 1000 }).toContain('among the run');
    await waitForMapIdle(page);
    const spread = await page.evaluate(() => window.subtherm!.map.getStyle().layers.find((l) => /spread/.test(l.id))?.id ?? null);
    expect(spread).toBeTruthy();
    const cov = await rampCoverage(page, spread!);
    expect(cov.ramp, JSON.stringify(cov)).toBeGreaterThan(0.8);
    expect(cov.base, JSON.stringify(cov)).toBeLessThan(0.05);
    const spreadPanel = (await page.locator('#run-layers').textContent())!;
    expect(spreadPanel).toMatch(/P90 − P10|spread/i);
    expect(spreadPanel).toContain('km');
    // The layer just asked for is shown at once and alone among the run's rasters (so the screenshot shows it, not
    // the heat flow beneath); the others stay in the layer list, unticked, their legends with them.
    const order = await page.evaluate(() => {
      const m = window.subtherm!.map;
      const shown = m
        .getStyle()
        .layers.filter((l) => l.id.startsWith('run-') && l.type === 'color-relief' && (m.getLayoutProperty(l.id, 'visibility') ?? 'visible') === 'visible');
      return shown.map((l) => l.id);
    });
    expect(order).toEqual([spread]);
    expect(await page.locator('#toggle-run-heat-flow').isChecked()).toBe(false);
    expect(await page.locator(`[id="toggle-${spread}"]`).isChecked()).toBe(true);
    await waitForMapIdle(page);
    await shot(page, 'spread');

    await page.locator('#unc-temp-depth').fill('5');
    await page.locator('#unc-exceeds').fill('150');
    await page.locator('#unc-exceedance').click();
    await expect.poll(() => page.locator('#unc-status').textContent(), { timeout: 180_000, interval: 1000 }).toContain('exceeds 150 °C is among the run');
    // The page redraws the run with the new layer: temperature at 5 km, probability above 150 °C.
    await expect
      .poll(() => page.evaluate(() => window.subtherm!.map.getStyle().layers.find((l) => l.id.endsWith('prob-gt-150C'))?.id ?? null), { timeout: 60_000 })
      .toMatch(/^run-temperature-5km.prob-gt-150C$/);
    await waitForMapIdle(page);
    expect(await page.locator('#run-layers').textContent()).toContain('Probability that the temperature at 5 km exceeds 150 °C');
    const probLayer = await page.evaluate(() => window.subtherm!.map.getStyle().layers.find((l) => l.id.endsWith('prob-gt-150C'))!.id);
    const pcov = await rampCoverage(page, probLayer);
    expect(pcov.ramp, JSON.stringify(pcov)).toBeGreaterThan(0.8);
    await shot(page, 'exceedance');
  });

  it("computes heat in place for a polygon drawn on the map from the run's realizations; its nominal totals and P10/P50/P90 equal the subtherm heat-in-place command's", async () => {
    await page.locator('#tab-heat').click();
    await expect.poll(() => page.locator('#hip-run').isDisabled()).toBe(false);
    await page.locator('#hip-draw').click();
    const corners: [number, number][] = [
      [159.55, 34.65],
      [160.55, 34.7],
      [160.6, 35.45],
      [159.6, 35.5],
    ];
    const box = (await page.locator('#map').boundingBox())!;
    for (const c of corners) {
      const pt = await page.evaluate((ll) => window.subtherm!.map.project(ll), c);
      await page.mouse.click(box.x + pt.x, box.y + pt.y);
      await page.waitForTimeout(350); // two clicks closer in time would be a double-click
    }
    await page.keyboard.press('Enter');
    await expect.poll(() => page.locator('#hip-draw-status').textContent()).toContain('4 corners');
    // The run's own realizations: the panel offers them (no seed of its own to choose).
    expect(await page.locator('#hip-realizations').inputValue()).toBe('100');
    expect(await page.locator('#hip-seed').isVisible()).toBe(false);
    expect(await page.locator('#hip-realizations-note').textContent()).toContain("run's own 100 realizations");
    await page.locator('#hip-recovery').fill('{"dist":"triangular","min":0.05,"mode":0.1,"max":0.2}');
    await page.locator('#hip-run').click();
    await expect.poll(() => page.locator('#hip-report').count(), { timeout: 240_000, interval: 1000 }).toBe(1);
    await waitForMapIdle(page);
    await shot(page, 'heat-in-place');
    // The totals table fits the panel at 1440 × 900: no column past its edge, nothing to scroll sideways.
    const fit = await page.evaluate(() => {
      const table = document.getElementById('hip-totals')!;
      return {
        overflowPx: table.parentElement!.scrollWidth - table.parentElement!.clientWidth,
        tableRight: table.getBoundingClientRect().right,
        panelRight: document.getElementById('tools')!.getBoundingClientRect().right,
        columns: [...table.querySelectorAll('thead th')].map((th) => th.textContent),
      };
    });
    // The central value leads: the mean of the realizations (the deterministic run and the difference under it), then P10, P50, P90.
    expect(fit.columns).toEqual(['Total', 'Mean', 'P10', 'P50', 'P90']);
    expect(fit.overflowPx, JSON.stringify(fit)).toBe(0);
    expect(fit.tableRight, JSON.stringify(fit)).toBeLessThanOrEqual(fit.panelRight);
    const result = await page.evaluate(() => window.subtherm!.heatInPlace!);
    expect(result.runId).toBe(runId);
    const headline = (await page.locator('#hip-headline').textContent())!;
    expect(headline).toMatch(/heat in place [\d.,]+ EJ, the mean of 100 realizations \(P50 [\d.,]+; P10 [\d.,]+, P90 [\d.,]+ EJ\)/);
    expect(headline.indexOf('Deterministic (kriged) run')).toBeGreaterThan(headline.indexOf('the mean of'));
    const cell = async (col: string) =>
      Number(
        (
          await page
            .locator(`#hip-totals tr[data-total="heatInPlaceEJ"] [data-col="${col}"]`)
            .first()
            .evaluate((e) => e.firstChild!.textContent!)
        )
          .replace(/,/g, '')
          .replace(/^det\. /, ''),
      );
    const hip = result.report.heatInPlaceEJ;
    expect(Math.abs((await cell('mean')) - hip.mean!)).toBeLessThanOrEqual(5e-3 * Math.abs(hip.mean!));
    expect(Math.abs((await cell('p50')) - hip.p50!)).toBeLessThanOrEqual(5e-3 * Math.abs(hip.p50!));
    expect(Math.abs((await cell('deterministic')) - hip.nominal!)).toBeLessThanOrEqual(5e-3 * Math.abs(hip.nominal!));
    // The run panel lists the run's central values (monteCarlo.centralValues): one row per map, mean first.
    const central = await page.evaluate(() =>
      [...document.querySelectorAll('#central-values thead th')]
        .map((th) => th.textContent)
        .concat([...document.querySelectorAll('#central-values tbody tr')].map((tr) => tr.getAttribute('data-product') ?? '')),
    );
    const runView = (await (await fetch(`${server.url}/api/runs/${runId}`)).json()) as { summary: { monteCarlo: { centralValues: { product: string }[] } } };
    expect(central).toEqual(['Map', 'Mean', 'P50', 'Deterministic', 'Mean − det.', ...runView.summary.monteCarlo.centralValues.map((c) => c.product)]);
    expect(headline).toContain('MWe');
    expect(await page.locator('#hip-exceedance').textContent()).toContain('exceeded in 90 %');
    expect(await page.locator('#hip-report .caution-note').textContent()).toContain('Screening estimates only');
    const html = await fetch(server.url + (await page.locator('#hip-html').getAttribute('href'))!);
    expect(html.status).toBe(200);
    expect(await html.text()).toContain('Screening estimates only');
    const csv = await fetch(server.url + (await page.locator('#hip-csv').getAttribute('href'))!);
    expect(csv.status).toBe(200);
    expect((await csv.text()).startsWith('#')).toBe(true);

    // The same inputs through the command line: the run's heat-flow GeoTIFF, its model, the drawn polygon and the
    // same options. The nominal totals (the kriged heat-flow map, the options' central values) must agree to
    // rounding; then the P10–P90 against the command line simulating from the run's sites with its seed.
    const dir = mkdtempSync(join(TMP, 'hip-'));
    // A GET is retried once if its pooled keep-alive connection was closed by the server as it was reused (a race a
    // busy machine makes likely); a real failure fails twice.
    const fetchOnce = async (path: string) => Buffer.from(await (await fetch(server.url + path)).arrayBuffer());
    const get = async (path: string) => fetchOnce(path).catch(() => fetchOnce(path));
    writeFileSync(join(dir, 'hf.tif'), await get(`/api/runs/${runId}/layers/heat-flow.tif`));
    const run = (await (await fetch(`${server.url}/api/runs/${runId}`)).json()) as { request: { model: unknown; seed: number } };
    writeFileSync(join(dir, 'model.json'), JSON.stringify(run.request.model));
    writeFileSync(join(dir, 'polygon.geojson'), JSON.stringify(result.request.polygon));
    const o = result.request.options;
    const arg = (v: unknown) => (typeof v === 'number' ? String(v) : JSON.stringify(v));
    const options = [
      ['--top-km', o.topKm],
      ['--bottom-km', o.bottomKm],
      ['--min-temp-c', o.minTempC],
      ['--ref-temp-c', o.refTempC],
      ['--rho-c-mj', o.rhoCMJm3K],
      ['--recovery', o.recoveryFactor],
      ['--efficiency', o.utilizationEfficiency],
      ['--life-years', o.lifeYears],
    ].flatMap(([flag, v]) => [flag as string, arg(v)]);
    type CliTotals = Record<string, { nominal: number; p10: number | null; p50: number | null; p90: number | null }> & { cells: number; area: string };
    const subtherm = (args: string[]) =>
      JSON.parse(
        execFileSync(process.execPath, [join(ROOT, 'bin', 'subtherm.mjs'), 'heat-in-place', ...args, '--json'], {
          cwd: ROOT,
          encoding: 'utf8',
          maxBuffer: 64 << 20,
        }),
      ) as CliTotals;
    const cli = subtherm(['--heat-flow', join(dir, 'hf.tif'), '--model', join(dir, 'model.json'), '--polygon', join(dir, 'polygon.geojson'), ...options]);
    const web = result.report as unknown as typeof cli & { monteCarlo: { realizations: number; seed: number; heatFlow: string } };
    expect(web.area).toBe('polygon');
    expect(web.cells).toBe(cli.cells);
    expect(cli.cells).toBeGreaterThan(50);
    for (const k of ['heatInPlaceEJ', 'recoverableJ', 'electricMWe', 'hotVolumeKm3', 'meanReservoirTempC']) {
      expect(cli[k].nominal, k).not.toBeNull();
      expect(Math.abs(web[k].nominal - cli[k].nominal), `${k}: page ${web[k].nominal}, CLI ${cli[k].nominal}`).toBeLessThanOrEqual(
        1e-9 * Math.abs(cli[k].nominal),
      );
      expect(web[k].p10!, k).toBeLessThanOrEqual(web[k].p50!);
      expect(web[k].p50!, k).toBeLessThanOrEqual(web[k].p90!);
    }
    expect(web.monteCarlo.realizations).toBe(100);
    expect(web.monteCarlo.seed).toBe(run.request.seed);
    expect(web.monteCarlo.heatFlow).not.toMatch(/sd × a standard normal|as given/);
    expect(web.heatInPlaceEJ.p10! < web.heatInPlaceEJ.nominal && web.heatInPlaceEJ.nominal < web.heatInPlaceEJ.p90!).toBe(true);

    // P10/P50/P90 too: the command line simulates the heat-flow fields from the run's own sites on the same grid with
    // the run's seed (`--points`), and draws the options' distributions from the same streams as the page's job.
    const req = run.request as unknown as { sites: string; grid: { cellKm: number } };
    writeFileSync(join(dir, 'sites.geojson'), await get(`/api/datasets/${req.sites}`));
    const sim = subtherm([
      '--points',
      join(dir, 'sites.geojson'),
      '--cell-km',
      String(req.grid.cellKm),
      '--realizations',
      String(web.monteCarlo.realizations),
      '--seed',
      String(run.request.seed),
      '--model',
      join(dir, 'model.json'),
      '--polygon',
      join(dir, 'polygon.geojson'),
      ...options,
    ]);
    expect(sim.cells).toBe(web.cells);
    for (const k of ['heatInPlaceEJ', 'recoverableJ', 'electricMWe', 'hotVolumeKm3']) {
      for (const q of ['p10', 'p50', 'p90'] as const) {
        expect(sim[k][q], `${k}.${q}`).not.toBeNull();
        expect(Math.abs(web[k][q]! - sim[k][q]!), `${k}.${q}: page ${web[k][q]}, CLI ${sim[k][q]}`).toBeLessThanOrEqual(1e-9 * Math.abs(sim[k][q]!));
      }
    }
  });

  it('opens read-only from the view link in a fresh context and shows the same layers', async () => {
    await page.locator('#topbar-share').click();
    await page.locator('#share-button').click();
    await expect.poll(() => page.locator('#share-view-url').count(), { timeout: 20_000 }).toBe(1);
    await shot(page, 'panel-share');
    const viewUrl = await page.locator('#share-view-url').inputValue();
    expect(viewUrl).not.toContain('edit=');
    const ctx = await browser.newContext({ viewport: VIEWPORT });
    const fresh = await ctx.newPage();
    fresh.setDefaultTimeout(120_000);
    try {
      await openMap(fresh, viewUrl, true);
      expect(await fresh.evaluate(() => window.subtherm!.readOnly)).toBe(true);
      expect(await fresh.locator('#readonly-badge').isVisible()).toBe(true);
      expect(await fresh.evaluate(() => window.subtherm!.run?.run.id)).toBe(runId);
      const center = await fresh.evaluate(() => window.subtherm!.map.getCenter().toArray());
      expect(center[0]).toBeGreaterThan(BBOX[0]);
      expect(center[0]).toBeLessThan(BBOX[2]);
      for (const layer of ['run-heat-flow', 'run-depth-300C']) {
        const cov = await rampCoverage(fresh, layer);
        expect(cov.ramp, `${layer}: ${JSON.stringify(cov)}`).toBeGreaterThan(0.8);
      }
      await fresh.locator('#tab-run').click();
      expect(await fresh.locator('#run-button').isDisabled()).toBe(true);
      await shot(fresh, 'read-only');
    } finally {
      await ctx.close();
    }
    expect(projectUrl).toContain('#edit=');
  });

  it('reads projected CSV coordinates with the CRS chooser (checked against proj4)', async () => {
    await page.locator('#tab-data').click();
    // UTM zone 57 north (EPSG:32657) covers 156–162° E; proj4's own transform gives the x, y written to the file.
    const utm = '+proj=utm +zone=57 +datum=WGS84 +units=m +no_defs';
    const xy = SITES.slice(0, 6).map((s) => proj4('EPSG:4326', utm, [s.lon, s.lat]));
    const csv = ['x,y,id,heatFlowMWm2', ...xy.map((p, i) => [p[0].toFixed(3), p[1].toFixed(3), `U${i}`, SITES[i].q].join(','))].join('\n');
    await page.locator('#upload-crs').selectOption('other');
    await page.locator('#upload-crs-code').fill('32657');
    await upload(page, 'velmar-utm.csv', csv);
    const a = await uploadAnswer(page);
    expect(a.ok, a.text).toBe(true);
    const id = await page.evaluate(() => window.subtherm!.state.params.sites);
    const fc = (await (await fetch(`${server.url}/api/datasets/${id}`)).json()) as { features: { geometry: { coordinates: number[] } }[] };
    fc.features.forEach((f, i) => {
      expect(Math.abs(f.geometry.coordinates[0] - SITES[i].lon)).toBeLessThan(1e-6);
      expect(Math.abs(f.geometry.coordinates[1] - SITES[i].lat)).toBeLessThan(1e-6);
    });
    // "replace" in the data table reads the new CSV in the CRS chosen under Add data too (six other sites, in UTM).
    const xy2 = SITES.slice(6, 12).map((s) => proj4('EPSG:4326', utm, [s.lon, s.lat]));
    const csv2 = ['x,y,id,heatFlowMWm2', ...xy2.map((p, i) => [p[0].toFixed(3), p[1].toFixed(3), `V${i}`, SITES[6 + i].q].join(','))].join('\n');
    const oldName = await page.locator(`#project-datasets tr[data-dataset="${id}"] .name`).textContent();
    const replaceInput = page.locator(`#project-datasets tr[data-actions-for="${id}"] input[type="file"]`);
    // A CRS the chooser cannot read is reported in the table and nothing is sent: the data set stays as it was.
    await page.locator('#upload-crs-code').fill('UTM57N');
    await replaceInput.setInputFiles({ name: 'velmar-utm-2.csv', mimeType: 'text/csv', buffer: Buffer.from(csv2) });
    await expect.poll(() => page.locator('#project-datasets .error').textContent(), { timeout: 10_000 }).toContain('UTM57N');
    expect(await page.evaluate(() => window.subtherm!.state.params.sites)).toBe(id);
    expect(((await (await fetch(`${server.url}/api/datasets/${id}`)).json()) as { features: unknown[] }).features).toHaveLength(6);
    await page.locator('#upload-crs-code').fill('32657');
    await replaceInput.setInputFiles({ name: 'velmar-utm-2.csv', mimeType: 'text/csv', buffer: Buffer.from(csv2) });
    await expect.poll(() => page.evaluate(() => window.subtherm!.state.params.sites), { timeout: 30_000 }).not.toBe(id);
    const id2 = await page.evaluate(() => window.subtherm!.state.params.sites);
    const fc2 = (await (await fetch(`${server.url}/api/datasets/${id2}`)).json()) as { features: { geometry: { coordinates: number[] } }[] };
    expect(fc2.features).toHaveLength(6);
    fc2.features.forEach((f, i) => {
      expect(Math.abs(f.geometry.coordinates[0] - SITES[6 + i].lon)).toBeLessThan(1e-6);
      expect(Math.abs(f.geometry.coordinates[1] - SITES[6 + i].lat)).toBeLessThan(1e-6);
    });
    // It took the old one's name and place: one row of that name, the old id gone.
    await expect.poll(() => page.locator(`#project-datasets tr[data-dataset="${id}"]`).count(), { timeout: 20_000 }).toBe(0);
    expect(await page.locator(`#project-datasets tr[data-dataset="${id2}"] .name`).textContent()).toBe(oldName);
    await page.locator('#upload-crs').selectOption('');
  });

  it('uploads a terrain GeoTIFF in a projected CRS through the page and shows it as hillshade; a bad one is refused', async () => {
    await page.locator('#upload-kind').selectOption('terrain');
    await page.locator('#upload-file').setInputFiles({ name: 'not-a-dem.tif', mimeType: 'image/tiff', buffer: Buffer.from('elevation,100\n') });
    let a = await uploadAnswer(page);
    expect(a.ok).toBe(false);
    expect(a.text).toContain('not-a-dem.tif');
    expect(a.text).toMatch(/TIFF/);
    // A seamount on the sea floor, in UTM zone 57 north (EPSG:32657), 2 km cells over the sites' box and a margin.
    const utm = '+proj=utm +zone=57 +datum=WGS84 +units=m +no_defs';
    const sw = proj4('EPSG:4326', utm, [BBOX[0] - 0.2, BBOX[1] - 0.2]),
      ne = proj4('EPSG:4326', utm, [BBOX[2] + 0.2, BBOX[3] + 0.2]);
    const dx = 2000,
      width = Math.ceil((ne[0] - sw[0]) / dx),
      height = Math.ceil((ne[1] - sw[1]) / dx);
    const values = new Float32Array(width * height);
    for (let r = 0; r < height; r++)
      for (let c = 0; c < width; c++)
        values[r * width + c] = -5200 + 3800 * Math.exp(-(((c - width / 2) / (width / 5)) ** 2 + ((r - height / 2) / (height / 5)) ** 2));
    const tif = writeGeoTiff({ width, height, west: sw[0], north: ne[1], dx, dy: dx, crs: 'EPSG:32657', units: 'm', values });
    await page.locator('#upload-file').setInputFiles({ name: 'velmar-seamount.tif', mimeType: 'image/tiff', buffer: Buffer.from(tif) });
    a = await uploadAnswer(page);
    expect(a.ok, a.text).toBe(true);
    expect(a.text).toContain(`terrain of`);
    expect(a.text).toContain('EPSG:32657');
    await expect.poll(() => page.locator('#project-datasets tr[data-kind="terrain"]').count(), { timeout: 30_000 }).toBe(1);
    expect(await page.locator('#project-datasets tr[data-kind="terrain"]').textContent()).toContain('velmar-seamount');
    await waitForMapIdle(page);
    expect(await page.evaluate(() => window.subtherm!.map.getLayer('project-hillshade')?.type)).toBe('hillshade');
    // The terrain entry is listed now, and its switch hides the project's hillshade.
    expect(await listedLayers(page)).toEqual(['sites', 'terrain']);
    await page.locator('#toggle-terrain').uncheck();
    expect(await page.evaluate(() => window.subtherm!.map.getLayoutProperty('project-hillshade', 'visibility'))).toBe('none');
    await page.locator('#toggle-terrain').check();
    expect(await page.evaluate(() => window.subtherm!.map.getLayoutProperty('project-hillshade', 'visibility'))).toBe('visible');
    await shot(page, 'terrain');
    // The hillshade alone (run layers hidden for this picture): no hard line where the DEM ends.
    const runLayers = await page.evaluate(() => {
      const m = window.subtherm!.map;
      const ids = m
        .getStyle()
        .layers.filter((l) => l.id.startsWith('run-') && (m.getLayoutProperty(l.id, 'visibility') ?? 'visible') === 'visible')
        .map((l) => l.id);
      for (const id of ids) m.setLayoutProperty(id, 'visibility', 'none');
      return ids;
    });
    await waitForMapIdle(page);
    await shot(page, 'terrain-hillshade');
    await page.evaluate((ids) => ids.forEach((id) => window.subtherm!.map.setLayoutProperty(id, 'visibility', 'visible')), runLayers);

    // Removed again with the edit link: the row and the hillshade go, and the server no longer lists a terrain.
    page.once('dialog', (d) => void d.accept());
    await page.locator('#terrain-remove').click();
    await expect.poll(() => page.locator('#project-datasets tr[data-kind="terrain"]').count(), { timeout: 30_000 }).toBe(0);
    expect(await page.evaluate(() => window.subtherm!.map.getLayer('project-hillshade') !== undefined)).toBe(false);
    expect(await listedLayers(page)).toEqual(['sites']);
    const pid = /\/p\/([A-Za-z0-9_-]+)/.exec(projectUrl)![1];
    expect((await fetch(`${server.url}/api/projects/${pid}/terrain`)).status).toBe(404);
  });

  it('saves a screenshot of every panel at 1440 × 900', async () => {
    const tabs = await page.locator('[role="tab"]').evaluateAll((bs) => bs.map((b) => (b as HTMLElement).dataset.tab!));
    expect(tabs).toEqual(expect.arrayContaining(['inspect', 'data', 'model', 'run', 'structure', 'section', 'heat', 'share']));
    for (const t of tabs) {
      await page.locator(`#tab-${t}`).click();
      await page.waitForFunction((id) => !document.getElementById(`tabpanel-${id}`)!.hidden, t);
      await shot(page, `panel-${t}`);
    }
    expect(page.viewportSize()).toEqual(VIEWPORT);
    expect(pageErrors).toEqual([]);
  });
});
