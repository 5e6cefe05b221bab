// The map client's layer panel in a real browser: the demo draws, layers toggle and fade, the state rides in the
// URL, and the first map's time is measured (printed, not asserted).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { openMap, renderedCounts, startMapSession, type MapSession, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
let firstMapMs = NaN;

let session: MapSession | undefined;
beforeAll(async () => {
  session = await startMapSession({ viewport: { width: 1280, height: 800 }, open: false });
  ({ server, browser, page } = session);
  const t0 = Date.now();
  await openMap(page, server.url, true);
  firstMapMs = Date.now() - t0;
}, 180_000);

afterAll(async () => await session?.close());

const layoutOf = (p: Page, layer: string) => p.evaluate((l) => window.subtherm!.map.getLayoutProperty(l, 'visibility') ?? 'visible', layer);
const paintOf = (p: Page, layer: string, prop: string) =>
  p.evaluate(([l, pr]) => window.subtherm!.map.getPaintProperty(l, pr as 'circle-opacity'), [layer, prop] as const);

// Under load a software-WebGL page answers slowly: each step gets a wide timeout (the tests assert no wall time).
describe('the map client: layers', { timeout: 300_000 }, () => {
  it('draws the demo data layers and shows each legend with units, and the caution', async () => {
    console.log(`first map of the demo (goto → idle) in ${firstMapMs} ms at 1280 × 800, headless chromium with SwiftShader`);
    const counts = await renderedCounts(page, ['sites', 'samples', 'faults']);
    expect(counts.sites).toBeGreaterThan(100);
    expect(counts.samples).toBeGreaterThan(100);
    expect(counts.faults).toBeGreaterThanOrEqual(6);
    const panel = await page.locator('#panel').textContent();
    expect(panel).toContain('mW/m²');
    expect(panel).toContain('Terrain (hillshade)');
    // The demo holds every kind the panel lists, so none is left out for want of data.
    for (const id of ['sites', 'samples', 'faults', 'terrain']) expect(await page.locator(`section.layer[data-layer="${id}"]`).isVisible(), id).toBe(true);
    expect(await page.locator('#data-layers-empty').isVisible()).toBe(false);
    expect(panel).toContain('No run yet');
    expect(await page.locator('#caution').textContent()).toContain('Not a basis for drilling, well design or pressure control');
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-1-demo.png') });
  });

  it('toggles a layer and sets its opacity from the panel; the map and the URL follow', async () => {
    await page.locator('#toggle-samples').uncheck();
    expect(await layoutOf(page, 'samples')).toBe('none');
    expect(await page.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['samples'] }).length)).toBe(0);
    await page.locator('#toggle-samples').check();
    expect(await layoutOf(page, 'samples')).toBe('visible');

    // The slider is keyboard-operable: focus it and step it down.
    await page.locator('#opacity-sites').focus();
    for (let i = 0; i < 8; i++) await page.keyboard.press('ArrowLeft');
    expect(await page.locator('#opacity-sites').inputValue()).toBe('60');
    expect(await paintOf(page, 'sites', 'circle-opacity')).toBeCloseTo(0.6, 6);
    expect(await paintOf(page, 'sites', 'circle-stroke-opacity')).toBeCloseTo(0.6, 6);
    // Hillshade has no opacity property: its exaggeration is scaled instead.
    await page.locator('#opacity-terrain').fill('50');
    expect(await paintOf(page, 'hillshade', 'hillshade-exaggeration')).toBeCloseTo(0.425, 6);
    await page.locator('#toggle-faults').uncheck();
    expect(await layoutOf(page, 'fault-labels')).toBe('none');

    await expect.poll(() => page.evaluate(() => new URL(location.href).searchParams.get('s')), { timeout: 5000 }).toBeTruthy();
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-2-toggled.png') });
  });

  it('opens the same map state from the URL in a fresh browser context', async () => {
    await page.evaluate(() => window.subtherm!.map.jumpTo({ center: [-127.9, -38.1], zoom: 9.3 }));
    await expect
      .poll(() =>
        page.evaluate(() => {
          const v = window.subtherm!.state.view;
          return v ? Math.round(v.zoom * 10) : null;
        }),
      )
      .toBe(93);
    await page.waitForTimeout(300);
    const link = page.url();
    expect(link).toContain('?s=');
    const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
    const fresh = await ctx.newPage();
    await openMap(fresh, link);
    const view = await fresh.evaluate(() => {
      const m = window.subtherm!.map;
      return { lng: m.getCenter().lng, lat: m.getCenter().lat, zoom: m.getZoom() };
    });
    expect(view.lng).toBeCloseTo(-127.9, 3);
    expect(view.lat).toBeCloseTo(-38.1, 3);
    expect(view.zoom).toBeCloseTo(9.3, 2);
    expect(await layoutOf(fresh, 'faults')).toBe('none');
    expect(await fresh.locator('#toggle-faults').isChecked()).toBe(false);
    expect(await fresh.locator('#opacity-sites').inputValue()).toBe('60');
    expect(await paintOf(fresh, 'sites', 'circle-opacity')).toBeCloseTo(0.6, 6);
    await fresh.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-3-restored.png') });
    await ctx.close();
  });

  it('usable at 1920 × 1080: the map, both panels and the caution are in view', async () => {
    await page.setViewportSize({ width: 1920, height: 1080 });
    await page.waitForTimeout(300);
    const boxes = await page.evaluate(() =>
      Object.fromEntries(
        ['map', 'panel', 'tools', 'caution'].map((id) => {
          const r = document.getElementById(id)!.getBoundingClientRect();
          return [id, { w: r.width, h: r.height, bottom: r.bottom }];
        }),
      ),
    );
    expect(boxes.map.w).toBeGreaterThan(900);
    expect(boxes.caution.bottom).toBeLessThanOrEqual(1080);
    expect(boxes.tools.h).toBeGreaterThan(800);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-4-1920.png') });
    await page.setViewportSize({ width: 1280, height: 800 });
  });
  it('the model editor starts from the demo model and validates as you type, beside the field', async () => {
    await page.locator('#tab-model').click();
    expect(await page.locator('#model-surfaceTemperatureC').inputValue()).toBe('12');
    const bottom = page.locator('#model-editor tbody.layer-rows').nth(1).locator('input[data-field="bottomKm"]');
    expect(await bottom.inputValue()).toBe('25');
    await bottom.fill('10');
    const err = page.locator('#model-editor tbody.layer-rows').nth(1).locator('.field-error').nth(1);
    expect(await err.textContent()).toContain("must be greater than the layer above's bottom (15 km)");
    expect(await bottom.getAttribute('aria-invalid')).toBe('true');
    expect(await page.locator('#model-status').textContent()).toMatch(/^1 problem/);
    await page.locator('#model-surfaceTemperatureC').fill('warm');
    expect(await page.locator('#err-model-surfaceTemperatureC').textContent()).toContain('expected a finite number');
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-5-model-errors.png') });
    await page.locator('#model-surfaceTemperatureC').fill('12');
    await bottom.fill('25');
    expect(await page.locator('#model-status').textContent()).toBe('Valid: 4 layers to 60 km.');
    expect(await bottom.getAttribute('aria-invalid')).toBeNull();
  });

  it('before a run, a click opens the column of the model at the nearest site and says so; numbers match the API', async () => {
    await page.locator('#toggle-faults').check();
    const site = await page.evaluate(() => {
      const m = window.subtherm!.map;
      const f = m.queryRenderedFeatures({ layers: ['sites'] })[0];
      const c = (f.geometry as { coordinates: number[] }).coordinates;
      const px = m.project([c[0], c[1]]);
      return { x: px.x, y: px.y, id: String(f.properties.id), q: Number(f.properties.heatFlowMWm2) };
    });
    const box = (await page.locator('#map canvas').boundingBox())!;
    await page.mouse.click(box.x + site.x, box.y + site.y);
    await expect.poll(() => page.locator('#column-summary').count(), { timeout: 20_000 }).toBe(1);
    const src = (await page.locator('#column-source').textContent())!;
    expect(src).toContain(`nearest site, ${site.id}`);
    const last = await page.evaluate(() => window.subtherm!.lastColumn!);
    expect(last.request.heatFlowMWm2).toBe(site.q);
    expect(last.request.maxDepthKm).toBe(60);
    const res = await fetch(`${server.url}/api/column`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify(last.request),
    });
    const answer = (await res.json()) as {
      surfaceHeatFlowMWm2: number;
      basalHeatFlowMWm2: number;
      isothermDepthsKm: Record<string, number | null>;
      profile: { depthKm: number }[];
    };
    expect(answer.surfaceHeatFlowMWm2).toBe(site.q);
    const text = (await page.locator('#column-summary').textContent())!;
    expect(text).toContain(answer.basalHeatFlowMWm2.toFixed(1));
    for (const d of Object.values(answer.isothermDepthsKm)) if (d !== null) expect(text).toContain(d.toFixed(2));
    // The column reaches the model's maximum depth; the plot shows its valid part and says how much of it.
    expect(answer.profile[answer.profile.length - 1].depthKm).toBe(60);
    const texts = await page.locator('#column-plot svg text').allTextContents();
    expect(texts.some((t) => t === '60' || t.includes('of the 60 km column'))).toBe(true);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-6-column-before-run.png') });

    // A distribution in the model: the editor accepts it, and the column comes back with its P10–P90 band.
    await page.locator('#tab-model').click();
    const k0 = page.locator('#model-editor tbody.layer-rows').first().locator('input[data-field="conductivityWmK"]');
    await k0.fill('{"dist":"normal","mean":3,"sd":0.3}');
    expect(await page.locator('#model-status').textContent()).toBe('Valid: 4 layers to 60 km.');
    await page.mouse.click(box.x + site.x, box.y + site.y);
    await expect.poll(() => page.locator('#column-plot polygon.band').count(), { timeout: 30_000 }).toBe(1);
    const banded = await page.evaluate(() => window.subtherm!.lastColumn!);
    expect(banded.request.realizations).toBe(200);
    const band = (banded.answer.monteCarlo as { profileTemperatureC: { p10: number | null; p90: number | null }[] }).profileTemperatureC;
    const mid = Math.floor(band.length / 2);
    expect(band[mid].p90!).toBeGreaterThan(band[mid].p10!);
    expect(await page.locator('#column-summary').textContent()).toContain('(P10 / P50 / P90)');
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-6b-column-band.png') });
    await page.locator('#tab-model').click();
    await k0.fill('3');
  });

  it('the structure table lists the faults; selecting one highlights it and its samples', async () => {
    await page.locator('#tab-structure').click();
    const rows = page.locator('#fault-table tbody tr');
    expect(await rows.count()).toBeGreaterThanOrEqual(6);
    const first = rows.first();
    const faultId = (await first.getAttribute('data-fault'))!;
    await first.locator('button').press('Enter');
    expect(await first.locator('button').getAttribute('aria-pressed')).toBe('true');
    await waitForMapIdle(page);
    const hl = await page.evaluate(() => {
      const m = window.subtherm!.map;
      return {
        faults: m.queryRenderedFeatures({ layers: ['fault-highlight'] }).map((f) => String(f.properties.id)),
        samples: m.queryRenderedFeatures({ layers: ['sample-highlight'] }).length,
      };
    });
    expect(hl.faults.length).toBeGreaterThan(0);
    expect(new Set(hl.faults)).toEqual(new Set([faultId]));
    const info = (await page.locator('#fault-selection').textContent())!;
    const n = Number(/(\d+) samples? highlighted/.exec(info)?.[1]);
    expect(n).toBeGreaterThan(0);
    expect(hl.samples).toBeGreaterThan(0);
    expect(hl.samples).toBeLessThanOrEqual(n);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-layers-7-fault-selected.png') });
    await first.locator('button').click();
    expect(await first.locator('button').getAttribute('aria-pressed')).toBe('false');
    await waitForMapIdle(page);
    await expect
      .poll(() => page.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['fault-highlight', 'sample-highlight'] }).length))
      .toBe(0);
  });

  it('measures the first map of the demo in a fresh context (warm browser)', async () => {
    const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
    const p = await ctx.newPage();
    const t0 = Date.now();
    await p.goto(server.url);
    // The page's handle appears once its script has run; wait for it before reading it.
    await p.waitForFunction(() => window.subtherm !== undefined, undefined, { timeout: 60_000, polling: 100 });
    await p.evaluate(() => window.subtherm!.ready);
    await waitForMapIdle(p);
    console.log(`first map of the demo in a fresh context (browser running): ${Date.now() - t0} ms`);
    expect(await p.evaluate(() => window.subtherm!.map.queryRenderedFeatures({ layers: ['sites'] }).length)).toBeGreaterThan(100);
    await ctx.close();
  });
});
