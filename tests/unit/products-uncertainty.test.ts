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

const W = 9, H = 15;
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

  it('equals the engine\'s single-column Monte Carlo with the cell\'s heat flow as a normal distribution (full correlation)', () => {
    // Full correlation: realization r perturbs every cell by sd·z_r, z_r drawn after the model parameters from the
    // realization's stream — exactly a column run whose heat flow is normal(q, sd) drawn after the parameters.
    const u = computeUncertainty(base, 3);
    for (const i of [0, 40, 77, 134]) {
      const col = monteCarloColumn(uncertain, { realizations: 60, seed: 1234, isothermsC: [300, 500], depthsKm: [], maxDepthKm: 60, solidus: false, heatFlowMWm2: { dist: 'normal', mean: q.values[i], sd: sd.values[i] } });
      for (let k = 0; k < 2; k++) {
        const s = col.isothermDepthsKm[k];
        for (const p of ['p10', 'p50', 'p90'] as const) {
          if (Number.isNaN(s[p])) expect(u.isotherms[k][p][i]).toBeNaN();
          else expect(u.isotherms[k][p][i]).toBeCloseTo(s[p], 4);
        }
      }
    }
  });

  it('counts an isotherm not reached as deeper than any depth: a percentile falling there is NoData', () => {
    // A cold cell: 500 °C is reached in few realizations above 20 km (maxDepth), so P90 (and P50) are NoData while
    // P10 may be finite; type-7 quantile of a sorted sample with +∞ at the end (Hyndman & Fan 1996).
    const cold = grid(1, 1, () => 50);
    const u = computeUncertainty({ heatFlow: cold, heatFlowSd: grid(1, 1, () => 8), models: [uncertain], isothermsC: [500], maxDepthKm: 25, realizations: 200, seed: 7 }, 1);
    const col = monteCarloColumn(uncertain, { realizations: 200, seed: 7, isothermsC: [500], depthsKm: [], maxDepthKm: 25, solidus: false, heatFlowMWm2: { dist: 'normal', mean: 50, sd: 8 } });
    expect(col.isothermDepthsKm[0].finite).toBeLessThan(col.isothermDepthsKm[0].n * 0.9);
    expect(u.isotherms[0].p90[0]).toBeNaN();
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.9)).toBeNaN();
  });
});
