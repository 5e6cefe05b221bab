// Which Monte Carlo realizations reach an isotherm above the search depth, and what becomes of a column whose heat
// flow runs out (docs/sources.md#isotherm-reach-share).
//
// 1. Linear geotherm (one layer, no heat production, constant k): T(z) = T0 + q·z/k (Turcotte & Schubert 2002,
//    §4-6 with A = 0; docs/sources.md#geotherm-constant). The isotherm T lies above the search depth D iff
//    q ≥ q* = k·(T − T0)/D, so with q ~ N(μ, σ²) the share of realizations reaching it is 1 − Φ((q* − μ)/σ), Φ the
//    standard normal CDF (Abramowitz & Stegun 1964, 26.2.17; docs/sources.md#normal-distribution), written out here.
//    With N realizations per cell and M cells whose normals are independent, the share of one cell has the binomial
//    standard error √(p(1 − p)/N) and the grid average √(p(1 − p)/(N·M)); 4.5 of them are allowed.
// 2. Uniform heat production A over the top layer: q(z) = q0 − A·z reaches 0 at z = q0/A, where the temperature
//    peaks at T0 + q0²/(2kA) (docs/sources.md#geotherm-constant). An isotherm hotter than the peak is reached at no
//    depth: such a realization counts as not reached (deeper than any depth), no longer as invalid and left out.
import { describe, expect, it } from 'vitest';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { computeThermalProducts } from '../../shared/products/thermal-products.ts';
import { computeUncertainty } from '../../shared/products/uncertainty.ts';
import { WGS84_DEF } from '../../shared/interp/projection.ts';
import { COLUMN_FLOW_EXHAUSTED, ColumnState, compileModel, nominalModel, solveColumn } from '../../shared/thermal/index.ts';
import { isothermAnswer } from '../../shared/thermal/monte-carlo.ts';

const K = 2.5,
  T0 = 10;

/** Standard normal CDF, Abramowitz & Stegun (1964) 26.2.17 (|ε| < 7.5e-8). */
function normalCdf(x: number): number {
  const t = 1 / (1 + 0.2316419 * Math.abs(x));
  const pdf = Math.exp((-x * x) / 2) / Math.sqrt(2 * Math.PI);
  const tail = pdf * t * (0.31938153 + t * (-0.356563782 + t * (1.781477937 + t * (-1.821255978 + t * 1.330274429))));
  return x >= 0 ? 1 - tail : tail;
}

const layer = (name: string, bottomKm: number, a: number) => ({ name, bottomKm, conductivityWmK: K, heatProductionUWm3: a, densityKgM3: 2700 });

function grid(width: number, height: number, value: number, units: string): Grid<Float32Array> {
  return { width, height, values: new Float32Array(width * height).fill(value), west: 10, north: 0.5, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units };
}

describe('share of realizations reaching an isotherm above the search depth', () => {
  const W = 8,
    H = 8,
    M = W * H,
    N = 400,
    D = 20,
    MU = 50,
    SD = 10;
  const model: ThermalModelInput = { surfaceTemperatureC: T0, layers: [layer('crust', 40, 0)] };

  it('is the normal tail 1 − Φ((k(T − T0)/D − μ)/σ) of a linear geotherm, in its own layer beside a mean that is NoData where it is below 1', async () => {
    const res = await computeThermalProducts(grid(W, H, MU, 'mW/m²'), grid(W, H, SD, 'mW/m²'), model, [], WGS84_DEF, {
      isothermsC: [300, 500],
      depthsKm: [],
      faciesDepthKm: null,
      maxDepthKm: D,
      realizations: N,
      seed: 5,
      heatFlowErrorCorrelation: 'independent',
    });
    const byName = new Map(res.layers.map((l) => [l.name, l]));
    for (const T of [300, 500]) {
      const qStar = (K * (T - T0)) / D; // 36.25 and 61.25 mW/m²
      const p = 1 - normalCdf((qStar - MU) / SD); // 0.9154 and 0.1303
      const share = byName.get(`depth-${T}C.reached`)!;
      const mean = byName.get(`depth-${T}C.mean`)!;
      expect(share.units).toBe('fraction');
      expect(share.legend).toMatchObject({ type: 'ramp', units: 'fraction', min: 0, max: 1 });
      expect(share.method).toContain(`above ${D} km`);
      expect(mean.legend.note).toBe(`no mean where some realizations do not reach ${T} °C above ${D} km; see the share layer depth-${T}C.reached`);
      expect(mean.method).toContain(mean.legend.note);
      let sum = 0,
        below1 = 0;
      const v = share.grid.values;
      for (let c = 0; c < M; c++) {
        sum += v[c];
        expect(Math.abs(v[c] - p)).toBeLessThan(4.5 * Math.sqrt((p * (1 - p)) / N));
        // The strict mean: defined exactly where every valid realization reaches the isotherm.
        expect(Number.isFinite(mean.grid.values[c])).toBe(v[c] === 1);
        if (v[c] < 1) below1++;
      }
      expect(Math.abs(sum / M - p)).toBeLessThan(4.5 * Math.sqrt((p * (1 - p)) / (N * M)));
      expect(below1).toBe(M); // p < 1 − 1e-3 here: every cell has some realizations that do not reach it
    }
  });
});

