import { describe, it, expect } from 'vitest';
import { createConditionalSimulator } from '../../shared/interp/simulation.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';

/**
 * Fault barriers in conditional simulation: the conditioning step uses kriging's barrier-aware neighbourhoods
 * (shared/interp/barriers.ts), so a datum across a fault does not condition a target. Hand-computable case:
 * data A = (0, 0) and B = (10, 0) km, a fault along x = 6 km, a target T = (4, 0) on A's side, a global
 * neighbourhood. T then sees A alone, and ordinary kriging from one datum gives λ_A = 1 (the weights sum to 1), so
 *   Z_cs(T) = Z_u(T) + z_A − Z_u(A),  mean z_A,  variance Var(Z_u(T) − Z_u(A)) = 2γ(|T − A|)
 * (Journel & Huijbregts 1978, §VII.C, conditioning by kriging; 2γ(h) is the variance of an increment by the
 * definition of the semivariogram, Matheron 1963). Spherical model, sill 1, range 20 km, no nugget:
 * γ(4) = 1.5·0.2 − 0.5·0.2³ = 0.296 (Isaaks & Srivastava 1989, eq. 16.4), so the variance is 0.592.
 * Tolerances: 4 standard errors for R realizations, SE(mean) = σ/√R, SE(variance) = σ²·√(2/(R − 1)).
 */
const model: VariogramModel = { model: 'spherical', nugget: 0, partialSill: 1, rangeKm: 20 };
const x = Float64Array.of(0, 10),
  y = Float64Array.of(0, 0);
const tx = Float64Array.of(4, 8),
  ty = Float64Array.of(0, 0);
const fault = Float64Array.of(6, -50, 6, 50);

function realizations(z: Float64Array, faults: Float64Array | null, R: number): { t: number[][]; sim: ReturnType<typeof createConditionalSimulator> } {
  const sim = createConditionalSimulator({ x, y, z, tx, ty, model, neighbors: Infinity, sampler: 'cholesky', faults });
  const t: number[][] = [[], []];
  sim.run(5, 0, R, (_r, v) => {
    t[0].push(v[0]);
    t[1].push(v[1]);
  });
  return { t, sim };
}

describe('conditional simulation honours fault barriers', () => {
  it('conditions each target by the data on its side only (weights λ = 1 from the one visible datum)', () => {
    const { sim } = realizations(Float64Array.of(1, 5), fault, 1);
    const w = sim.weights;
    expect(Array.from(w.ids.subarray(w.offsets[0], w.offsets[1]))).toEqual([0]);
    expect(w.lambda[w.offsets[0]]).toBeCloseTo(1, 12);
    expect(Array.from(w.ids.subarray(w.offsets[1], w.offsets[2]))).toEqual([1]);
    expect(w.lambda[w.offsets[1]]).toBeCloseTo(1, 12);
    // Without the fault both data condition T (the check can fail).
    const open = realizations(Float64Array.of(1, 5), null, 1).sim.weights;
    expect(open.offsets[1] - open.offsets[0]).toBe(2);
  });

  it('leaves a target unchanged, value for value, when the datum across the fault changes', () => {
    const a = realizations(Float64Array.of(1, 5), fault, 50).t;
    const b = realizations(Float64Array.of(1, 500), fault, 50).t;
    expect(b[0]).toEqual(a[0]);
    expect(b[1]).not.toEqual(a[1]);
  });

  it('gives the one-datum conditional mean z_A and variance 2γ(4 km) = 0.592 at the target', () => {
    const R = 4000;
    const v = realizations(Float64Array.of(1, 5), fault, R).t[0];
    const mean = v.reduce((s, q) => s + q, 0) / R;
    const variance = v.reduce((s, q) => s + (q - mean) ** 2, 0) / (R - 1);
    const s2 = 2 * 0.296;
    expect(Math.abs(mean - 1)).toBeLessThan(4 * Math.sqrt(s2 / R));
    expect(Math.abs(variance - s2)).toBeLessThan(4 * s2 * Math.sqrt(2 / (R - 1)));
  });
});
