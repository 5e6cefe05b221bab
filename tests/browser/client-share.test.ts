// Sharing in a real browser: "Share" saves the project (POST /api/projects); its view link opens the same map
// read-only in a fresh browser context, its edit link opens it editable and saves a new revision; the title with
// markup stays text; the map exports as a PNG with the legend and caution strip beneath.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { openMap, startMapSession, type MapSession, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const TITLE = 'Ridge <b>survey</b> <img src=x onerror="window.__pwned=1">';

let session: MapSession | undefined;
beforeAll(async () => {
  session = await startMapSession({ viewport: { width: 1280, height: 800 }, acceptDownloads: true });
  ({ server, browser, page } = session);
}, 180_000);

afterAll(async () => await session?.close());

async function open(link: string): Promise<{ page: Page; close: () => Promise<void> }> {
  const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
  const p = await ctx.newPage();
  await openMap(p, link, true);
  return { page: p, close: () => ctx.close() };
}

const mapState = (p: Page) =>
  p.evaluate(() => {
    const m = window.subtherm!.map;
    const vis = (l: string) => m.getLayoutProperty(l, 'visibility') ?? 'visible';
    return {
      lng: Math.round(m.getCenter().lng * 1e4) / 1e4,
      lat: Math.round(m.getCenter().lat * 1e4) / 1e4,
      zoom: Math.round(m.getZoom() * 100) / 100,
      samples: vis('samples'),
      heatFlow: m.getLayer('run-heat-flow') ? vis('run-heat-flow') : 'absent',
      depth300: m.getLayer('run-depth-300C') ? vis('run-depth-300C') : 'absent',
      sitesOpacity: m.getPaintProperty('sites', 'circle-opacity'),
      runId: window.subtherm!.state.runId,
      isotherms: window.subtherm!.state.params.isothermsC,
    };
  });

describe('the map client: sharing and export', () => {
  let viewUrl = '';
  let editUrl = '';
  let before: Awaited<ReturnType<typeof mapState>>;

  it('runs, arranges the map, and saves it as a project with a view link and an edit link', async () => {
    await page.locator('#tab-run').click();
    await page.locator('#run-isotherms').fill('300, 450');
    await page.locator('#run-isotherms').dispatchEvent('change');
    await page.locator('#run-button').click();
    await expect.poll(() => page.evaluate(() => window.subtherm!.run?.run.id ?? null), { timeout: 120_000 }).toBeTruthy();
    await waitForMapIdle(page);
    await page.locator('#toggle-samples').uncheck();
    await page.locator('#toggle-run-heat-flow').uncheck();
    await page.locator('#toggle-run-depth-300C').check();
    await page.locator('#opacity-sites').fill('40');
    await page.evaluate(() => window.subtherm!.map.jumpTo({ center: [-127.75, -38.2], zoom: 8.6 }));
    await waitForMapIdle(page);
    await page.locator('#topbar-share').click();
    await page.locator('#share-title').fill(TITLE);
    await page.locator('#share-button').click();
    await expect.poll(() => page.locator('#share-view-url').count(), { timeout: 10_000 }).toBe(1);
    viewUrl = await page.locator('#share-view-url').inputValue();
    editUrl = await page.locator('#share-edit-url').inputValue();
    expect(new URL(viewUrl).hash).toBe('');
    const token = /#edit=(.+)$/.exec(editUrl)?.[1];
    expect(token).toBeTruthy();
    // The token rides only in the fragment, never in the path or the query.
    expect(new URL(editUrl).pathname + new URL(editUrl).search).not.toContain(token!);
    before = await mapState(page);
    expect(before.heatFlow).toBe('none');
    expect(before.depth300).toBe('visible');
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-share-1-saved.png') });
  }, 240_000);

  it('the view link restores the same map in a fresh browser, read-only, with the title as text', async () => {
    const v = await open(viewUrl);
    expect(await mapState(v.page)).toEqual(before);
    expect(await v.page.locator('#readonly-badge').isVisible()).toBe(true);
    expect(await v.page.locator('#readonly-badge').textContent()).toBe('read-only');
    for (const sel of ['#run-button', '#upload-file', '#upload-kind', '#share-button', '#model-surfaceTemperatureC', '#model-add-layer', '#run-isotherms']) {
      expect(await v.page.locator(sel).isDisabled(), sel).toBe(true);
    }
    expect(await v.page.locator('#project-title').textContent()).toBe(TITLE);
    expect(await v.page.locator('.topbar b, .topbar img').count()).toBe(0);
    expect(await v.page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned)).toBeUndefined();
    // Layers stay operable in a view link (they change the local view only).
    expect(await v.page.locator('#toggle-samples').isDisabled()).toBe(false);
    await v.page.screenshot({ path: join(SCREENSHOT_DIR, 'client-share-2-view-link.png') });
    await v.close();
  });

  it('the edit link opens editable and saves a new revision with the token', async () => {
    const e = await open(editUrl);
    expect(await mapState(e.page)).toEqual(before);
    expect(await e.page.locator('#readonly-badge').isVisible()).toBe(false);
    expect(await e.page.locator('#run-button').isDisabled()).toBe(false);
    await e.page.locator('#opacity-sites').fill('80');
    await e.page.locator('#tab-share').click();
    await e.page.locator('#share-button').click();
    await expect.poll(() => e.page.locator('#share-out .ok').textContent(), { timeout: 10_000 }).toContain('Saved revision 2');
    const id = new URL(viewUrl).pathname.split('/').pop()!;
    const saved = (await (await fetch(`${server.url}/api/projects/${id}`)).json()) as {
      revision: number;
      state: { layers: Record<string, { opacity: number }> };
    };
    expect(saved.revision).toBe(2);
    expect(saved.state.layers.sites.opacity).toBeCloseTo(0.8, 6);
    await e.close();
  });

  it('exports the map as a PNG with the legend line and the caution drawn beneath it', async () => {
    const [dl] = await Promise.all([page.waitForEvent('download'), page.locator('#export-png').click()]);
    const path = await dl.path();
    const png = readFileSync(path);
    copyFileSync(path, join(SCREENSHOT_DIR, 'client-share-4-exported-map.png'));
    expect(png.subarray(1, 4).toString('latin1')).toBe('PNG');
    const width = png.readUInt32BE(16),
      height = png.readUInt32BE(20);
    const canvas = await page.evaluate(() => ({ w: window.subtherm!.map.getCanvas().width, h: window.subtherm!.map.getCanvas().height }));
    expect(width).toBe(canvas.w);
    expect(height).toBeGreaterThan(canvas.h + 30);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'client-share-3-export.png') });
  });
});
