// The column plot where the column melts: the demo model at a surface heat flow of 110 mW/m² reaches the
// fluid-absent solidus of its felsic middle crust (780 °C, Le Breton & Thompson 1988, the curve the API names) near
// 15 km. The plot draws each layer's own solidus curves (no mantle curve over crustal layers), hatches the zone below
// the melt onset the API reports, gives the lithosphere base, and its readout has no temperature or facies there.
// A run's column draws the solidus curves of the run's own model, not the editor's (the plotted curve read back
// through the plot's axes against the published solidus values), and a long layer name is readable in its box.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { startMapSession, type MapSession, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';
import { hiddenOverflow } from '../helpers/layout.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const pageErrors: string[] = [];

let session: MapSession | undefined;
beforeAll(async () => {
  session = await startMapSession({ viewport: { width: 1440, height: 900 }, pageErrors, timeoutMs: 120_000 });
  ({ server, browser, page } = session);
}, 180_000);

afterAll(async () => await session?.close());

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

/** A polyline's points as [x, y] pixels. */
const pointsOf = (attr: string) =>
  attr
    .trim()
    .split(/\s+/)
    .map((p) => p.split(',').map(Number) as [number, number]);

/** Linear pixel scales of the plot's two axes, read from its tick labels (temperature on top, depth on the left). */
async function plotScales(plot: ReturnType<Page['locator']>): Promise<{ tAt: (x: number) => number; yAt: (z: number) => number }> {
  const ticks = await plot
    .locator('g.axes > text:not(.axis-title)')
    .evaluateAll((ts) =>
      ts.map((t) => ({ anchor: t.getAttribute('text-anchor'), x: Number(t.getAttribute('x')), y: Number(t.getAttribute('y')), v: Number(t.textContent) })),
    );
  const top = ticks.filter((t) => t.anchor === 'middle' && Number.isFinite(t.v));
  const left = ticks.filter((t) => t.anchor === 'end' && Number.isFinite(t.v));
  const [t0, t1] = [top[0], top[top.length - 1]];
  const [z0, z1] = [left[0], left[left.length - 1]];
  // Depth labels sit 4 px below their tick.
  return { tAt: (x) => t0.v + ((x - t0.x) * (t1.v - t0.v)) / (t1.x - t0.x), yAt: (z) => z0.y - 4 + ((z - z0.v) * (z1.y - z0.y)) / (z1.v - z0.v) };
}

