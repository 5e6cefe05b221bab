import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { openMap, renderedCounts, startMapSession, type MapSession, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';

let server: RunningServer;
let page: Page;
const requests: string[] = [];

let session: MapSession | undefined;
beforeAll(async () => {
  // The data sources are filled once the page has read its state: openMap waits for that, then for the map again.
  session = await startMapSession({ viewport: { width: 1280, height: 800 }, watch: (p) => p.on('request', (r) => requests.push(r.url())), open: false });
  ({ server, page } = session);
  await openMap(page, server.url, true);
}, 180_000);

afterAll(async () => await session?.close());

describe('the demo map in a real browser', () => {
  it('draws sites, samples and faults as rendered features', async () => {
    const counts = await renderedCounts(page, ['sites', 'samples', 'faults']);
    expect(counts.sites).toBeGreaterThan(100);
    expect(counts.samples).toBeGreaterThan(100);
    expect(counts.faults).toBeGreaterThanOrEqual(6);
  });

  it('draws the terrain: hillshade tiles load and the land is shaded, not flat', async () => {
    const terrain = await page.evaluate(() => {
      const map = window.subtherm!.map;
      const source = map.getSource('terrain') as unknown as { loaded(): boolean } | undefined;
      return { hasLayer: Boolean(map.getLayer('hillshade')), loaded: source?.loaded() ?? false };
    });
    expect(terrain).toEqual({ hasLayer: true, loaded: true });
    expect(requests.filter((u) => /\/api\/terrain\/\d+\/\d+\/\d+\.png$/.test(u)).length).toBeGreaterThan(0);
    // Pixels of the land between data symbols: shading gives a spread of tones; a flat fill would give one.
    const spread = await page.evaluate(() => {
      const map = window.subtherm!.map;
      for (const l of ['sites', 'samples', 'faults', 'fault-labels']) map.setLayoutProperty(l, 'visibility', 'none');
      return new Promise<{ distinct: number; nonBackground: number }>((resolve) => {
        map.once('idle', () => {
          const gl = map.getCanvas().getContext('webgl2') as WebGL2RenderingContext;
          const w = gl.drawingBufferWidth,
            h = gl.drawingBufferHeight;
          const px = new Uint8Array(w * h * 4);
          gl.readPixels(0, 0, w, h, gl.RGBA, gl.UNSIGNED_BYTE, px);
          const tones = new Set<number>();
          let nonBackground = 0;
          for (let i = 0; i < px.length; i += 4 * 97) {
            const [r, g, b] = [px[i], px[i + 1], px[i + 2]];
            if (!(r === 0xdf && g === 0xe6 && b === 0xea)) nonBackground++;
            tones.add((r << 16) | (g << 8) | b);
          }
          for (const l of ['sites', 'samples', 'faults', 'fault-labels']) map.setLayoutProperty(l, 'visibility', 'visible');
          resolve({ distinct: tones.size, nonBackground });
        });
        map.triggerRepaint();
      });
    });
    expect(spread.nonBackground).toBeGreaterThan(1000);
    expect(spread.distinct).toBeGreaterThan(20);
  });

  it('shows the legend with units and the caution', async () => {
    await expect.poll(() => page.locator('#caution').textContent()).toContain('Screening estimates only');
    const legend = await page.locator('#panel').textContent();
    expect(legend).toContain('mW/m²');
    expect(legend).toContain('sillimanite');
    expect(legend).toContain('thrust');
  });

  it('toggles a layer off and on from the panel', async () => {
    await page.locator('#toggle-sites').uncheck();
    expect(await page.evaluate(() => window.subtherm!.map.getLayoutProperty('sites', 'visibility'))).toBe('none');
    await page.locator('#toggle-sites').check();
    expect(await page.evaluate(() => window.subtherm!.map.getLayoutProperty('sites', 'visibility'))).toBe('visible');
  });

  it('made no request outside localhost, and saves a screenshot', async () => {
    await waitForMapIdle(page);
    const outside = requests.filter((u) => !/^(http:\/\/localhost:\d+\/|data:|blob:)/.test(u));
    expect(outside).toEqual([]);
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'demo-map.png') });
  });
});
