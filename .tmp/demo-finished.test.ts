// The demo opens finished: with the demo's default run switched on (SUBTHERM_DEMO_RUN=1), a newcomer's first page
// shows the run's progress, then depth to 300 °C and the isograds, without a single click.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { launchBrowser, startServerProcess, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';
import { rampCoverage } from '../helpers/pixels.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const pageErrors: string[] = [];

beforeAll(async () => {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  server = await startServerProcess({ env: { SUBTHERM_DEMO_RUN: '1' } });
  browser = await launchBrowser();
  page = await browser.newPage({ viewport: { width: 1440, height: 900 } });
  page.setDefaultTimeout(120_000);
  page.on('pageerror', (e) => pageErrors.push(e.message));
}, 180_000);

afterAll(async () => {
  await browser?.close();
  await server?.stop();
});

describe('the demo opens finished', { timeout: 900_000 }, () => {
  it('shows depth to 300 °C and the isograds on the first page without a click', async () => {
    await page.goto(server.url);
    await page.waitForFunction(() => window.subtherm !== undefined, undefined, { timeout: 120_000 });
    // No click from here on: the page follows the demo run by itself.
    await expect.poll(() => page.evaluate(() => window.subtherm!.run?.run.status ?? null), { timeout: 840_000, interval: 2000 }).toBe('done');
    await expect.poll(() => page.locator('#tiles-loading').count(), { timeout: 120_000 }).toBe(0);
    await waitForMapIdle(page, 120_000);
    const shown = await page.evaluate(() => {
      const m = window.subtherm!.map;
      const vis = (id: string) => (m.getLayer(id) ? ((m.getLayoutProperty(id, 'visibility') as string | undefined) ?? 'visible') : 'absent');
      return { depth300: vis('run-depth-300C'), isograds: vis('run-isograds'), isogradLines: m.getLayer('run-isograds') ? m.queryRenderedFeatures({ layers: ['run-isograds'] }).length : 0 };
    });
    expect(shown.depth300).toBe('visible');
    expect(shown.isograds).toBe('visible');
    expect(shown.isogradLines).toBeGreaterThan(0);
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'demo-finished-first-page.png') });
    // The depth-to-300 °C colours really cover the island (its inner part).
    const cov = await rampCoverage(page, 'run-depth-300C', [-128.6, -38.6, -127.2, -37.5]);
    expect(cov.ramp, JSON.stringify(cov)).toBeGreaterThan(0.6);
    expect(pageErrors).toEqual([]);
  });
});
