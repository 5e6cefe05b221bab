import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { check } from '@placemarkio/check-geojson';
import { cellIndexFromXY } from '../../shared/grid/grid.ts';
import { pointsFromGeoJson } from '../../shared/schema/interp.ts';
import { interpolateGrid } from '../../shared/interp/interpolate.ts';
import { compileModel, isothermDepth, nominalModel } from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { computeThermalGrids } from '../../shared/products/thermal-grids.ts';
import { lonLatFromKm, trueHeatFlowMWm2, HEAT_FLOW } from '../../fixtures/field.ts';
import { runPipeline, type Progress, type StoredDataset } from '../../server/runs/pipeline.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';

const read = (p: string) => readFileSync(new URL(`../../fixtures/demo/${p}`, import.meta.url), 'utf8');
const modelText = read('model.json');
const model = parseModelText(modelText).model;

describe('demo region: depth to 300 °C under the rift basin and the cool block', () => {
  it('is shallower under the rift by the amount the model gives for the true heat flows, within the kriging error', () => {
    // Invented truth (fixtures/field.ts): a rift-axis point and a point of the cool block far from rift and granite.
    const rift: [number, number] = [HEAT_FLOW.rift.axisXKm, HEAT_FLOW.rift.axisYKm];
    const block: [number, number] = [60, -60];
    const { points } = pointsFromGeoJson(JSON.parse(read('sites.geojson')), 'heatFlowMWm2');
    const k = interpolateGrid(points, { method: 'kriging', grid: { cellKm: 2 }, units: 'mW/m²', crossValidation: false });
    const cm = compileModel(nominalModel(model), { maxDepthKm: 60 });
    const out = computeThermalGrids({ heatFlow: k.grid, models: [cm], isothermsC: [300], depthsKm: [], maxDepthKm: 60, solidus: false });
    // Not reached above 60 km counts as deeper than any depth (DESIGN.md §3).
    const d = (q: number) => isothermDepth(cm, 300, { heatFlowMWm2: q, maxDepthKm: 60 }) ?? Infinity;
    const slope = (q: number) => Math.abs(d(q + 0.5) - d(q - 0.5)); // |∂d/∂q|, km per mW/m²
    const at = ([x, y]: [number, number]) => {
      const [lon, lat] = lonLatFromKm(x, y);
      const i = cellIndexFromXY(k.grid, lon, lat);
      const q = trueHeatFlowMWm2(x, y),
        s = k.sd!.values[i];
      // Depth falls as heat flow rises: ±2.5 kriging sd of heat flow bounds the depth (the kriging sd is honest on
      // this region: 96% of check points within 2σ, tests/unit/interp-demo.test.ts).
      return { grid: out.isothermDepthKm[0][i], truth: d(q), shallow: d(q + 2.5 * s), deep: d(q - 2.5 * s), tol: 2.5 * s * slope(q) };
    };
    const r = at(rift),
      b = at(block);
    expect(r.grid).toBeGreaterThanOrEqual(r.shallow);
    expect(r.grid).toBeLessThanOrEqual(r.deep);
    expect(b.grid).toBeGreaterThanOrEqual(b.shallow);
    expect(b.grid).toBeLessThanOrEqual(b.deep);
    const expected = b.truth - r.truth; // single-column depths at the true heat flows: about 11 km
    // Linearised kriging error of the depth difference: 2.5 sd × |∂d/∂q| at each point, added.
    const tol = r.tol + b.tol;
    expect(expected).toBeGreaterThan(8);
    expect(Math.abs(b.grid - r.grid - expected)).toBeLessThanOrEqual(tol);
    expect(b.grid - r.grid).toBeGreaterThan(b.shallow - r.deep);
    expect(b.shallow - r.deep).toBeGreaterThan(0);
  });
});