describe('a column whose heat flow runs out above the isotherm', () => {
  const A = 2,
    Q0 = 36;
  // Top layer 0–20 km with A = 2 µW/m³ (40 mW/m² of heat production), no heat production below.
  const model: ThermalModelInput = { surfaceTemperatureC: T0, layers: [layer('upper', 20, A), layer('lower', 60, 0)] };

  it('peaks at T0 + q0²/(2kA) where q = 0; a hotter isotherm is not reached (+∞), a cooler one lies at the quadratic root', () => {
    const cm = compileModel(nominalModel(model), { maxDepthKm: 60 });
    const st = new ColumnState(cm.nLayers);
    solveColumn(cm, Q0, T0, st);
    expect(st.status & COLUMN_FLOW_EXHAUSTED).toBe(COLUMN_FLOW_EXHAUSTED);
    expect(st.validToKm).toBeCloseTo(Q0 / A, 9); // 18 km
    const peak = T0 + (Q0 * Q0) / (2 * K * A); // 139.6 °C
    for (const T of [peak - 0.5, 100]) {
      const z = (Q0 - Math.sqrt(Q0 * Q0 - 2 * A * K * (T - T0))) / A;
      expect(isothermAnswer(cm, st, null, T, 60)).toBeCloseTo(z, 6);
    }
    // Before, these were NaN (left out as invalid); the temperature never exceeds its peak at any depth.
    expect(isothermAnswer(cm, st, null, peak + 0.5, 60)).toBe(Infinity);
    expect(isothermAnswer(cm, st, null, 300, 60)).toBe(Infinity);
  });

  it('counts cold draws as not reaching the isotherm and their share per cell, instead of leaving them out', () => {
    const W = 6,
      H = 6,
      N = 600,
      MU = 50,
      SD = 10,
      ZMAX = 60,
      T = 300;
    const u = computeUncertainty({
      heatFlow: grid(W, H, MU, 'mW/m²'),
      heatFlowSd: grid(W, H, SD, 'mW/m²'),
      models: [model],
      isothermsC: [T],
      maxDepthKm: ZMAX,
      realizations: N,
      seed: 9,
      heatFlowErrorCorrelation: 'independent',
    });
    // q0 < 40: heat flow runs out at q0/A ≤ 20 km with a peak of at most 10 + 40²/10 = 170 °C < 300 °C.
    // q0 ≥ 40: T(20 km) = T0 + (q0·20 − A·20²/2)/k = 8·q0 − 150 and T(60 km) = T(20 km) + (q0 − 40)·40/k = 24·q0 − 790,
    // so 300 °C is reached above 60 km iff q0 ≥ 1090/24 = 45.4 mW/m².
    const pExhausted = normalCdf((40 - MU) / SD);
    const pReached = 1 - normalCdf((1090 / 24 - MU) / SD);
    // Depth to 300 °C at q0 (≥ 40): the linear geotherm below 20 km from T(20) = 8·q0 − 150.
    const depth = (q: number) => 20 + ((T - (8 * q - 150)) * K) / (q - 40);
    const slope = Math.abs(depth(MU + 0.01) - depth(MU - 0.01)) / 0.02;
    let cells = 0,
      p50Sum = 0,
      p50Tol = 0;
    for (let c = 0; c < W * H; c++) {
      const se = (p: number) => 4.5 * Math.sqrt((p * (1 - p)) / N);
      expect(u.invalidFraction[c]).toBe(0);
      expect(Math.abs(u.exhaustedFraction[c] - pExhausted)).toBeLessThan(se(pExhausted));
      // Leaving the cold draws out would give P(q0 ≥ 45.4)/P(q0 ≥ 40) = 0.80 instead of 0.68 (6.7 SE away per cell).
      expect(Math.abs(u.isotherms[0].finiteFraction[c] - pReached)).toBeLessThan(se(pReached));
      // P50 is the depth at the median heat flow μ (depth falls with q0): sample-median error σ·√(0.25/N)/φ(0)
      // (docs/sources.md#realization-mean) times |dz/dq0|; with the cold draws left out it moves to the depth at
      // the conditional median of q0 given q0 ≥ 40 (52.0 mW/m²: Φ⁻¹(0.579) = 0.2 σ above μ, 5.4 km shallower), which
      // one cell's tolerance does not separate; the average over the independent cells below does.
      const tol = (4.5 * slope * SD * Math.sqrt(0.25 / N)) / (1 / Math.sqrt(2 * Math.PI));
      expect(Math.abs(u.isotherms[0].p50[c] - depth(MU))).toBeLessThan(tol);
      p50Sum += u.isotherms[0].p50[c];
      p50Tol = tol;
      expect(u.isotherms[0].p90[c]).toBeNaN(); // P90 falls among the draws that do not reach it
      cells++;
    }
    expect(cells).toBe(W * H);
    // The cells draw independent normals, so the average P50's error shrinks by √cells (1.25 km for 36 cells).
    expect(Math.abs(p50Sum / cells - depth(MU))).toBeLessThan(p50Tol / Math.sqrt(cells));
    expect(u.heatFlowExhausted.cells).toBe(W * H);
    expect(Math.abs(u.heatFlowExhausted.cellRealizations / (N * W * H) - pExhausted)).toBeLessThan(
      4.5 * Math.sqrt((pExhausted * (1 - pExhausted)) / (N * W * H)),
    );
  });
});
