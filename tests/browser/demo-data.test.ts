// The page's own data, end to end: the demo page's Data tab lists the demo project's data sets as the API does, the
// Run tab names them; on the demo's default run the "no data visible across faults" layer, ticked in "Model checks
// and gaps", draws its grey exactly over the run's empty cells with their count in its legend, and the column panel
// at such a cell says why; in a new project a model uploaded with its own name and one changed parameter is loaded
// into the Model tab by "use" and reaches the run's stored request.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { launchBrowser, startServerProcess, waitForMapIdle, ROOT, SCREENSHOT_DIR, type RunningServer } from '../helpers/browser.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';

let server: RunningServer;
let browser: Browser;
let page: Page;
const pageErrors: string[] = [];
const shot = (name: string) => page.screenshot({ path: join(SCREENSHOT_DIR, `demo-data-${name}.png`) });
const api = async <T>(path: string): Promise<T> => (await (await fetch(`${server.url}${path}`)).json()) as T;

interface Listed {
  id: string;
  kind: string;
  name: string;
  featureCount: number;
  uploadedAt: string;
  bbox: [number, number, number, number] | null;
}

beforeAll(async () => {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  server = await startServerProcess({ env: { SUBTHERM_DEMO_RUN: '1' } });
  browser = await launchBrowser();
  page = await browser.newPage({ viewport: { width: 1440, height: 900 } });
  page.setDefaultTimeout(120_000);
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(server.url);
  await page.waitForFunction(() => window.subtherm !== undefined, undefined, { timeout: 120_000 });
  await page.evaluate(() => window.subtherm!.ready);
}, 300_000);

afterAll(async () => {
  await browser?.close();
  await server?.stop();
});

/** Pixels at `points` (lon/lat) with only the map layers `ids` drawn over the background, and with none drawn. */
async function pixelsAt(ids: string[], points: [number, number][]): Promise<{ shown: number[][]; bare: number[][] }> {
  return page.evaluate(
    ([ids, points]) => {
      const map = window.subtherm!.map;
      const saved = map
        .getStyle()
        .layers.filter((l) => l.type !== 'background')
        .map((l) => [l.id, (map.getLayoutProperty(l.id, 'visibility') as string | undefined) ?? 'visible'] as const);
      const showOnly = (on: string[]) => {
        for (const [id] of saved) map.setLayoutProperty(id, 'visibility', on.includes(id) ? 'visible' : 'none');
      };
      const read = () =>
        new Promise<number[][]>((resolve) => {
          const measure = () => {
            if (!map.areTilesLoaded()) return void map.once('idle', measure);
            const gl = map.getCanvas().getContext('webgl2') as WebGL2RenderingContext;
            const scale = gl.drawingBufferWidth / map.getCanvas().clientWidth;
            const w = gl.drawingBufferWidth,
              h = gl.drawingBufferHeight;
            const px = new Uint8Array(w * h * 4);
            gl.readPixels(0, 0, w, h, gl.RGBA, gl.UNSIGNED_BYTE, px);
            resolve(
              points.map((ll) => {
                const p = map.project(ll);
                const i = ((h - 1 - Math.round(p.y * scale)) * w + Math.round(p.x * scale)) * 4;
                return [px[i], px[i + 1], px[i + 2]];
              }),
            );
          };
          map.once('idle', measure);
          map.triggerRepaint();
        });
      return (async () => {
        showOnly(ids);
        const shown = await read();
        showOnly([]);
        const bare = await read();
        for (const [id, v] of saved) map.setLayoutProperty(id, 'visibility', v as 'visible' | 'none');
        return { shown, bare };
      })();
    },
    [ids, points] as const,
  );
}

