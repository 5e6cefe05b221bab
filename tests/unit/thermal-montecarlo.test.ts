import { describe, expect, it } from 'vitest';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import {
  allocateGridMonteCarloOutput,
  compileModel,
  isothermDepth,
  monteCarloColumn,
  monteCarloGridRange,
  nominalModel,
  prepareGridMonteCarlo,
  temperatureAtDepth,
  type GridMonteCarloSpec,
} from '../../shared/thermal/index.ts';
import { createStream } from '../../shared/random/index.ts';

const base = (over: Partial<ThermalModelInput['layers'][0]> = {}, q0: ThermalModelInput['surfaceHeatFlowMWm2'] = 70): ThermalModelInput => ({
  surfaceTemperatureC: 10,
  surfaceHeatFlowMWm2: q0,
  layers: [
    { name: 'upper', bottomKm: 15, conductivityWmK: 3, conductivityTempCoeffPerK: 1.5e-3, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700, ...over },
    { name: 'lower', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 0.4, densityKgM3: 2900 },
  ],
});

const opts = { isothermsC: [300, 500], depthsKm: [5, 10], maxDepthKm: 40, seed: 7 };

describe('column Monte Carlo', () => {
  it('zero-width distributions give the deterministic answer', () => {
    const m = base(
      {
        conductivityWmK: { dist: 'normal', mean: 3, sd: 0 },
        heatProductionUWm3: { dist: 'uniform', min: 2.5, max: 2.5 },
        heatProductionDecayKm: { dist: 'triangular', min: 10, mode: 10, max: 10 },
        densityKgM3: { dist: 'truncnormal', mean: 2700, sd: 0, min: 2600, max: 2800 },
      },
      { dist: 'normal', mean: 70, sd: 0 },
    );
    const cm = compileModel(nominalModel(m), { maxDepthKm: 40 });
    const r = monteCarloColumn(m, { ...opts, realizations: 25 });
    for (const [k, t] of [300, 500].entries()) {
      const d = isothermDepth(cm, t)!;
      const s = r.isothermDepthsKm[k];
      for (const v of [s.p10, s.p50, s.p90, s.mean]) expect(v).toBeCloseTo(d, 10);
      expect(s.sd).toBeCloseTo(0, 10);
    }
    expect(r.temperatureAtDepthsC[1].p50).toBeCloseTo(temperatureAtDepth(cm, 10), 10);
  });

  it('normal q0 alone: P50 is the depth at the median draw, near the depth at the mean; P10 < P50 < P90', () => {
    const N = 1001;
    const m = base({}, { dist: 'normal', mean: 70, sd: 5 });
    const r = monteCarloColumn(m, { ...opts, realizations: N });
    const cm = compileModel(nominalModel(m), { maxDepthKm: 40 });
    // Isotherm depth falls monotonically with q0, so (N odd) the median depth is the depth at the median q0 draw.
    const qs = Float64Array.from({ length: N }, (_, i) => {
      const rng = createStream(7, i);
      return rng.normal() * 5 + 70; // the draw order of realizeModel: q0 first
    }).sort();
    const s = r.isothermDepthsKm[0];
    expect(s.p50).toBeCloseTo(isothermDepth(cm, 300, { heatFlowMWm2: qs[(N - 1) / 2] })!, 9);
    const atMean = isothermDepth(cm, 300)!;
    expect(Math.abs(s.p50 - atMean)).toBeLessThan(4 * s.stderrP50);
    expect(s.p10).toBeLessThan(atMean);
    expect(s.p90).toBeGreaterThan(atMean);
    expect(s.p10).toBeLessThan(s.p50);
    expect(s.p50).toBeLessThan(s.p90);
  });

  it('same seed → same result; another seed → different', () => {
    const m = base({ conductivityWmK: { dist: 'truncnormal', mean: 3, sd: 0.3, min: 2, max: 4 } }, { dist: 'normal', mean: 70, sd: 5 });
    const a = monteCarloColumn(m, { ...opts, realizations: 200 });
    const b = monteCarloColumn(m, { ...opts, realizations: 200 });
    const c = monteCarloColumn(m, { ...opts, realizations: 200, seed: 8 });
    expect(a).toEqual(b);
    expect(c.isothermDepthsKm[0].p50).not.toBe(a.isothermDepthsKm[0].p50);
  });

  it('an isotherm not reached counts as deeper than any depth: a percentile there is null', () => {
    // Low flows never reach 500 °C above 40 km; about half the draws do.
    const m = base({}, { dist: 'uniform', min: 45, max: 95 });
    const r = monteCarloColumn(m, { ...opts, realizations: 400 });
    const s = r.isothermDepthsKm[1];
    expect(s.finite).toBeGreaterThan(0);
    expect(s.finite).toBeLessThan(s.n);
    expect(Number.isNaN(s.p90)).toBe(true);
    expect(Number.isFinite(s.p10)).toBe(true);
    expect(Number.isNaN(s.mean)).toBe(true);
  });
});

describe('grid Monte Carlo', () => {
  const cells = 37;
  const q = Float32Array.from({ length: cells }, (_, i) => 55 + i);
  q[5] = NaN;
  const sd = Float32Array.from({ length: cells }, (_, i) => (i % 3) * 2);
  const model = base({ conductivityWmK: { dist: 'normal', mean: 3, sd: 0.25 }, heatProductionUWm3: { dist: 'triangular', min: 1.5, mode: 2.5, max: 3 } });
  const spec = (corr: 'full' | 'independent'): GridMonteCarloSpec => ({ models: [model], heatFlowMWm2: q, heatFlowSdMWm2: sd, heatFlowErrorCorrelation: corr, ...opts, realizations: 60 });

  for (const corr of ['full', 'independent'] as const) {
    it(`${corr} correlation: identical results for any chunking of the cells`, () => {
      const prep = prepareGridMonteCarlo(spec(corr));
      const a = allocateGridMonteCarloOutput(cells, 2, 2);
      monteCarloGridRange(prep, 0, cells, a);
      const b = allocateGridMonteCarloOutput(cells, 2, 2);
      const prep2 = prepareGridMonteCarlo(spec(corr)); // as a second worker would
      monteCarloGridRange(prep2, 20, cells, b, 3);
      monteCarloGridRange(prep2, 0, 11, b, 4);
      monteCarloGridRange(prep, 11, 20, b, 1);
      expect(b).toEqual(a);
      expect(Number.isNaN(a.isotherms[0].p50[5])).toBe(true);
      expect(a.invalidFraction![5]).toBe(1);
    });
  }

  it('a cell with no heat-flow error matches the column Monte Carlo of the same model', () => {
    const prep = prepareGridMonteCarlo(spec('full'));
    const out = allocateGridMonteCarloOutput(cells, 2, 2);
    monteCarloGridRange(prep, 0, cells, out);
    const col = monteCarloColumn(model, { ...opts, realizations: 60, heatFlowMWm2: q[3], solidus: false });
    expect(sd[3]).toBe(0);
    expect(out.isotherms[0].p50[3]).toBeCloseTo(col.isothermDepthsKm[0].p50, 4);
    expect(out.temperatures[1].p90[3]).toBeCloseTo(col.temperatureAtDepthsC[1].p90, 3);
  });
});
