// The run panel draws a run's estimated anisotropy (client/src/variogram-plot.ts) in a real browser: a run asked for
// interpolation.anisotropy 'auto' through the API, opened from a saved-state link at 1440 × 900; one curve and the
// dots of every direction, the variogram map's cells and the fitted ellipse, and a caption with the run's angle and
// ratio. Screenshot: tests/screenshots/anisotropy-run-panel.png.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { startMapSession, type MapSession, waitForMapIdle, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';
import { runSummarySchema } from '../../shared/schema/run.ts';
import { decodePngRgb } from '../helpers/png.ts';

let server: RunningServer;
let page: Page;
const pageErrors: string[] = [];

let session: MapSession | undefined;
beforeAll(async () => {
  session = await startMapSession({ viewport: { width: 1440, height: 900 }, pageErrors, open: false });
  ({ server, page } = session);
}, 180_000);

afterAll(async () => await session?.close());

describe('the run panel shows the estimated anisotropy', () => {
  it('draws the directional semivariograms, the variogram map and the fitted angle and ratio', async () => {
    const post = await fetch(`${server.url}/api/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ sites: 'demo-sites', model: 'demo-model', grid: { cellKm: 8 }, interpolation: { method: 'kriging', anisotropy: 'auto' } }),
    });
    expect(post.status).toBe(202);
    const { id } = (await post.json()) as { id: string };
    let view: { status: string; summary?: unknown } = { status: 'queued' };
    for (let i = 0; i < 600 && view.status !== 'done' && view.status !== 'failed'; i++) {
      await new Promise((r) => setTimeout(r, 500));
      view = (await (await fetch(`${server.url}/api/runs/${id}`)).json()) as typeof view;
    }
    expect(view.status).toBe('done');
    const est = runSummarySchema.parse(view.summary).interpolation.variogram!.anisotropyEstimate!;

    const state = Buffer.from(JSON.stringify({ r: id })).toString('base64url');
    await page.goto(`${server.url}/?s=${state}`);
    await waitForMapIdle(page);
    // Under load a software-WebGL page answers slowly: the actions get a wide timeout (the test asserts no wall time).
    await page.locator('#tab-run').click({ timeout: 180_000 });
    const plot = page.locator('svg.anisotropy-plot');
    await expect.poll(() => plot.count(), { timeout: 180_000 }).toBe(1);
    expect(await plot.locator('polyline.aniso-curve').count()).toBe(est.directions.length);
    const lags = est.directions.reduce((s, d) => s + d.lags.length, 0);
    expect(await plot.locator('circle.aniso-point').count()).toBe(lags);
    // Every curve is drawn inside the frame (finite coordinates).
    const points = await plot.locator('polyline.aniso-curve').evaluateAll((ls) => ls.map((l) => l.getAttribute('points') ?? ''));
    for (const p of points) expect(p).not.toMatch(/NaN|Infinity/);
    const map = page.locator('svg.variogram-map');
    expect(await map.locator('rect.vmap-cell').count()).toBe(est.map.gamma.filter((g) => g !== null).length);
    expect(await map.locator('ellipse.aniso-ellipse').count()).toBe(1);
    // The range ellipse is clipped to the map's frame: its clip path is the frame's rectangle, and in a screenshot of
    // the map no pixel of its colour (#d4462c) lies outside the frame. The same map with the clip path removed shows
    // where the ellipse would run (the check fails if the fitted ellipse never leaves the frame), and inside the frame
    // the clipped map draws the same pixels.
    const clip = await map.evaluate((m) => {
      const e = m.querySelector('ellipse.aniso-ellipse')!;
      const id = /^url\(#(.+)\)$/.exec(e.getAttribute('clip-path') ?? '')?.[1];
      const r = id === undefined ? null : m.querySelector(`clipPath[id="${id}"] rect`);
      const f = m.querySelector('rect.frame')!;
      const box = (x: Element) => ['x', 'y', 'width', 'height'].map((k) => Number(x.getAttribute(k)));
      return { clip: r === null ? null : box(r), frame: box(f), size: Number(m.getAttribute('width')) };
    });
    expect(clip.clip).toEqual(clip.frame);
    const ellipsePixels = async () => {
      const png = decodePngRgb(await map.screenshot({ timeout: 180_000 }));
      const k = png.width / clip.size;
      const [fx, fy, fw, fh] = clip.frame.map((v) => v * k);
      let inside = 0,
        outside = 0;
      for (let py = 0; py < png.height; py++)
        for (let px = 0; px < png.width; px++) {
          const o = 3 * (py * png.width + px);
          if (Math.hypot(png.rgb[o] - 0xd4, png.rgb[o + 1] - 0x46, png.rgb[o + 2] - 0x2c) > 60) continue;
          // A pixel straddling the frame's edge counts as inside (antialiasing).
          if (px >= fx - 1 && px <= fx + fw + 1 && py >= fy - 1 && py <= fy + fh + 1) inside++;
          else outside++;
        }
      return { inside, outside };
    };
    const clipped = await ellipsePixels();
    await map.evaluate((m) => m.querySelector('ellipse.aniso-ellipse')!.removeAttribute('clip-path'));
    const unclipped = await ellipsePixels();
    expect(unclipped.outside, JSON.stringify({ clipped, unclipped })).toBeGreaterThan(20);
    expect(clipped.outside, JSON.stringify({ clipped, unclipped })).toBe(0);
    expect(Math.abs(clipped.inside - unclipped.inside), JSON.stringify({ clipped, unclipped })).toBeLessThanOrEqual(4);
    const beyond = (await page.locator('#anisotropy-caption').textContent())!.includes('lies wholly beyond');
    expect(beyond, JSON.stringify({ clipped, unclipped })).toBe(unclipped.inside === 0);
    const caption = (await page.locator('#anisotropy-caption').textContent())!;
    expect(caption).toContain(`azimuth ${est.angleDeg.toFixed(1)}°`);
    expect(caption).toContain(`ratio ${est.ratio.toFixed(2)}`);
    expect(caption).toContain(est.used ? 'Used by the kriging' : 'Not used');
    await page.locator('figure.anisotropy').scrollIntoViewIfNeeded({ timeout: 180_000 });
    await page.screenshot({ path: join(SCREENSHOT_DIR, 'anisotropy-run-panel.png'), timeout: 180_000 });
    expect(pageErrors).toEqual([]);
  }, 900_000);
});