describe("the page's own data", { timeout: 900_000 }, () => {
  it("lists the demo project's data sets in the Data tab and names them in the Run tab", async () => {
    const listed = await api<{ datasets: Listed[]; terrain: { name: string } | null }>('/api/projects/demo/datasets');
    expect(listed.datasets.map((d) => d.kind).sort()).toEqual(['faults', 'model', 'regions', 'samples', 'sites', 'wells']);
    await page.locator('#tab-data').click();
    await expect.poll(() => page.locator('#project-datasets tr[data-dataset]').count()).toBe(listed.datasets.length);
    for (const d of listed.datasets) {
      const cells = await page.locator(`#project-datasets tr[data-dataset="${d.id}"] td`).allTextContents();
      expect(cells[1]).toContain(d.name);
      expect(cells[2]).toBe(String(d.featureCount));
      expect(cells).toHaveLength(3);
      // Its extent and upload time on their own row under it.
      const detail = await page.locator(`#project-datasets tr[data-detail-for="${d.id}"]`).textContent();
      expect(detail).toContain(`uploaded ${d.uploadedAt.slice(0, 16).replace('T', ' ')} UTC`);
      if (d.bbox) expect(detail).toContain(`${d.bbox[0].toFixed(2)}…${d.bbox[2].toFixed(2)} °E, ${d.bbox[1].toFixed(2)}…${d.bbox[3].toFixed(2)} °N`);
      // Read-only: download and zoom to (and "use" into the demo page's runs), no rename or remove.
      const row = page.locator(`#project-datasets tr[data-actions-for="${d.id}"]`);
      expect(await row.locator('a.dl').getAttribute('href')).toBe(`/api/projects/demo/datasets/${d.id}`);
      expect(await row.locator('button[data-action="rename"], button[data-action="remove"]').count()).toBe(0);
      if (d.kind !== 'model') expect(await row.locator('button[data-action="zoom to"]').count()).toBe(1);
    }
    expect(await page.locator('#project-datasets tr[data-kind="terrain"] td.name').textContent()).toContain(listed.terrain!.name);
    // Every action lies inside the panel (none past its right edge).
    const outside = await page.evaluate(() => {
      const panel = document.getElementById('tabpanel-data')!.getBoundingClientRect();
      return [...document.querySelectorAll('#project-datasets .actions > *')].filter((b) => b.getBoundingClientRect().right > panel.right + 0.5).length;
    });
    expect(outside).toBe(0);
    // No heading, count, extent or time breaks inside a word or number: each is kept on one line and fits its box.
    const broken = await page.evaluate(() =>
      [...document.querySelectorAll<HTMLElement>('#project-datasets th, #project-datasets td.num, #project-datasets .where-when span')]
        .filter(
          (e) =>
            e.scrollWidth > e.clientWidth + 0.5 ||
            e.getBoundingClientRect().right > document.getElementById('tabpanel-data')!.getBoundingClientRect().right + 0.5,
        )
        .map((e) => e.textContent),
    );
    expect(broken).toEqual([]);
    expect(await page.locator('#project-datasets .actions > *').count()).toBeGreaterThan(listed.datasets.length);
    await shot('data-tab');

    await page.locator('#tab-run').click();
    const line = page.locator('#run-data-line');
    await expect.poll(() => line.textContent()).toContain('heat-flow sites “Orrindel heat-flow sites”');
    const text = (await line.textContent())!;
    expect(text).toContain('faults “Orrindel faults”');
    expect(text).toContain('grade samples “Orrindel grade samples”');
    expect(text).not.toMatch(/demo-(sites|faults|samples)/);
    expect(await line.locator('[data-dataset="demo-sites"]').getAttribute('title')).toBe('data set demo-sites');
    await shot('run-tab');
    expect(pageErrors).toEqual([]);
  });

  it("draws the no-data layer's grey over the demo run's empty cells, with their count in the legend", async () => {
    await expect.poll(() => page.evaluate(() => window.subtherm!.run?.run.status ?? null), { timeout: 840_000, interval: 2000 }).toBe('done');
    await expect.poll(() => page.locator('#tiles-loading').count(), { timeout: 120_000 }).toBe(0);
    const runId = await page.evaluate(() => window.subtherm!.run!.run.id);
    const run = await api<{ summary: { interpolation: { emptyCells: { noDataAcrossFaults: number; beyondSearchRadius: number; masked: number } } } }>(
      `/api/runs/${runId}`,
    );
    const empty = run.summary.interpolation.emptyCells;
    expect(empty.noDataAcrossFaults).toBeGreaterThan(0);
    // The heat-flow grid the run stored: its empty cells are the summary's.
    const tif = await (await fetch(`${server.url}/api/runs/${runId}/layers/heat-flow.tif`)).arrayBuffer();
    const g = (await readGeoTiff(tif)).grid;
    const isEmpty = (r: number, c: number) => !Number.isFinite(g.values[r * g.width + c]) || g.values[r * g.width + c] <= -9999;
    let count = 0;
    for (let r = 0; r < g.height; r++) for (let c = 0; c < g.width; c++) if (isEmpty(r, c)) count++;
    expect(count).toBe(empty.noDataAcrossFaults + empty.beyondSearchRadius + empty.masked);

    // Tick it in its section (untick first when it is on already).
    const id = 'run-no-data-across-faults';
    const section = page.locator('#layer-section-model-checks');
    const unfold = async () => {
      if (!(await section.evaluate((d) => (d as HTMLDetailsElement).open))) await section.locator('summary').click();
    };
    await unfold();
    const box = page.locator(`#toggle-${id}`);
    if (await box.isChecked()) await box.uncheck();
    // A section with nothing ticked folds itself.
    await unfold();
    expect(await page.evaluate((i) => window.subtherm!.map.getLayoutProperty(`${i}-area`, 'visibility'), id)).toBe('none');
    await box.check();
    await expect.poll(() => page.evaluate((i) => window.subtherm!.map.getLayoutProperty(`${i}-area`, 'visibility') ?? 'visible', id)).toBe('visible');
    const legend = page.locator(`section.layer[data-layer="${id}"] .layer-legend`);
    expect(await legend.isVisible()).toBe(true);
    expect(await legend.textContent()).toContain(`(${empty.noDataAcrossFaults} cells`);
    await waitForMapIdle(page, 120_000);
    await shot('no-data-layer');

    // Cell centres inside the empty area (all 8 neighbours empty) and filled cells next to it (all 8 filled).
    const inner: [number, number][] = [],
      filled: [number, number][] = [];
    for (let r = 1; r < g.height - 1; r++)
      for (let c = 1; c < g.width - 1; c++) {
        let nEmpty = 0;
        for (let dr = -1; dr <= 1; dr++) for (let dc = -1; dc <= 1; dc++) if (isEmpty(r + dr, c + dc)) nEmpty++;
        const at: [number, number] = [g.west + (c + 0.5) * g.dx, g.north - (r + 0.5) * g.dy];
        if (nEmpty === 9) inner.push(at);
        else if (nEmpty === 0 && (isEmpty(r - 2, c) || isEmpty(r + 2, c) || isEmpty(r, c - 2) || isEmpty(r, c + 2))) filled.push(at);
      }
    expect(inner.length).toBeGreaterThan(20);
    expect(filled.length).toBeGreaterThan(20);
    const ids = await page.evaluate(
      (i) =>
        window
          .subtherm!.map.getStyle()
          .layers.filter((l) => l.id.startsWith(i))
          .map((l) => l.id),
      id,
    );
    const px = await pixelsAt(ids, [...inner, ...filled]);
    // The area: 40 % of the layer's grey (#5c5c5c) over what lies beneath (vector-layers.ts), at every inner empty cell.
    const blend = (bare: number[]) => bare.map((v) => 0.4 * 0x5c + 0.6 * v);
    const dist = (a: number[], b: number[]) => Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]);
    const grey = inner.filter((_, i) => dist(px.shown[i], blend(px.bare[i])) < 12).length;
    const untouched = filled.filter((_, i) => dist(px.shown[inner.length + i], px.bare[inner.length + i]) < 6).length;
    expect(grey, `${grey} of ${inner.length} empty cells grey`).toBe(inner.length);
    expect(untouched, `${untouched} of ${filled.length} filled cells untouched`).toBe(filled.length);
    expect(pageErrors).toEqual([]);
  });

  it('says in the column panel why a cell behind the faults has no column', async () => {
    // The south-east corner behind the Brask lineament (docs/sources.md#fault-barriers).
    const at = await page.evaluate(() => {
      const m = window.subtherm!.map;
      const p = m.project([-127.03, -38.79]);
      const r = m.getCanvas().getBoundingClientRect();
      return { x: r.left + p.x, y: r.top + p.y };
    });
    await page.locator('#tab-inspect').click();
    await page.mouse.click(at.x, at.y);
    const panel = page.locator('#tabpanel-inspect');
    await expect
      .poll(() => panel.textContent(), { timeout: 120_000 })
      .toContain('the cell sees no heat-flow site, since every straight path from it to a site crosses a fault trace');
    const text = (await panel.textContent())!;
    expect(text).toMatch(/the straight paths to its 8 nearest sites cross [A-Z]/);
    expect(text).toContain('Brask lineament');
    await shot('column-no-data');
    expect(pageErrors).toEqual([]);
  });

  it('loads a model uploaded as a data set into the Model tab with "use", and the run sends it', async () => {
    await page.locator('#tab-data').click();
    await page.locator('#new-project-title').fill('Pellmar Rise trial');
    await Promise.all([page.waitForURL(/\/p\/[A-Za-z0-9_-]+/), page.locator('#new-project').click()]);
    await page.waitForFunction(() => window.subtherm !== undefined, undefined, { timeout: 120_000 });
    await page.evaluate(() => window.subtherm!.ready);
    const dir = join(ROOT, '.tmp');
    mkdirSync(dir, { recursive: true });
    // Sites through the page, then a model with its own name and one changed parameter.
    await page.locator('#tab-data').click();
    await page.locator('#upload-kind').selectOption('sites');
    await page.locator('#upload-file').setInputFiles(join(ROOT, 'fixtures', 'demo', 'sites.geojson'));
    await expect.poll(() => page.locator('#upload-report .ok').count(), { timeout: 120_000 }).toBe(1);
    const model = JSON.parse(readFileSync(join(ROOT, 'fixtures', 'demo', 'model.json'), 'utf8')) as { name: string; layers: { conductivityWmK: number }[] };
    model.name = 'Pellmar trial crust';
    model.layers[0].conductivityWmK = 2.71;
    const file = join(dir, 'trial-model.json');
    writeFileSync(file, JSON.stringify(model));
    await page.locator('#upload-kind').selectOption('model');
    await page.locator('#upload-file').setInputFiles(file);
    expect(await page.locator('#upload-report .ok').textContent()).toBe('trial-model.json: a thermal model of 4 layers accepted as “Pellmar trial crust”.');
    const row = page.locator('#project-datasets tr[data-kind="model"]');
    await expect.poll(() => row.count(), { timeout: 120_000 }).toBe(1);
    expect(await row.locator('td.name').textContent()).toContain('Pellmar trial crust');
    const modelId = (await row.getAttribute('data-dataset'))!;
    await page.locator(`#project-datasets tr[data-actions-for="${modelId}"] button[data-action="use"]`).click();

    // The Model tab holds it and says where it came from; the data set is marked; the Run tab names it.
    await expect.poll(() => page.locator('#model-name').inputValue()).toBe('Pellmar trial crust');
    expect(await page.locator('#tabpanel-model').isVisible()).toBe(true);
    expect(await page.locator('#model-source').textContent()).toContain('“Pellmar trial crust”');
    await shot('model-tab');
    await page.locator('#tab-data').click();
    await expect.poll(() => row.locator('td.name').textContent()).toContain('(in the Model tab)');
    await shot('project-data-tab');
    await page.locator('#tab-run').click();
    const line = (await page.locator('#run-data-line').textContent())!;
    expect(line).toContain('heat-flow sites “sites”');
    expect(line).toContain("model “Pellmar trial crust” (the Model tab's, loaded from the data set “Pellmar trial crust”)");
    await page.locator('#run-cell').fill('8');
    await page.locator('#run-realizations').fill('0');
    await page.locator('#run-button').click();
    await expect
      .poll(() => page.evaluate(() => (window.subtherm!.run?.run.status === 'done' ? window.subtherm!.run.run.id : null)), { timeout: 600_000, interval: 2000 })
      .not.toBeNull();
    const runId = await page.evaluate(() => window.subtherm!.run!.run.id);
    await shot('project-run');
    const stored = await api<{ request: { model: { name: string; layers: { conductivityWmK: number }[] }; sites: string } }>(`/api/runs/${runId}`);
    expect(stored.request.model.name).toBe('Pellmar trial crust');
    expect(stored.request.model.layers[0].conductivityWmK).toBe(2.71);
    expect(stored.request.sites).not.toBe('demo-sites');
    expect(modelId).not.toBe('demo-model');
    expect(pageErrors).toEqual([]);
  });
  it('replaces a data set from its row: same name, the new content, and the run uses it', async () => {
    await page.locator('#tab-data').click();
    const sitesRow = page.locator('#project-datasets tr[data-kind="sites"]');
    const oldId = (await sitesRow.getAttribute('data-dataset'))!;
    const fc = JSON.parse(readFileSync(join(ROOT, 'fixtures', 'demo', 'sites.geojson'), 'utf8')) as { features: unknown[] };
    fc.features = fc.features.slice(0, 200);
    const file = join(ROOT, '.tmp', 'sites-first-200.geojson');
    writeFileSync(file, JSON.stringify(fc));
    const chooser = page.waitForEvent('filechooser');
    await page.locator(`#project-datasets tr[data-actions-for="${oldId}"] button[data-action="replace"]`).click();
    await (await chooser).setFiles(file);
    await expect.poll(() => sitesRow.getAttribute('data-dataset'), { timeout: 120_000 }).not.toBe(oldId);
    const newId = (await sitesRow.getAttribute('data-dataset'))!;
    expect(await page.locator('#project-datasets tr[data-kind="sites"]').count()).toBe(1);
    expect(await sitesRow.locator('td.name').textContent()).toContain('sites');
    expect(await sitesRow.locator('td.num').textContent()).toBe('200');
    expect(await sitesRow.locator('td.name').textContent()).toContain('(in the run)');
    await page.locator('#tab-run').click();
    expect(await page.locator(`#run-data-line [data-dataset="${newId}"]`).count()).toBe(1);
    await page.locator('#tab-data').click();
    await shot('project-replaced');
    expect(pageErrors).toEqual([]);
  });
});