describe('the run pipeline on the demo data', () => {
  const outline = JSON.parse(read('outline.geojson'));
  const [lo0, la0] = lonLatFromKm(-75, 60),
    [lo1, la1] = lonLatFromKm(-45, 20);
  const regions = {
    type: 'FeatureCollection',
    features: [
      { type: 'Feature', properties: { id: 'outline' }, geometry: outline.features[0].geometry },
      {
        type: 'Feature',
        properties: { id: 'basin', layers: [{ name: 'basin fill', bottomKm: 3, conductivityWmK: 1.8, heatProductionUWm3: 1.2, densityKgM3: 2300 }] },
        geometry: {
          type: 'Polygon',
          coordinates: [
            [
              [lo0, la0],
              [lo1, la0],
              [lo1, la1],
              [lo0, la1],
              [lo0, la0],
            ],
          ],
        },
      },
    ],
  };
  const datasets: Record<string, StoredDataset> = {
    'demo-sites': { kind: 'sites', body: read('sites.geojson') },
    'demo-model': { kind: 'model', body: modelText },
    'demo-faults': { kind: 'faults', body: read('faults.geojson') },
    'demo-regions': { kind: 'regions', body: JSON.stringify(regions) },
  };
  const request = {
    sites: 'demo-sites',
    model: 'demo-model',
    faults: 'demo-faults',
    regions: 'demo-regions',
    maskToRegion: true,
    isothermsC: [300, 500],
    depthsKm: [5],
    faciesDepthKm: 12,
    grid: { cellKm: 4 },
    realizations: 24,
    seed: 11,
  };

  it('produces the listed layers with sane stats and increasing progress', async () => {
    const progress: Progress[] = [];
    let extraCalled = 0;
    const res = await runPipeline(request, datasets, {
      progress: (p) => progress.push(p),
      extraLayers: [
        {
          name: 'probe',
          run: (ctx) => {
            extraCalled++;
            expect(ctx.heatFlow.width).toBeGreaterThan(10);
            return [];
          },
        },
      ],
    });
    const names = res.layers.map((l) => l.info.name);
    expect(names).toEqual([
      'heat-flow',
      'heat-flow-sd',
      'depth-300C',
      'depth-300C.p10',
      'depth-300C.p50',
      'depth-300C.p90',
      'depth-300C.mean',
      'depth-300C.mean-diff',
      'depth-300C.reached',
      'depth-500C',
      'depth-500C.p10',
      'depth-500C.p50',
      'depth-500C.p90',
      'depth-500C.mean',
      'depth-500C.mean-diff',
      'depth-500C.reached',
      'temperature-5km',
      'temperature-5km.p10',
      'temperature-5km.p50',
      'temperature-5km.p90',
      'temperature-5km.mean',
      'temperature-5km.mean-diff',
      'facies-12km',
      'base-heat-flow',
      'solidus-depth',
      'melt-onset',
      'inconsistent',
      'cv-residuals',
      'no-data-across-faults',
    ]);
    expect(extraCalled).toBe(1);
    const byName = Object.fromEntries(res.layers.map((l) => [l.info.name, l]));
    const exts = (n: string) => byName[n].files.map((f) => f.ext);
    expect(exts('heat-flow')).toEqual(['tif', 'png', 'geojson']);
    expect(exts('heat-flow-sd')).toEqual(['tif', 'png']);
    expect(exts('depth-300C')).toEqual(['tif', 'png', 'geojson']);
    expect(exts('temperature-5km')).toEqual(['tif', 'png', 'geojson']);
    expect(exts('depth-300C.p10')).toEqual(['tif', 'png']);
    expect(exts('cv-residuals')).toEqual(['geojson']);
    // Sane ranges (the demo's heat flow is about 40–115 mW/m²; the 300 °C isotherm lies at roughly 6–30 km).
    const st = (n: string) => byName[n].info.stats!;
    expect(st('heat-flow').min!).toBeGreaterThan(30);
    expect(st('heat-flow').max!).toBeLessThan(130);
    expect(st('depth-300C').min!).toBeGreaterThan(3);
    expect(st('depth-300C').max!).toBeLessThan(40);
    expect(st('depth-300C.p10').median!).toBeLessThanOrEqual(st('depth-300C.p50').median!);
    expect(st('temperature-5km').min!).toBeGreaterThan(50);
    // Only melt-onset flags (8): the demo's hottest cells reach fluid-absent melting of felsic crust above 60 km.
    expect(st('inconsistent').max).toBe(0); // melt onset is in the melt-onset grid, not flagged as a contradiction
    expect(st('heat-flow').noData).toBeGreaterThan(0); // masked outside the outline
    expect(byName['facies-12km'].info.legend!.type).toBe('classes');
    expect(byName['depth-300C'].info.legend).toMatchObject({ type: 'ramp', units: 'km' });
    // The mean of the realizations shares the depth legend; its difference from the deterministic map has a legend
    // symmetric about 0; the summary gives the central values beside the deterministic map's.
    const meanLegend = byName['depth-300C.mean'].info.legend!;
    expect(meanLegend).toEqual({ ...byName['depth-300C'].info.legend, note: meanLegend.note });
    expect(meanLegend.note).toMatch(/^no mean where some realizations do not reach 300 °C above [\d.]+ km; see the share layer depth-300C\.reached$/);
    // The share reaching each isotherm (0–1): the mean is defined exactly where it is 1.
    expect(byName['depth-300C.reached'].info.legend).toMatchObject({ type: 'ramp', units: 'fraction', min: 0, max: 1 });
    const tifValues = async (n: string) => (await readGeoTiff(byName[n].files[0].bytes)).grid.values;
    const [share, mean, hf] = [await tifValues('depth-500C.reached'), await tifValues('depth-500C.mean'), await tifValues('heat-flow')];
    let partial = 0;
    for (let c = 0; c < hf.length; c++) {
      if (!(hf[c] === hf[c])) continue;
      expect(share[c]).toBeGreaterThanOrEqual(0);
      expect(share[c]).toBeLessThanOrEqual(1);
      expect(Number.isFinite(mean[c])).toBe(share[c] === 1);
      if (share[c] < 1) partial++;
    }
    expect(partial).toBeGreaterThan(0);
    expect(res.summary.monteCarlo!.heatFlowExhausted).toMatchObject({ cellRealizations: expect.any(Number), cells: expect.any(Number) });
    const dl = byName['depth-300C.mean-diff'].info.legend as { min: number; max: number };
    expect(dl.min).toBe(-dl.max);
    const cv = res.summary.monteCarlo!.centralValues!;
    expect(cv.map((v) => v.product)).toEqual(['depth-300C', 'depth-500C', 'temperature-5km']);
    for (const v of cv) {
      expect(v.cells).toBeGreaterThan(100);
      expect(v.difference!).toBeCloseTo(v.mean! - v.deterministic!, 9);
    }
    // Progress: real stages, never decreasing, ending at 1.
    expect(progress.length).toBeGreaterThan(10);
    for (let i = 1; i < progress.length; i++) expect(progress[i].fraction).toBeGreaterThanOrEqual(progress[i - 1].fraction);
    expect(progress[progress.length - 1].fraction).toBeCloseTo(1, 9);
    for (const word of ['validat', 'cross-validation', 'interpolating', 'thermal grids', 'Monte Carlo', 'contours', 'encoding']) {
      expect(progress.some((p) => p.message.includes(word))).toBe(true);
    }
    // Files carry caution and provenance; GeoJSON is valid RFC 7946.
    const gj = new TextDecoder().decode(byName['depth-300C'].files[2].bytes);
    check(gj);
    expect(JSON.parse(gj).caution).toBe(CAUTION);
    check(new TextDecoder().decode(byName['cv-residuals'].files[0].bytes));
    // Cells left empty because no site is visible from them across the faults: counted in the summary beside the
    // masked ones (together every empty heat-flow cell) and drawn as one layer with the same count.
    const empty = res.summary.interpolation.emptyCells!;
    expect(empty.noDataAcrossFaults).toBeGreaterThan(0);
    expect(empty.noDataAcrossFaults + empty.beyondSearchRadius + empty.masked).toBe(st('heat-flow').noData);
    const nd = new TextDecoder().decode(byName['no-data-across-faults'].files[0].bytes);
    check(nd);
    expect(JSON.parse(nd).caution).toBe(CAUTION);
    expect(JSON.parse(nd).features[0].properties.cells).toBe(empty.noDataAcrossFaults);
    const tif = await readGeoTiff(byName['depth-300C'].files[0].bytes.slice().buffer);
    expect(tif.caution).toBe(CAUTION);
    expect((tif.metadata.provenance as { contentHash: string }).contentHash).toMatch(/^[0-9a-f]{64}$/);
    // The serialized heat-flow grid and the validated model (its descriptive "name" kept).
    expect(res.grids.heatFlow.values.length).toBe(res.grids.heatFlow.width * res.grids.heatFlow.height);
    expect(res.grids.heatFlowSd).toBeDefined();
    expect((res.model as Record<string, unknown>).name).toContain('Orrindel');
    expect(res.warnings.some((w) => w.includes('"name"'))).toBe(false);
    expect(res.summary.overrides).toEqual(['regions[1] (basin)']);
  });

  it('refuses a bad request with an InputError and stops when cancelled', async () => {
    await expect(runPipeline({ ...request, sites: 'nope' }, datasets)).rejects.toThrow(InputError);
    await expect(runPipeline({ ...request, isothermsC: [] }, datasets)).rejects.toThrow(InputError);
    const ac = new AbortController();
    const p = runPipeline(request, datasets, {
      signal: ac.signal,
      progress: (x) => {
        if (x.fraction > 0.1) ac.abort();
      },
    });
    await expect(p).rejects.toMatchObject({ name: 'AbortError' });
  });

  it('runs through the worker entry, posting progress on its port', async () => {
    const { MessageChannel } = await import('node:worker_threads');
    const { default: runWorker } = await import('../../server/workers/run-worker.ts');
    const ch = new MessageChannel();
    const got: { type: string; fraction: number; message: string }[] = [];
    ch.port2.on('message', (m) => got.push(m));
    const res = await runWorker({ request: { ...request, realizations: 0, grid: { cellKm: 8 } } as never, datasets, port: ch.port1 });
    await new Promise((r) => setTimeout(r, 20));
    ch.port2.close();
    expect(res.layers.some((l) => l.info.name === 'depth-300C')).toBe(true);
    expect(res.layers.some((l) => l.info.name.endsWith('.p10'))).toBe(false);
    expect(got.length).toBeGreaterThan(5);
    expect(got.every((m) => m.type === 'progress')).toBe(true);
    for (let i = 1; i < got.length; i++) expect(got[i].fraction).toBeGreaterThanOrEqual(got[i - 1].fraction);
  });
});
