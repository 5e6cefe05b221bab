import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Grid } from '../../shared/grid/grid.ts';
import { monteCarloColumn, quantileSorted } from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { computeUncertainty } from '../../shared/products/uncertainty.ts';

// Monte Carlo conventions of DESIGN.md §3: one draw of the model per realization, heat-flow error "full" (one normal
// per realization) or "independent", one stream per (seed, realization), type-7 percentiles (Hyndman & Fan 1996),
// "not reached" deeper than any depth and a percentile there → NoData.
const uncertain = parseModelText(readFileSync(new URL('../../fixtures/demo/model-uncertain.json', import.meta.url), 'utf8')).model;

function grid(width: number, height: number, f: (c: number, r: number) => number): Grid<Float32Array> {
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = f(c, r);
  return { width, height, values, west: -128.5, north: -37.5, dx: 0.05, dy: 0.05, crs: 'EPSG:4326', units: 'mW/m²' };
}

const W = 9,
  H = 15;
const q = grid(W, H, (c, r) => 45 + 4 * c + 2.5 * r);
q.values[17] = NaN;
const sd = grid(W, H, (c, r) => 3 + 0.5 * ((c + r) % 5));
const base = { heatFlow: q, heatFlowSd: sd, models: [uncertain], isothermsC: [300, 500], maxDepthKm: 60, realizations: 60, seed: 1234 };
const bytes = (a: Float32Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

describe('grid Monte Carlo percentiles', () => {
  for (const corr of ['full', 'independent'] as const) {
    it(`gives identical bytes for tiles of 1 row, 7 rows and the whole grid (${corr} correlation)`, () => {
      const a = computeUncertainty({ ...base, heatFlowErrorCorrelation: corr }, 1);
      const b = computeUncertainty({ ...base, heatFlowErrorCorrelation: corr }, 7);
      const c = computeUncertainty({ ...base, heatFlowErrorCorrelation: corr }, H);
      for (let k = 0; k < 2; k++) {
        for (const p of ['p10', 'p50', 'p90'] as const) {
          expect(bytes(a.isotherms[k][p]).equals(bytes(b.isotherms[k][p]))).toBe(true);
          expect(bytes(a.isotherms[k][p]).equals(bytes(c.isotherms[k][p]))).toBe(true);
        }
      }
      expect(a.isotherms[0].p50.filter(Number.isFinite).length).toBeGreaterThan(100);
    });
  }

  it('orders P10 ≤ P50 ≤ P90 and leaves no-data cells empty', () => {
    const u = computeUncertainty(base, 4);
    for (let k = 0; k < 2; k++) {
      const { p10, p50, p90 } = u.isotherms[k];
      for (let i = 0; i < W * H; i++) {
        if (Number.isFinite(p10[i]) && Number.isFinite(p50[i])) expect(p10[i]).toBeLessThanOrEqual(p50[i]);
        if (Number.isFinite(p50[i]) && Number.isFinite(p90[i])) expect(p50[i]).toBeLessThanOrEqual(p90[i]);
      }
      expect(p50[17]).toBeNaN();
    }
  });

  for (const corr of ['full', 'independent'] as const) {
    it(`percentiles are the depths at the normal quantiles of each cell's heat flow (${corr} correlation)`, () => {
      // A deterministic one-layer model, so only the heat-flow error varies: depth falls monotonically with q, and
      // the cell's P10/P50/P90 depths are the depths at q + 1.2815516·sd, q, q − 1.2815516·sd (standard normal
      // quantile, Abramowitz & Stegun 1964 Table 26.5). Depths from the closed form of Turcotte & Schubert (2002)
      // §4-8 (constant k, exponential A): T(z) = T0 + qm·z/k + (A0·hr²/k)(1 − e^(−z/hr)), qm = q − A0·hr, solved by
      // bisection here. Sample-quantile error σ·√(p(1 − p)/N)/φ(z_p) (from memory) through dz/dq, 4 of them allowed.
      const model = parseModelText(
        JSON.stringify({
          surfaceTemperatureC: 10,
          layers: [{ name: 'crust', bottomKm: 60, conductivityWmK: 2.5, heatProductionUWm3: 2, heatProductionDecayKm: 10, densityKgM3: 2700 }],
        }),
      ).model;
      const tsDepth = (q0: number, t: number) => {
        const T = (z: number) => 10 + ((q0 - 20) * z) / 2.5 + ((2 * 100) / 2.5) * (1 - Math.exp(-z / 10));
        let lo = 0,
          hi = 60;
        for (let i = 0; i < 80; i++) {
          const mid = (lo + hi) / 2;
          if (T(mid) < t) lo = mid;
          else hi = mid;
        }
        return (lo + hi) / 2;
      };
      const N = 1501;
      const hf = grid(3, 2, (c, r) => 60 + 8 * c + 5 * r),
        hfSd = grid(3, 2, (c) => 3 + 2 * c);
      const u = computeUncertainty(
        { heatFlow: hf, heatFlowSd: hfSd, models: [model], isothermsC: [300], maxDepthKm: 60, realizations: N, seed: 5, heatFlowErrorCorrelation: corr },
        2,
      );
      const z90 = 1.2815516,
        phi = (z: number) => Math.exp((-z * z) / 2) / Math.sqrt(2 * Math.PI);
      for (let i = 0; i < 6; i++) {
        const q0 = hf.values[i],
          sdq = hfSd.values[i];
        const slope = Math.abs(tsDepth(q0 + 0.5, 300) - tsDepth(q0 - 0.5, 300));
        for (const [p, zq, key] of [
          [0.1, z90, 'p10'],
          [0.5, 0, 'p50'],
          [0.9, -z90, 'p90'],
        ] as const) {
          const tol = (4 * slope * sdq * Math.sqrt((p * (1 - p)) / N)) / phi(zq);
          expect(Math.abs(u.isotherms[0][key][i] - tsDepth(q0 + zq * sdq, 300))).toBeLessThan(tol + 1e-3);
        }
      }
    });
  }

  it('counts an isotherm not reached as deeper than any depth: a percentile falling there is NoData', () => {
    // A cold cell: 500 °C is reached in few realizations above 20 km (maxDepth), so P90 (and P50) are NoData while
    // P10 may be finite; type-7 quantile of a sorted sample with +∞ at the end (Hyndman & Fan 1996).
    const cold = grid(1, 1, () => 50);
    const u = computeUncertainty(
      { heatFlow: cold, heatFlowSd: grid(1, 1, () => 8), models: [uncertain], isothermsC: [500], maxDepthKm: 25, realizations: 200, seed: 7 },
      1,
    );
    const col = monteCarloColumn(uncertain, {
      realizations: 200,
      seed: 7,
      isothermsC: [500],
      depthsKm: [],
      maxDepthKm: 25,
      solidus: false,
      heatFlowMWm2: { dist: 'normal', mean: 50, sd: 8 },
    });
    expect(col.isothermDepthsKm[0].finite).toBeLessThan(col.isothermDepthsKm[0].n * 0.9);
    expect(u.isotherms[0].p90[0]).toBeNaN();
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.9)).toBeNaN();
  });
});
