import { describe, it, expect } from 'vitest';
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { semivariance, covariance, empiricalVariogram, fitVariogram, anisotropyMatrix, type VariogramModel } from '../../shared/interp/variogram.ts';
import { prng } from '../helpers/prng.ts';

describe('semivariogram models (practical-range convention, ../shared/DESIGN.md §3)', () => {
  const c0 = 2,
    c = 10,
    a = 30;
  it('spherical reaches the full sill at h = a and stays there', () => {
    const m: VariogramModel = { model: 'spherical', nugget: c0, partialSill: c, rangeKm: a };
    expect(semivariance(m, a)).toBeCloseTo(c0 + c, 12);
    expect(semivariance(m, 2 * a)).toBe(c0 + c);
    expect(semivariance(m, a / 2)).toBeCloseTo(c0 + c * (1.5 * 0.5 - 0.5 * 0.125), 12); // γ = c0 + c(1.5h/a − 0.5h³/a³)
  });
  it('exponential and Gaussian reach 95% of the partial sill at the practical range (factor 3: 1 − e⁻³ = 0.9502)', () => {
    for (const model of ['exponential', 'gaussian'] as const) {
      const m: VariogramModel = { model, nugget: c0, partialSill: c, rangeKm: a };
      expect(semivariance(m, a)).toBeCloseTo(c0 + c * (1 - Math.exp(-3)), 12);
    }
    expect(semivariance({ model: 'gaussian', nugget: 0, partialSill: 1, rangeKm: 10 }, 5)).toBeCloseTo(1 - Math.exp(-0.75), 12); // 1 − e^(−3h²/a²)
  });
  it('γ(0) = 0 and C(h) = sill − γ(h)', () => {
    const m: VariogramModel = { model: 'exponential', nugget: c0, partialSill: c, rangeKm: a };
    expect(semivariance(m, 0)).toBe(0);
    expect(covariance(m, 0)).toBe(c0 + c);
    for (const h of [0.1, 5, 50]) expect(covariance(m, h) + semivariance(m, h)).toBeCloseTo(c0 + c, 12);
  });
  it('the anisotropy map stretches the minor axis by 1/ratio', () => {
    const M = anisotropyMatrix({ angleDeg: 30, ratio: 0.5 });
    const t = (30 * Math.PI) / 180;
    const major = [Math.sin(t), Math.cos(t)],
      minor = [Math.cos(t), -Math.sin(t)];
    const len = (p: number[]) => Math.hypot(M[0] * p[0] + M[1] * p[1], M[2] * p[0] + M[3] * p[1]);
    expect(len(major)).toBeCloseTo(1, 12);
    expect(len(minor)).toBeCloseTo(2, 12);
  });
});

describe('empirical semivariogram and Cressie (1985) fit', () => {
  it('Matheron estimator on a hand-checkable line of points', () => {
    // Values 0, 1, 0, 1 at x = 0, 1, 2, 3: lag 1 pairs all differ by 1 → γ = 1/2; lag 2 pairs equal → γ = 0.
    const e = empiricalVariogram(Float64Array.from([0, 1, 2, 3]), new Float64Array(4), Float64Array.from([0, 1, 0, 1]), { lagKm: 1, maxLagKm: 3.5 });
    const byLag = Object.fromEntries(e.lags.map((l) => [Math.round(l.lagKm), l]));
    expect(byLag[1]).toEqual({ lagKm: 1, gamma: 0.5, pairs: 3 });
    expect(byLag[2]).toEqual({ lagKm: 2, gamma: 0, pairs: 2 });
    expect(byLag[3]).toEqual({ lagKm: 3, gamma: 0.5, pairs: 1 });
  });

  it('recovers the parameters of a known model exactly from noise-free γ̂', () => {
    // γ̂ written out from the published spherical model, γ = c0 + c(1.5h/a − 0.5h³/a³) for h ≤ a, c0 + c beyond
    // (DESIGN.md §3; Isaaks & Srivastava 1989, from memory), c0 = 1.5, c = 8, a = 40 km.
    const spherical = (h: number) => (h <= 40 ? 1.5 + 8 * (1.5 * (h / 40) - 0.5 * (h / 40) ** 3) : 9.5);
    const lags = Array.from({ length: 15 }, (_, i) => ({ lagKm: 4 * (i + 0.5), gamma: spherical(4 * (i + 0.5)), pairs: 100 + i }));
    const f = fitVariogram('spherical', lags);
    expect(f.nugget).toBeCloseTo(1.5, 3);
    expect(f.partialSill).toBeCloseTo(8, 3);
    expect(f.rangeKm).toBeCloseTo(40, 2);
  });

  it("recovers a simulated field's variogram (Cholesky simulation, seeded) within 25% (range, sill)", () => {
    // Gaussian random field with exponential covariance, nugget 0.2, partial sill 1, practical range 15 km, on
    // 500 random sites in a 60 km square; 4 independent realizations, parameters averaged. Tolerance 25%: the
    // sampling spread of a variogram from one 60-km window (4 ranges across) is of that order.
    const n = 500;
    const r = prng(2024);
    const x = Float64Array.from({ length: n }, () => r() * 60),
      y = Float64Array.from({ length: n }, () => r() * 60);
    // Covariance written out from the model (C(h) = c0·[h = 0] + c·e^(−3h/a)) and factored by ml-matrix (a
    // general-purpose library), so neither the field nor its factor comes from the project's code.
    const C = Matrix.zeros(n, n);
    for (let i = 0; i < n; i++)
      for (let j = 0; j < n; j++) {
        const h = Math.hypot(x[i] - x[j], y[i] - y[j]);
        C.set(i, j, h === 0 ? 1.2 : Math.exp((-3 * h) / 15));
      }
    const chol = new CholeskyDecomposition(C);
    expect(chol.isPositiveDefinite()).toBe(true);
    const Lm = chol.lowerTriangularMatrix;
    const L = Float64Array.from(Lm.to1DArray());
    const normal = () => Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r()); // Box–Muller
    const fits: VariogramModel[] = [];
    for (let rep = 0; rep < 4; rep++) {
      const e = Float64Array.from({ length: n }, normal);
      const z = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let k = 0; k <= i; k++) s += L[i * n + k] * e[k];
        z[i] = s;
      }
      const emp = empiricalVariogram(x, y, z, { lagKm: 2.5, maxLagKm: 30 });
      fits.push(fitVariogram('exponential', emp.lags));
    }
    const mean = (f: (m: VariogramModel) => number) => fits.reduce((s, m) => s + f(m), 0) / fits.length;
    const sill = mean((m) => m.nugget + m.partialSill),
      range = mean((m) => m.rangeKm);
    expect(Math.abs(sill - 1.2) / 1.2).toBeLessThan(0.25);
    expect(Math.abs(range - 15) / 15).toBeLessThan(0.25);
  });
});
