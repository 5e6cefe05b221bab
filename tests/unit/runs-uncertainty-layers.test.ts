// Exceedance probability and spread from a run's realizations, against the normal distribution: with a one-layer
// crust without heat production, T(z) = T0 + q·z/k (Turcotte & Schubert 2002, eq. 4-31 with A = 0), so the depth to
// an isotherm and the temperature at a depth are monotone in the surface heat flow q ~ N(μ, σ).
import { describe, expect, it } from 'vitest';
import { realizationsFromGrids } from '../../server/runs/realizations.ts';
import { exceedanceProbability, isothermSpreadKm } from '../../server/runs/uncertainty-layers.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';

const MU = 60,
  SIGMA = 6,
  K = 2.5;
const MODEL: ThermalModelInput = {
  surfaceTemperatureC: 0,
  layers: [{ name: 'crust', bottomKm: 60, conductivityWmK: K, heatProductionUWm3: 0, densityKgM3: 2700 }],
};
// Upper tail of the standard normal at 1: 1 − Φ(1) = 0.158655 (Abramowitz & Stegun 1964, Table 26.1).
const TAIL_1 = 0.158655;
// Its 90th percentile: z₀.₉ = 1.281552 (Abramowitz & Stegun 1964, Table 26.5).
const Z90 = 1.281552;

function grid(v: number) {
  return { width: 2, height: 2, west: 0, north: 1, dx: 0.5, dy: 0.5, crs: 'EPSG:4326', units: 'mW/m²', values: new Float32Array(4).fill(v) };
}

function realizations(n: number, corr: 'full' | 'independent') {
  return realizationsFromGrids({
    heatFlow: grid(MU),
    heatFlowSd: grid(SIGMA),
    zoneModels: [MODEL],
    maxDepthKm: 60,
    realizations: n,
    seed: 11,
    heatFlowErrorCorrelation: corr,
  });
}

describe('exceedance probability from the realizations', () => {
  const N = 4000;
  // Monte Carlo tolerance: 4 binomial standard errors √(p(1 − p)/N).
  const tol = 4 * Math.sqrt((TAIL_1 * (1 - TAIL_1)) / N);

  it('P(depth to 300 °C < D) = 1 − Φ(1) where D is the depth reached with q = μ + σ', async () => {
    const d = (300 * K) / (MU + SIGMA); // z = (T − T0)·k/q, km with q in mW/m²
    for (const corr of ['full', 'independent'] as const) {
      const p = await exceedanceProbability(realizations(N, corr), { kind: 'isotherm-shallower', isothermC: 300, depthKm: d });
      for (const v of p) expect(Math.abs(v - TAIL_1)).toBeLessThan(tol);
      // Full correlation: every cell shares each realization's draw, so all cells agree exactly.
      if (corr === 'full') expect(new Set(p).size).toBe(1);
    }
  });

  it('P(T(10 km) > T*) = 1 − Φ(1) where T* is the temperature reached with q = μ + σ', async () => {
    const tStar = ((MU + SIGMA) * 10) / K;
    const p = await exceedanceProbability(realizations(N, 'full'), { kind: 'temperature-exceeds', depthKm: 10, temperatureC: tStar });
    expect(Math.abs(p[0] - TAIL_1)).toBeLessThan(tol);
  });

  it('is 0 and 1 far on either side, and complementary around the median depth', async () => {
    const rr = realizations(400, 'full');
    const shallow = await exceedanceProbability(rr, { kind: 'isotherm-shallower', isothermC: 300, depthKm: 1 });
    const deep = await exceedanceProbability(rr, { kind: 'isotherm-shallower', isothermC: 300, depthKm: 59 });
    expect([...shallow]).toEqual([0, 0, 0, 0]);
    expect([...deep]).toEqual([1, 1, 1, 1]);
  });
});

describe('spread (P90 − P10) from the realizations', () => {
  it('matches the transformed normal quantiles of the heat flow within 2 %', async () => {
    const rr = realizations(4000, 'full');
    const s = await isothermSpreadKm(rr, 300);
    // Depth is decreasing in q: P90 of depth ↔ P10 of q = μ − z₀.₉σ, and P10 of depth ↔ μ + z₀.₉σ.
    const expected = (300 * K) / (MU - Z90 * SIGMA) - (300 * K) / (MU + Z90 * SIGMA);
    expect(Math.abs(s[0] - expected) / expected).toBeLessThan(0.02);
  });

  it('is NoData where the P90 of the isotherm is not reached', async () => {
    const rr = realizations(200, 'full');
    const s = await isothermSpreadKm(rr, 1500); // 1500 °C needs z = 1500·2.5/q ≈ 62 km, below the 60 km search
    expect(Number.isNaN(s[0])).toBe(true);
  });

  it("replays the same streams: a realization's heat flow and model do not depend on how they are read", () => {
    const a = realizations(50, 'independent'),
      b = realizations(50, 'independent');
    expect(a.heatFlowAt(17, 3)).toBe(b.heatFlowAt(17, 3));
    expect(a.heatFlowAt(17, 3)).not.toBe(a.heatFlowAt(18, 3));
    expect(a.modelDraw(5, 0).layers[0].conductivityWmK).toBe(K);
  });
});
