// The column plot where the column melts: the demo model at a surface heat flow of 110 mW/m² reaches the
// fluid-absent solidus of its felsic middle crust (780 °C, Le Breton & Thompson 1988, the curve the API names) near
// 15 km. The plot draws each layer's own solidus curves (no mantle curve over crustal layers), hatches the zone below
// the melt onset the API reports, gives the lithosphere base, and its readout has no temperature or facies there.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { launchBrowser, startServerProcess, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const pageErrors: string[] = [];

beforeAll(async () => {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  server = await startServerProcess();
  browser = await launchBrowser();
  page = await browser.newPage({ viewport: { width: 1440, height: 900 } });
  page.setDefaultTimeout(120_000);
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(server.url);
  await waitForMapIdle(page);
  await page.evaluate(() => window.subtherm!.ready);
}, 180_000);

afterAll(async () => {
  await browser?.close();
  await server?.stop();
});

describe('the column plot of a column that melts', { timeout: 300_000 }, () => {
  it('shows the melt onset with the invalid zone below, rock-aware solidus curves, the lithosphere base, and a readout that stops there', async () => {
    await page.locator('#tab-model').click();
    await page.locator('#model-surfaceHeatFlowMWm2').fill('110');
    await page.locator('#model-surfaceHeatFlowMWm2').dispatchEvent('change');
    // Open sea north-east of the island: no site within 10 km, so the column takes the model's heat flow.
    const box = (await page.locator('#map').boundingBox())!;
    const pt = await page.evaluate(() => window.subtherm!.map.project([-126.95, -37.12]));
    await page.mouse.click(box.x + pt.x, box.y + pt.y);
    await expect.poll(() => page.locator('#column-plot svg').count(), { timeout: 60_000 }).toBe(1);
    const last = await page.evaluate(() => window.subtherm!.lastColumn!);
    expect(last.request.heatFlowMWm2).toBe(110);
    const answer = last.answer as { meltOnsetKm: number; meltOnset: { curve: string; layer: string }; lithosphereBaseKm: number; validToKm: number };
    expect(answer.meltOnset.curve).toBe('fluid-absent-felsic');
    expect(answer.meltOnsetKm).toBeGreaterThan(14);
    expect(answer.meltOnsetKm).toBeLessThan(16);

    const plot = page.locator('#column-plot svg');
    const zone = plot.locator('rect.invalid-zone');
    expect(await zone.count()).toBe(1);
    expect(Number(await zone.getAttribute('data-from-km'))).toBeCloseTo(answer.validToKm, 6);
    const label = (await plot.locator('#column-invalid-label').textContent())!;
    expect(label).toContain(`no temperature below ${answer.meltOnsetKm.toFixed(1)} km`);
    expect(label).toContain('fluid-absent felsic solidus');
    // Each layer's own curves: granite and fluid-absent felsic in the felsic crust, never the mantle's peridotite there.
    const curves = await plot.locator('polyline.solidus').evaluateAll((ls) => ls.map((l) => `${l.getAttribute('data-layer')}:${l.getAttribute('data-curve')}`));
    expect(curves).toEqual(expect.arrayContaining(['upper crust:wet-granite', 'upper crust:fluid-absent-felsic', 'middle crust:fluid-absent-felsic']));
    expect(curves.filter((c) => /crust:.*peridotite/.test(c))).toEqual([]);
    // The lithosphere base (35 km here, the top of the mantle) lies below the plotted window: the plot says where.
    const plotted = await plot.textContent();
    expect(plotted).toContain(`lithosphere base at ${answer.lithosphereBaseKm.toFixed(1)} km`);

    // The readout: temperature and facies above the melt onset, neither below it.
    const pb = (await plot.boundingBox())!;
    // Depth to screen: the frame's top is the surface, the hatched zone's top the melt onset.
    const frame = (await plot.locator('rect.frame').boundingBox())!;
    const zoneTop = (await zone.boundingBox())!.y;
    const yAt = (km: number) => frame.y + ((zoneTop - frame.y) * km) / answer.validToKm;
    await page.mouse.move(pb.x + pb.width / 2, yAt(answer.meltOnsetKm * 0.6));
    let readout = (await page.locator('.readout').textContent())!;
    expect(readout).toMatch(/km · \d+ °C · [\d.]+ kbar/);
    expect(readout).toContain('(approximate)');
    await page.mouse.move(pb.x + pb.width / 2, yAt(answer.meltOnsetKm * 1.1));
    readout = (await page.locator('.readout').textContent())!;
    expect(readout).toContain('no temperature');
    expect(readout).not.toMatch(/°C|approximate/);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'column-melt-onset.png') });
    expect(pageErrors).toEqual([]);
  });
});
