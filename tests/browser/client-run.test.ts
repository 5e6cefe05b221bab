// The map client's data → run → inspect → section path in a real browser against a real server: a bad upload shows
// the server's validation report, a good one feeds a run whose progress bar moves and whose layers appear, the
// column inspector shows the numbers POST /api/column gives, and a drawn line gives the section beneath it.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { startMapSession, type MapSession, waitForMapIdle, ROOT, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';

let server: RunningServer;
let page: Page;
const pageErrors: string[] = [];
const tileRequests: string[] = [];

let session: MapSession | undefined;
beforeAll(async () => {
  session = await startMapSession({
    viewport: { width: 1280, height: 800 },
    pageErrors,
    watch: (p) =>
      p.on('request', (r) => {
        if (r.url().includes('/tiles/')) tileRequests.push(r.url());
      }),
  });
  ({ server, page } = session);
}, 180_000);

afterAll(async () => await session?.close());

const shot = (name: string) => page.screenshot({ path: join(SCREENSHOT_DIR, `client-run-${name}.png`) });

async function api<T>(path: string, body: unknown): Promise<T> {
  const res = await fetch(server.url + path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  expect(res.status, `${path}: ${res.status}`).toBe(200);
  return (await res.json()) as T;
}

/** The demo sites as CSV, one id carrying HTML (it must show as text). */
function demoSitesCsv(): string {
  const fc = JSON.parse(readFileSync(join(ROOT, 'fixtures', 'demo', 'sites.geojson'), 'utf8')) as {
    features: { geometry: { coordinates: number[] }; properties: Record<string, unknown> }[];
  };
  const rows = fc.features.map((f, i) =>
    [
      f.geometry.coordinates[0],
      f.geometry.coordinates[1],
      i === 0 ? '<img src=x onerror="window.__pwned=1">' : f.properties.id,
      f.properties.heatFlowMWm2,
      f.properties.quality ?? '',
    ].join(','),
  );
  return ['longitude,latitude,id,heatFlowMWm2,quality', ...rows].join('\n');
}

describe('the map client: data, run, inspector, section', () => {
  it('shows the server validation report of a bad file as a table, user strings as text', async () => {
    await page.locator('#tab-data').click();
    const bad = {
      type: 'FeatureCollection',
      features: [
        { type: 'Feature', geometry: { type: 'Point', coordinates: [-128, -38] }, properties: { id: 'A1', quality: 'superb', heatFlowMWm2: 60 } },
        { type: 'Feature', geometry: { type: 'Point', coordinates: [-128, -38.1] }, properties: { id: '<b>A2</b><img src=x onerror="window.__pwned=1">' } },
      ],
    };
    await page.locator('#upload-kind').selectOption('sites');
    await page.locator('#upload-file').setInputFiles({ name: 'bad-sites.geojson', mimeType: 'application/geo+json', buffer: Buffer.from(JSON.stringify(bad)) });
    const report = page.locator('#upload-report .error');
    await expect.poll(() => report.count(), { timeout: 10_000 }).toBe(1);
    expect(await report.locator('.error-message').textContent()).toContain('2 problems in the sites data');
    const rows = await report.locator('tbody tr').evaluateAll((trs) => trs.map((tr) => [...tr.querySelectorAll('td')].map((td) => td.textContent)));
    expect(rows).toHaveLength(2);
    expect(rows[0][1]).toBe('properties.quality');
    expect(rows[0][2]).toContain('expected one of');
    // The feature id with markup arrives as text: no <b> or <img> element is created, no script ran.
    expect(rows[1][0]).toContain('<b>A2</b><img src=x');
    expect(rows[1][1]).toBe('properties.heatFlowMWm2');
    expect(await report.locator('b, img').count()).toBe(0);
    expect(await page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned)).toBeUndefined();
    await shot('1-bad-upload');
  });

  it('accepts a good CSV, and a run on it moves the progress bar and adds the computed layers', async () => {
    await page.locator('#upload-file').setInputFiles({ name: '<i>sites</i>.csv', mimeType: 'text/csv', buffer: Buffer.from(demoSitesCsv()) });
    const ok = page.locator('#upload-report .ok');
    await expect.poll(() => ok.count(), { timeout: 10_000 }).toBe(1);
    const okText = (await ok.textContent())!;
    expect(okText).toMatch(/^<i>sites<\/i>\.csv: 260 sites accepted as data set \S+\.$/);
    expect(await page.locator('#upload-report i').count()).toBe(0);
    const sitesId = await page.evaluate(() => window.subtherm!.state.params.sites);
    expect(sitesId).not.toBe('demo-sites');
    expect(okText).toContain(sitesId);

    await page.locator('#tab-run').click();
    await page.locator('#run-cell').fill('3');
    await page.locator('#run-cell').dispatchEvent('change');
    // Record every value the progress bar takes.
    await page.evaluate(() => {
      const bar = document.getElementById('run-progress')!;
      const seen: number[] = [];
      (window as unknown as { __progress: number[] }).__progress = seen;
      new MutationObserver(() => seen.push(Number(bar.getAttribute('aria-valuenow')))).observe(bar, { attributes: true, attributeFilter: ['aria-valuenow'] });
    });
    await page.locator('#run-button').click();
    await page.waitForTimeout(600);
    await shot('2-running');
    await expect.poll(() => page.locator('#run-progress').getAttribute('aria-valuenow'), { timeout: 360_000 }).toBe('100');
    const seen = await page.evaluate(() => (window as unknown as { __progress: number[] }).__progress);
    const between = seen.filter((v) => v > 0 && v < 100);
    expect(between.length).toBeGreaterThan(0);
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeGreaterThanOrEqual(seen[i - 1]);

    await expect.poll(() => page.evaluate(() => window.subtherm!.run?.run.id ?? null), { timeout: 20_000 }).toBeTruthy();
    const run = await page.evaluate(() => window.subtherm!.run!.run);
    expect((run.request as { sites: string }).sites).toBe(sitesId);
    await waitForMapIdle(page);
    const panel = (await page.locator('#run-layers').textContent())!;
    expect(panel).toContain('Surface heat flow');
    expect(panel).toContain('Depth to the 300 °C isotherm');
    expect(panel).toContain('mW/m²');
    const mapLayers = await page.evaluate(() =>
      window
        .subtherm!.map.getStyle()
        .layers.filter((l) => l.id.startsWith('run-'))
        .map((l) => ({ id: l.id, type: l.type })),
    );
    expect(mapLayers.map((l) => l.id)).toEqual(
      expect.arrayContaining([
        'run-heat-flow',
        'run-heat-flow-sd',
        'run-depth-300C',
        'run-depth-500C',
        'run-temperature',
        'run-facies',
        'run-cv-residuals',
        'run-isograds',
      ]),
    );
    // Grids arrive as raster-dem tiles coloured on the GPU by color-relief layers built from each legend.
    const types = Object.fromEntries(mapLayers.map((l) => [l.id, l.type]));
    expect(types['run-heat-flow']).toBe('color-relief');
    expect(types['run-facies']).toBe('color-relief');
    expect(tileRequests.some((u) => u.includes(`/api/runs/${run.id}/tiles/heat-flow/`))).toBe(true);
    const relief = await page.evaluate(() => JSON.stringify(window.subtherm!.map.getPaintProperty('run-heat-flow', 'color-relief-color')));
    expect(relief).toContain('"rgba(0,0,0,0)"');
    // The colour relief really draws: with only it shown, the land carries the ramp's colours.
    const coloured = await page.evaluate(() => {
      const map = window.subtherm!.map;
      const others = map
        .getStyle()
        .layers.filter(
          (l) =>
            l.id !== 'run-heat-flow' && l.type !== 'background' && l.id !== 'land' && (map.getLayoutProperty(l.id, 'visibility') ?? 'visible') === 'visible',
        )
        .map((l) => l.id);
      for (const l of others) map.setLayoutProperty(l, 'visibility', 'none');
      return new Promise<number>((resolve) => {
        map.once('idle', () => {
          const gl = map.getCanvas().getContext('webgl2') as WebGL2RenderingContext;
          const w = gl.drawingBufferWidth,
            h = gl.drawingBufferHeight;
          const px = new Uint8Array(w * h * 4);
          gl.readPixels(0, 0, w, h, gl.RGBA, gl.UNSIGNED_BYTE, px);
          let n = 0;
          for (let i = 0; i < px.length; i += 4 * 31) if (Math.abs(px[i] - px[i + 1]) + Math.abs(px[i + 1] - px[i + 2]) > 40) n++;
          for (const l of others) map.setLayoutProperty(l, 'visibility', 'visible');
          resolve(n);
        });
        map.triggerRepaint();
      });
    });
    expect(coloured).toBeGreaterThan(1000);
    await waitForMapIdle(page);
    // A new colour range changes the expression only: no tile is fetched again.
    const tilesBefore = tileRequests.length;
    await page.locator('#range-min-run-heat-flow').fill('50');
    await page.locator('#range-max-run-heat-flow').fill('90');
    await page.locator('#range-max-run-heat-flow').dispatchEvent('change');
    await waitForMapIdle(page);
    const restretched = await page.evaluate(() => window.subtherm!.map.getPaintProperty('run-heat-flow', 'color-relief-color') as unknown[]);
    expect(restretched.slice(-2)).toEqual([90, '#f4ecc2']);
    expect(await page.locator('[data-layer="run-heat-flow"] .ramp-ticks').textContent()).toContain('90 mW/m²');
    expect(tileRequests.length).toBe(tilesBefore);
    // The heat-flow surface is on by default; its depth-300 °C contours draw labelled lines.
    expect(await page.evaluate(() => window.subtherm!.map.getLayoutProperty('run-heat-flow', 'visibility') ?? 'visible')).toBe('visible');
    const contours = await page.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['run-depth-300C_contours'] }).length);
    expect(contours).toBeGreaterThan(0);
    // Residuals: off by default; switched on they draw one symbol per cross-validated site.
    await page.locator('#toggle-run-cv-residuals').check();
    await waitForMapIdle(page);
    const residuals = await page.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['run-cv-residuals'] }).length);
    expect(residuals).toBeGreaterThan(100);
    // The grid line gives the cells' ground size at the centre and, where it varies by more than 1 %, its range.
    const g = run.summary!.grid;
    const gridLine = (await page.locator('#run-grid').textContent())!;
    expect(gridLine).toContain(`${g.cellKm.toFixed(3)} km`);
    if ((g.groundCellKmRange[1] - g.groundCellKmRange[0]) / g.cellKm > 0.01) expect(gridLine).toContain(`${g.groundCellKmRange[0].toFixed(3)}–`);
    // Variogram plot and cross-validation summary from the run's summary.
    expect(await page.locator('.variogram-plot polyline.vg-model').count()).toBe(1);
    const cv = (await page.locator('#cv-summary').textContent())!;
    expect(cv).toContain('RMSE');
    const summaryRmse = (run.summary as { crossValidation: { rmse: number } }).crossValidation.rmse;
    expect(cv).toContain(summaryRmse.toFixed(2));
    // Download links point at the run's layer files.
    const href = await page.locator('[data-layer="run-depth-300C"] a[data-format="tif"]').getAttribute('href');
    expect(href).toBe(`/api/runs/${run.id}/layers/depth-300C.tif`);
    await shot('3-run-done');
  }, 480_000);

  it("the structure tab shows the run's isograd and fault report; isograds draw with high-side ticks", async () => {
    const run = await page.evaluate(() => window.subtherm!.run!.run);
    const structure = (run.summary as { structure?: { isograds: { isograd: string }[]; faults: { id: string; gradeJump: number | null }[] } }).structure;
    expect(structure, 'the run has an isograd and fault report').toBeTruthy();
    await page.locator('#tab-structure').click();
    const isoRows = await page.locator('#isograd-table tbody tr td:first-child').allTextContents();
    expect(isoRows).toEqual(structure!.isograds.map((i) => i.isograd));
    const f = structure!.faults.find((x) => x.gradeJump !== null)!;
    const cells = await page.locator(`#fault-table tr[data-fault="${f.id}"] td`).allTextContents();
    expect(cells).toContain(String(Math.round(f.gradeJump! * 100) / 100));
    expect(await page.locator('#fault-table thead').textContent()).toContain('Grade jump (zones)');
    await waitForMapIdle(page);
    const drawn = await page.evaluate(() => {
      const m = window.subtherm!.map;
      return {
        lines: m.queryRenderedFeatures({ layers: ['run-isograds'] }).length,
        ticks: m.queryRenderedFeatures({ layers: ['run-isograds-ticks'] }).length,
        offset: m.getPaintProperty('run-isograds-ticks', 'line-offset'),
      };
    });
    expect(drawn.lines).toBeGreaterThan(0);
    expect(drawn.ticks).toBeGreaterThan(0);
    expect(JSON.stringify(drawn.offset)).toContain('highSide');
    await shot('3b-structure');
  });

  it('a click opens the column inspector with the numbers POST /api/column gives', async () => {
    await page.locator('#toggle-run-cv-residuals').uncheck();
    const canvas = page.locator('#map canvas');
    const box = (await canvas.boundingBox())!;
    await page.mouse.click(box.x + box.width * 0.5, box.y + box.height * 0.5);
    await expect.poll(() => page.locator('#column-summary').count(), { timeout: 20_000 }).toBe(1);
    const last = await page.evaluate(() => window.subtherm!.lastColumn!);
    expect(last.request.runId).toBeTruthy();
    const answer = await api<{ surfaceHeatFlowMWm2: number; basalHeatFlowMWm2: number; isothermDepthsKm: Record<string, number | null>; profile: unknown[] }>(
      '/api/column',
      last.request,
    );
    const text = (await page.locator('#column-summary').textContent())!;
    expect(text).toContain(answer.surfaceHeatFlowMWm2.toFixed(1));
    expect(text).toContain(answer.basalHeatFlowMWm2.toFixed(1));
    for (const [t, d] of Object.entries(answer.isothermDepthsKm)) {
      expect(text).toContain(`Depth to ${t} °C`);
      if (d !== null) expect(text).toContain(d.toFixed(2));
    }
    expect(await page.locator('#column-source').textContent()).toContain("run's heat-flow surface");
    // The plot: geotherm, solidus curves, facies fields labelled approximate, isotherm marks, pressure axis.
    const plot = page.locator('#column-plot svg');
    expect(await plot.locator('polyline.geotherm').count()).toBe(1);
    expect(await plot.locator('polyline.solidus').count()).toBeGreaterThanOrEqual(1);
    expect(await plot.locator('polygon[data-facies]').count()).toBeGreaterThan(2);
    expect(await plot.textContent()).toContain('approximate');
    expect(await plot.textContent()).toContain('kbar');
    // Values under the cursor, read from the profile.
    const pb = (await plot.boundingBox())!;
    await page.mouse.move(pb.x + pb.width / 2, pb.y + pb.height / 2);
    const readout = (await page.locator('.readout').textContent())!;
    expect(readout).toMatch(/km · \d+ °C · [\d.]+ kbar · [\d.]+ mW\/m²/);
    await shot('4-inspector');
  });

  it('draws a section line (clicks, Enter) and shows the section POST /api/section gives', async () => {
    await page.locator('#tab-section').click();
    await page.locator('#section-depth').fill('30');
    await page.locator('#section-draw').click();
    const box = (await page.locator('#map canvas').boundingBox())!;
    await page.mouse.click(box.x + box.width * 0.3, box.y + box.height * 0.45);
    await page.mouse.click(box.x + box.width * 0.5, box.y + box.height * 0.5);
    await page.mouse.click(box.x + box.width * 0.7, box.y + box.height * 0.55);
    expect(await page.locator('#section-state').textContent()).toBe('3 points');
    await page.keyboard.press('Enter');
    await expect.poll(() => page.locator('#section-figure').count(), { timeout: 30_000 }).toBe(1);
    const s = await page.evaluate(() => window.subtherm!.lastSection!);
    const line = await page.evaluate(
      () =>
        (
          window.subtherm!.map.getSource('section-line') as unknown as {
            _data: {
              geojson?: { features: { geometry: { type: string; coordinates: number[][] } }[] };
              features?: { geometry: { type: string; coordinates: number[][] } }[];
            };
          }
        )._data,
    );
    const fc = line.geojson ?? line;
    const ls = fc.features!.find((f) => f.geometry.type === 'LineString')!;
    expect(ls.geometry.coordinates).toHaveLength(3);
    const runId = await page.evaluate(() => window.subtherm!.run!.run.id);
    const again = await api<{ lengthKm: number; isotherms: { temperatureC: number; depthKm: (number | null)[] }[] }>('/api/section', {
      runId,
      line: ls.geometry.coordinates,
      maxDepthKm: 30,
    });
    expect(s.lengthKm).toBe(again.lengthKm);
    expect(s.isotherms.map((i) => i.temperatureC)).toEqual(again.isotherms.map((i) => i.temperatureC));
    expect(await page.locator('#section-figure path.isotherm-curve').count()).toBeGreaterThanOrEqual(1);
    expect(await page.locator('#section-figure').textContent()).toContain('(approx.)');
    // Escape cancels a line being drawn.
    await page.locator('#section-draw').click();
    await page.mouse.click(box.x + box.width * 0.4, box.y + box.height * 0.4);
    await page.keyboard.press('Escape');
    expect(await page.locator('#section-draw').getAttribute('aria-pressed')).toBe('false');
    await shot('5-section');
    expect(pageErrors).toEqual([]);
  });
  it('cancels a run in progress', async () => {
    await page.locator('#tab-run').click();
    await page.locator('#run-realizations').fill('400');
    await page.locator('#run-realizations').dispatchEvent('change');
    await page.locator('#run-cell').fill('2');
    await page.locator('#run-cell').dispatchEvent('change');
    await page.locator('#run-button').click();
    await expect.poll(() => page.locator('#run-cancel').isDisabled(), { timeout: 10_000 }).toBe(false);
    await page.locator('#run-cancel').click();
    await expect.poll(() => page.locator('#run-message').textContent(), { timeout: 30_000 }).toBe('Run cancelled.');
    expect(await page.locator('#run-button').isDisabled()).toBe(false);
    await shot('6-cancelled');
  });
});