describe("a run's column plot draws the run's model", { timeout: 900_000 }, () => {
  it("draws the solidus curves of the run's rocks, not the editor's, at the published solidus temperatures", async () => {
    // The run uses the demo model (felsic upper and middle crust); the editor, opened from the link, holds a model
    // whose upper and middle crust are mafic and whose first layer has a long name.
    const post = await fetch(`${server.url}/api/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({
        sites: 'demo-sites',
        model: 'demo-model',
        grid: { cellKm: 8 },
        interpolation: { method: 'idw' },
        isothermsC: [300, 800],
        depthsKm: [5],
      }),
    });
    expect(post.status).toBe(202);
    const { id } = (await post.json()) as { id: string };
    let status = 'queued';
    for (let i = 0; i < 1200 && status !== 'done' && status !== 'failed'; i++) {
      await new Promise((r) => setTimeout(r, 500));
      status = ((await (await fetch(`${server.url}/api/runs/${id}`)).json()) as { status: string }).status;
    }
    expect(status).toBe('done');
    const demo = (await (await fetch(`${server.url}/api/datasets/demo-model`)).json()) as { layers: { name: string; rock?: string }[] };
    const longName = 'upper crust: granite, granodiorite and metasedimentary gneiss (heat-producing)';
    const editorModel = {
      ...demo,
      name: 'Editor model with a mafic upper crust',
      layers: demo.layers.map((l, i) => ({ ...l, ...(i === 0 ? { name: longName } : {}), ...(i < 2 ? { rock: 'mafic-crust' } : {}) })),
    };
    const state = Buffer.from(JSON.stringify({ r: id, m: editorModel })).toString('base64url');
    const p = await browser.newPage({ viewport: { width: 1440, height: 900 } });
    p.setDefaultTimeout(180_000);
    const errors: string[] = [];
    p.on('pageerror', (e) => errors.push(e.message));
    await p.goto(`${server.url}/?s=${state}`);
    await p.waitForFunction(() => window.subtherm !== undefined, undefined, { timeout: 180_000 });
    await p.evaluate(() => window.subtherm!.ready);
    await expect.poll(() => p.evaluate(() => window.subtherm!.run?.run.id ?? null), { timeout: 180_000 }).toBe(id);

    // The long layer name is readable in its box (wrapped, not cut), and the layout check sees a cut one.
    await p.locator('#tab-model').click();
    const nameBox = p.locator('#model-editor [data-field="name"]').first();
    expect(await nameBox.inputValue()).toBe(longName);
    expect((await hiddenOverflow(p, '#tools')).cut).toEqual([]);
    await p.screenshot({ path: join(SCREENSHOT_DIR, 'column-model-long-name.png') });
    await nameBox.evaluate((e) => ((e as HTMLElement).style.cssText = 'field-sizing: fixed; height: 18px; white-space: pre'));
    const cut = (await hiddenOverflow(p, '#tools')).cut;
    expect(cut.map((c) => c.text)).toContain(longName.slice(0, 60));
    await nameBox.evaluate((e) => ((e as HTMLElement).style.cssText = ''));

    // A column of the run, on the island.
    const box = (await p.locator('#map').boundingBox())!;
    const pt = await p.evaluate(() => window.subtherm!.map.project([-127.9, -38.05]));
    await p.mouse.click(box.x + pt.x, box.y + pt.y);
    await expect.poll(() => p.locator('#column-plot svg').count(), { timeout: 120_000 }).toBe(1);
    const last = await p.evaluate(() => window.subtherm!.lastColumn!);
    expect(last.request.runId).toBe(id);
    const answer = last.answer as { profile: { depthKm: number; pressureMPa: number | null }[] };
    const plot = p.locator('#column-plot svg');
    const curves = await plot
      .locator('polyline.solidus')
      .evaluateAll((ls) => ls.map((l) => ({ layer: l.getAttribute('data-layer')!, curve: l.getAttribute('data-curve')!, points: l.getAttribute('points')! })));
    const drawn = curves.map((c) => `${c.layer}:${c.curve}`);
    // The run's felsic crust: granite and fluid-absent felsic curves there; none of the editor's basalt curves.
    expect(drawn).toEqual(expect.arrayContaining(['upper crust:wet-granite', 'upper crust:fluid-absent-felsic', 'middle crust:fluid-absent-felsic']));
    expect(drawn.filter((c) => /crust:.*basalt/.test(c) && !c.startsWith('lower crust'))).toEqual([]);
    expect(drawn.some((c) => c.startsWith(longName))).toBe(false);

    const { tAt, yAt } = await plotScales(plot);
    // Fluid-absent melting of felsic rock: 780 °C, the middle of Le Breton & Thompson's (1988) 760–800 °C bracket
    // (docs/sources.md#solidus-other-rocks), at every depth of the felsic layers.
    for (const c of curves.filter((k) => k.curve === 'fluid-absent-felsic'))
      for (const [x] of pointsOf(c.points)) expect(Math.abs(tAt(x) - 780)).toBeLessThan(1.5);
    // Water-saturated granite: 680 °C at 2 kbar (Huang & Wyllie 1973, docs/sources.md#solidus-granite-wet), read off
    // the drawn curve at the depth where the column's lithostatic pressure is 200 MPa.
    const prof = answer.profile.filter((q) => q.pressureMPa !== null);
    const k = prof.findIndex((q) => q.pressureMPa! >= 200);
    expect(k).toBeGreaterThan(0);
    const z2 =
      prof[k - 1].depthKm + ((200 - prof[k - 1].pressureMPa!) * (prof[k].depthKm - prof[k - 1].depthKm)) / (prof[k].pressureMPa! - prof[k - 1].pressureMPa!);
    expect(z2).toBeGreaterThan(5);
    expect(z2).toBeLessThan(10);
    const granite = pointsOf(curves.find((c) => c.layer === 'upper crust' && c.curve === 'wet-granite')!.points);
    const y2 = yAt(z2);
    const j = granite.findIndex(([, y]) => y >= y2);
    expect(j).toBeGreaterThan(0);
    const [[xa, ya], [xb, yb]] = [granite[j - 1], granite[j]];
    expect(Math.abs(tAt(xa + ((y2 - ya) * (xb - xa)) / (yb - ya)) - 680)).toBeLessThan(3);
    await p.screenshot({ path: join(SCREENSHOT_DIR, 'column-run-model-solidus.png') });
    expect(errors).toEqual([]);
    await p.close();
  });
});
