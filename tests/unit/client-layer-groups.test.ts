// The layer panel's grouping of a run's layers (client/src/run-layer-groups.ts) and the run panel's parameters of a
// shown run (client/src/state.ts). Layer names come from the products' own naming (shared/products/names.ts).
import { describe, expect, it } from 'vitest';
import { groupRunLayers, labelInSection, productSection, runLayerId } from '../../client/src/run-layer-groups.ts';
import { defaultParams, paramsOfRun } from '../../client/src/state.ts';
import { depthProductName, summaryProductName, temperatureProductName, type SummaryStat } from '../../shared/products/names.ts';
import { DEMO_RUN_REQUEST } from '../../server/demo.ts';
import type { RunLayer } from '../../client/src/api.ts';

const raster = (name: string, title: string): RunLayer =>
  ({ name, title, kind: 'raster', units: 'km', legend: null, formats: ['tif', 'geojson'] }) as unknown as RunLayer;
const STATS: SummaryStat[] = ['p10', 'p50', 'p90', 'mean', 'mean-diff'];

function runLayers(): RunLayer[] {
  const out = [raster('heat-flow', 'Surface heat flow'), raster('heat-flow-sd', 'Surface heat flow, kriging standard deviation')];
  const depth = depthProductName(300);
  out.push(raster(depth, 'Depth to the 300 °C isotherm'));
  for (const s of STATS) out.push(raster(summaryProductName(depth, s), `Depth to the 300 °C isotherm, ${s}`));
  out.push(raster(`${depth}.spread`, 'Depth to the 300 °C isotherm, spread (P90 − P10)'));
  out.push(raster(summaryProductName(depth, 'reached'), 'Depth to the 300 °C isotherm: share of realizations reaching it above 60 km'));
  for (const d of [5, 10]) {
    const t = temperatureProductName(d);
    out.push(raster(t, `Temperature at ${d} km`));
    for (const s of STATS) out.push(raster(summaryProductName(t, s), `Temperature at ${d} km, ${s.toUpperCase()}`));
  }
  out.push(raster('temperature-5km.prob-gt-150C', 'Probability that the temperature at 5 km exceeds 150 °C'));
  out.push(raster('base-heat-flow', 'Heat flow at the base of the model'));
  return out;
}

describe('grouping a run’s layers for the layer panel', () => {
  const groups = groupRunLayers(runLayers());
  const bySection = new Map<string, string[]>();
  for (const g of groups) {
    const s = productSection(g.key).key;
    bySection.set(s, [...(bySection.get(s) ?? []), g.key]);
  }

  it('puts each product’s Monte Carlo summaries, spread and contours under the product', () => {
    expect(bySection.get('depth-300C')).toEqual(
      expect.arrayContaining([
        'depth-300C',
        'depth-300C.contours',
        'depth-300C.p10',
        'depth-300C.p90',
        'depth-300C.mean',
        'depth-300C.mean-diff',
        'depth-300C.spread',
        'depth-300C.reached',
      ]),
    );
    expect(bySection.get('heat-flow')).toEqual(expect.arrayContaining(['heat-flow', 'heat-flow-sd', 'heat-flow.contours']));
    expect(bySection.get('temperature')).toEqual(
      expect.arrayContaining([
        'temperature',
        'temperature.p10',
        'temperature.p50',
        'temperature.p90',
        'temperature.mean',
        'temperature.mean-diff',
        'temperature-5km.prob-gt-150C',
      ]),
    );
    expect(bySection.get('model-checks')).toEqual(['base-heat-flow']);
  });

  it('gives a percentile at several depths one entry with both depths, and one map layer id for them', () => {
    const p90 = groups.find((g) => g.key === 'temperature.p90')!;
    expect(p90.layers.map((l) => l.depthKm)).toEqual([5, 10]);
    expect(p90.title).toBe('Temperature, P90');
    expect(runLayerId('temperature-10km.p90')).toBe(runLayerId('temperature-5km.p90'));
    expect(runLayerId('temperature-10km.p90')).not.toBe(runLayerId('temperature-10km'));
    expect(runLayerId('depth-300C.mean-diff')).toBe('run-depth-300C_mean-diff');
  });

  it('names an entry inside its section by what differs, keeping names that do not start with the product', () => {
    const depth = productSection('depth-300C.p90');
    expect(labelInSection('Depth to the 300 °C isotherm, P90', depth)).toBe('P90');
    expect(labelInSection('Depth to the 300 °C isotherm, spread (P90 − P10)', depth)).toBe('Spread (P90 − P10)');
    expect(labelInSection('Depth to the 300 °C isotherm: share of realizations reaching it above 60 km', depth)).toBe(
      'Share of realizations reaching it above 60 km',
    );
    expect(labelInSection('Contours: depth to the 300 °C isotherm', depth)).toBe('Contours');
    expect(labelInSection('Depth to the 300 °C isotherm', depth)).toBe('Depth to the 300 °C isotherm');
    const temp = productSection('temperature.mean-diff');
    expect(labelInSection('Temperature: mean of the realizations − deterministic map', temp)).toBe('Mean of the realizations − deterministic map');
    expect(labelInSection('Probability that the temperature at 5 km exceeds 150 °C', temp)).toBe('Probability that the temperature at 5 km exceeds 150 °C');
  });
});

describe('the run panel’s parameters of a shown run', () => {
  it('are the run’s own (its realizations, cell, isotherms, data sets), not the page defaults', () => {
    const base = defaultParams({ sites: 'x' });
    const p = paramsOfRun(DEMO_RUN_REQUEST, base);
    expect(p).toMatchObject({
      sites: DEMO_RUN_REQUEST.sites,
      samples: DEMO_RUN_REQUEST.samples,
      faults: DEMO_RUN_REQUEST.faults,
      method: 'kriging',
      realizations: DEMO_RUN_REQUEST.realizations,
      seed: DEMO_RUN_REQUEST.seed,
      cellKm: DEMO_RUN_REQUEST.grid.cellKm,
      isothermsC: [...DEMO_RUN_REQUEST.isothermsC],
      depthsKm: [...DEMO_RUN_REQUEST.depthsKm],
    });
    expect(base.realizations).toBe(0);
    // A run without realizations shows 0; a request the schema refuses leaves the parameters as they were.
    expect(paramsOfRun({ sites: 's1', model: 'm', interpolation: { method: 'idw' } }, { ...base, realizations: 100 }).realizations).toBe(0);
    expect(paramsOfRun({ sites: 'bad id!' }, base)).toBe(base);
  });
});
