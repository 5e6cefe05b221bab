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

const base = (over: Partial<ThermalModelInput['layers'][0]> = {}, q0: ThermalModelInput['surfaceHeatFlowMWm2'] = 70): ThermalModelInput => ({
  surfaceTemperatureC: 10,
  surfaceHeatFlowMWm2: q0,
  layers: [
    {
      name: 'upper',
      bottomKm: 15,
      conductivityWmK: 3,
      conductivityTempCoeffPerK: 1.5e-3,
      heatProductionUWm3: 2.5,
      heatProductionDecayKm: 10,
      densityKgM3: 2700,
      ...over,
    },
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

  it('normal q0 alone: percentiles of the isotherm depth are the depths at the normal quantiles of q0', () => {
    // Depth to an isotherm falls monotonically with q0, so its P10/P50/P90 are the depths at q0's P90/P50/P10:
    // μ + 1.2815516σ, μ, μ − 1.2815516σ (standard normal quantile z₀.₉ = 1.2815516, Abramowitz & Stegun 1964
    // Table 26.5). Depths from the closed form of Turcotte & Schubert (2002) §4-8, constant k, exponential A:
    // T(z) = T0 + qm·z/k + (A0·hr²/k)(1 − e^(−z/hr)), qm = q0 − A0·hr, solved by bisection here.
    const N = 2001,
      mu = 70,
      sigma = 5;
    const m: ThermalModelInput = {
      surfaceTemperatureC: 10,
      surfaceHeatFlowMWm2: { dist: 'normal', mean: mu, sd: sigma },
      layers: [{ name: 'crust', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700 }],
    };
    const tsDepth = (q0: number, t: number) => {
      const T = (z: number) => 10 + ((q0 - 25) * z) / 2.5 + ((2.5 * 100) / 2.5) * (1 - Math.exp(-z / 10));
      let lo = 0,
        hi = 40;
      for (let i = 0; i < 80; i++) {
        const mid = (lo + hi) / 2;
        if (T(mid) < t) lo = mid;
        else hi = mid;
      }
      return (lo + hi) / 2;
    };
    const r = monteCarloColumn(m, { ...opts, realizations: N });
    const s = r.isothermDepthsKm[0];
    const z90 = 1.2815516;
    // Sampling error of a sample quantile: σ_q = σ·√(p(1 − p)/N)/φ(z_p) (e.g. Stuart & Ord, Kendall's Advanced
    // Theory of Statistics, from memory), mapped to depth by the slope dz/dq0; 4 such errors allowed.
    const slope = Math.abs(tsDepth(mu + 0.5, 300) - tsDepth(mu - 0.5, 300));
    const phi = (z: number) => Math.exp((-z * z) / 2) / Math.sqrt(2 * Math.PI);
    for (const [p, zq, v] of [
      [0.1, z90, s.p10],
      [0.5, 0, s.p50],
      [0.9, -z90, s.p90],
    ] as const) {
      const tol = (4 * slope * (sigma * Math.sqrt((p * (1 - p)) / N))) / phi(zq);
      expect(Math.abs(v - tsDepth(mu + zq * sigma, 300))).toBeLessThan(tol);
    }
    expect(s.p10).toBeLessThan(s.p50);
    expect(s.p50).toBeLessThan(s.p90);
  });

  // A property of the seeded streams (DEVELOPERS.md, randomness), not a check of a value.
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
  const spec = (corr: 'full' | 'independent'): GridMonteCarloSpec => ({
    models: [model],
    heatFlowMWm2: q,
    heatFlowSdMWm2: sd,
    heatFlowErrorCorrelation: corr,
    ...opts,
    realizations: 60,
  });

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

  // A consistency check between two paths of the project (the grid and the column Monte Carlo), not an outside check:
  // the outside checks of both are the normal-quantile tests above and in products-uncertainty.test.ts.
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

describe('grid Monte Carlo under the melt limit', () => {
  it('never gives a temperature past the dry solidus as a percentile: a percentile past the melt onset is null', () => {
    // One felsic-crust layer, constant k = 2.5 and A = 1: T(z) = T0 + q0·z/k − A·z²/(2k) (Turcotte & Schubert 2002
    // §4-6), increasing while q(z) > 0. Its fluid-absent solidus is 780 °C at every pressure (Le Breton & Thompson
    // 1988, held constant; shared/petrology/solidus.ts). Heat flow normal(μ, σ) per cell: a realization's temperature
    // at depth d is T(d; q0) below 780 °C and past the melt onset otherwise, so its P10/P50/P90 are T(d; q0) at q0's
    // 10th/50th/90th percentiles μ ∓ 1.2815516σ (A&S Table 26.5) where those stay below 780 °C, and null where not.
    const model: ThermalModelInput = {
      surfaceTemperatureC: 10,
      layers: [{ name: 'crust', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2700, rock: 'felsic-crust' }],
    };
    const T = (q0: number, z: number) => 10 + (q0 * z) / 2.5 - (1 * z * z) / (2 * 2.5);
    const mu = Float32Array.from([80, 95, 110]),
      sdq = Float32Array.from([10, 10, 10]);
    const depths = [15, 20, 25, 30];
    const N = 1501;
    const spec: GridMonteCarloSpec = {
      models: [model],
      heatFlowMWm2: mu,
      heatFlowSdMWm2: sdq,
      heatFlowErrorCorrelation: 'independent',
      isothermsC: [300],
      depthsKm: depths,
      maxDepthKm: 40,
      realizations: N,
      seed: 3,
    };
    const out = allocateGridMonteCarloOutput(3, 1, depths.length);
    monteCarloGridRange(prepareGridMonteCarlo(spec), 0, 3, out);
    const z90 = 1.2815516,
      phi = (z: number) => Math.exp((-z * z) / 2) / Math.sqrt(2 * Math.PI);
    let nulls = 0,
      finite = 0;
    for (let c = 0; c < 3; c++) {
      depths.forEach((d, k) => {
        for (const [p, zq, key] of [
          [0.1, -z90, 'p10'],
          [0.5, 0, 'p50'],
          [0.9, z90, 'p90'],
        ] as const) {
          const v = out.temperatures[k][key][c];
          const expected = T(mu[c] + zq * sdq[c], d);
          // Sample-quantile error σ·√(p(1 − p)/N)/φ(z_p) (from memory) times dT/dq0 = d/k; 4 of them allowed.
          const tol = (4 * (d / 2.5) * sdq[c] * Math.sqrt((p * (1 - p)) / N)) / phi(zq);
          if (Number.isFinite(v)) expect(v).toBeLessThan(780);
          if (Math.abs(expected - 780) < tol) continue; // too near the solidus to say which side the sample falls
          if (expected > 780) {
            expect(v).toBeNaN();
            nulls++;
          } else {
            expect(Math.abs(v - expected)).toBeLessThan(tol + 1e-3);
            finite++;
          }
        }
      });
      // Fraction of realizations melting above 40 km: P(T(40; q0) ≥ 780) = 1 − Φ((q* − μ)/σ), q* from the closed
      // form: q* = (780 − 10 + 40²/(2·2.5))·2.5/40.
      const qStar = ((780 - 10 + (40 * 40) / 5) * 2.5) / 40;
      const x = (qStar - mu[c]) / sdq[c];
      // Φ by Abramowitz & Stegun 26.2.17 (|ε| < 7.5e-8).
      const t = 1 / (1 + 0.2316419 * Math.abs(x));
      const tail = phi(x) * t * (0.31938153 + t * (-0.356563782 + t * (1.781477937 + t * (-1.821255978 + t * 1.330274429))));
      const pMelt = x >= 0 ? tail : 1 - tail;
      expect(Math.abs(out.meltFraction![c] - pMelt)).toBeLessThan(4 * Math.sqrt((pMelt * (1 - pMelt)) / N) + 1e-3);
    }
    expect(nulls).toBeGreaterThan(3);
    expect(finite).toBeGreaterThan(3);
  });
});
