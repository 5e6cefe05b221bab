import { describe, it, expect } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { createConditionalSimulator, simulateUnconditional } from '../../shared/interp/simulation.ts';
import { NormalScoreTransform } from '../../shared/interp/normalScore.ts';
import { covariance, semivariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { prng } from '../helpers/prng.ts';

/**
 * Moment checks of conditional simulation by kriging (Journel & Huijbregts 1978, §VII.C; Chilès & Delfiner 2012,
 * §7.3.1): with a global neighbourhood and ordinary kriging, realizations at the targets have the kriging
 * estimate as mean, the kriging variance as variance, and the conditional covariance
 *   Cov(t₁, t₂) = C(t₁, t₂) − λ₁ᵀc₂ − λ₂ᵀc₁ + λ₁ᵀCλ₂
 * as covariance; all three are computed here from a dense solve of the full bordered system with ml-matrix.
 * Tolerances: 4 standard errors of the Monte Carlo estimator for R realizations (Gaussian sampling theory):
 *   SE(mean) = σ/√R, SE(variance) = σ²·√(2/(R − 1)), SE(covariance) = √((σ₁²σ₂² + c₁₂²)/R).
 */

interface Dense {
  est: number[];
  lambda: number[][];
  variance: number[];
  cov: number[][];
}

function denseOk(x: number[], y: number[], z: number[], tx: number[], ty: number[], m: VariogramModel, ev: number[] | null = null): Dense {
  const n = x.length;
  const K = Matrix.zeros(n + 1, n + 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) K.set(i, j, covariance(m, Math.hypot(x[i] - x[j], y[i] - y[j])) + (i === j && ev !== null ? ev[i] : 0));
    K.set(i, n, 1);
    K.set(n, i, 1);
  }
  const lambda: number[][] = [],
    est: number[] = [],
    variance: number[] = [],
    c0s: number[][] = [];
  for (let t = 0; t < tx.length; t++) {
    const rhs = Matrix.zeros(n + 1, 1);
    const c0: number[] = [];
    for (let i = 0; i < n; i++) {
      c0.push(covariance(m, Math.hypot(x[i] - tx[t], y[i] - ty[t])));
      rhs.set(i, 0, c0[i]);
    }
    rhs.set(n, 0, 1);
    const sol = solve(K, rhs).getColumn(0);
    const l = sol.slice(0, n),
      mu = sol[n];
    lambda.push(l);
    c0s.push(c0);
    est.push(l.reduce((s, v, i) => s + v * z[i], 0));
    variance.push(m.nugget + m.partialSill - l.reduce((s, v, i) => s + v * c0[i], 0) - mu);
  }
  const cov: number[][] = [];
  for (let a = 0; a < tx.length; a++) {
    cov.push([]);
    for (let b = 0; b < tx.length; b++) {
      let v = covariance(m, Math.hypot(tx[a] - tx[b], ty[a] - ty[b]));
      for (let i = 0; i < n; i++) v -= lambda[a][i] * c0s[b][i] + lambda[b][i] * c0s[a][i];
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v += lambda[a][i] * lambda[b][j] * covariance(m, Math.hypot(x[i] - x[j], y[i] - y[j]));
      cov[a].push(v);
    }
  }
  return { est, lambda, variance, cov };
}

/** Sample moments of realizations (rows) at targets (columns). */
function moments(real: Float64Array[], T: number) {
  const R = real.length;
  const mean = new Array(T).fill(0);
  for (const v of real) for (let t = 0; t < T; t++) mean[t] += v[t] / R;
  const cov: number[][] = Array.from({ length: T }, () => new Array(T).fill(0));
  for (const v of real) for (let a = 0; a < T; a++) for (let b = 0; b < T; b++) cov[a][b] += ((v[a] - mean[a]) * (v[b] - mean[b])) / (R - 1);
  return { mean, cov };
}

function dataSet(seed: number, n: number, onLattice: boolean) {
  const r = prng(seed);
  const x: number[] = [],
    y: number[] = [],
    z: number[] = [];
  for (let i = 0; i < n; i++) {
    const a = r() * 60,
      b = r() * 60;
    x.push(onLattice ? Math.round(a) : a);
    y.push(onLattice ? Math.round(b) : b);
    z.push(50 + 10 * Math.sin(x[i] / 11) + 5 * r());
  }
  return { x, y, z };
}

function checkMoments(sampler: 'cholesky' | 'lattice', m: VariogramModel, R: number) {
  const onLattice = sampler === 'lattice';
  const { x, y, z } = dataSet(7, 25, onLattice);
  // Targets: three free points (on lattice nodes for the lattice sampler) and one on datum 3.
  const tx = [12, 30, 31, x[3]],
    ty = [40, 22, 25, y[3]];
  const ref = denseOk(x, y, z, tx, ty, m);
  const sim = createConditionalSimulator({
    x: Float64Array.from(x),
    y: Float64Array.from(y),
    z: Float64Array.from(z),
    tx: Float64Array.from(tx),
    ty: Float64Array.from(ty),
    model: m,
    neighbors: Infinity,
    sampler,
    latticeKm: 1,
  });
  expect(sim.sampler).toBe(sampler);
  const real: Float64Array[] = [];
  sim.run(2024, 0, R, (_r, v) => real.push(Float64Array.from(v)));
  expect(real.length).toBe(R);
  const { mean, cov } = moments(real, tx.length);
  for (let t = 0; t < 3; t++) {
    const s2 = ref.variance[t];
    expect(Math.abs(mean[t] - ref.est[t])).toBeLessThan(4 * Math.sqrt(s2 / R));
    expect(Math.abs(cov[t][t] - s2)).toBeLessThan(4 * s2 * Math.sqrt(2 / (R - 1)));
  }
  // Targets 1 and 2 are 3.2 km apart: strongly correlated conditional errors.
  const c12 = ref.cov[1][2];
  expect(c12).toBeGreaterThan(0.3 * Math.sqrt(ref.variance[1] * ref.variance[2]));
  expect(Math.abs(cov[1][2] - c12)).toBeLessThan(4 * Math.sqrt((ref.variance[1] * ref.variance[2] + c12 * c12) / R));
  return { real, z };
}

describe('conditional simulation reproduces the kriging moments (dense ml-matrix reference)', () => {
  it('exact sampler (Cholesky of the joint covariance), spherical with a nugget', () => {
    checkMoments('cholesky', { model: 'spherical', nugget: 2, partialSill: 10, rangeKm: 30 }, 4000);
  });
  it('exact sampler, no nugget: a target on a datum reproduces the datum in every realization', () => {
    const { real, z } = checkMoments('cholesky', { model: 'exponential', nugget: 0, partialSill: 10, rangeKm: 30 }, 2000);
    for (const v of real) expect(v[3]).toBeCloseTo(z[3], 8);
  });
  it('lattice sampler (circulant embedding) with data and targets on nodes', () => {
    const { real, z } = checkMoments('lattice', { model: 'spherical', nugget: 0, partialSill: 10, rangeKm: 25 }, 2000);
    for (const v of real) expect(v[3]).toBeCloseTo(z[3], 8);
  });
  it('measurement errors: realizations of the true field match the error-filtered kriging (dense system with eᵢ² on the diagonal)', () => {
    const m: VariogramModel = { model: 'spherical', nugget: 1, partialSill: 10, rangeKm: 30 };
    const { x, y, z } = dataSet(7, 25, false);
    const ev = x.map((_, i) => 1 + (i % 4));
    const tx = [12, 30, x[3]],
      ty = [40, 22, y[3]];
    const ref = denseOk(x, y, z, tx, ty, m, ev);
    const sim = createConditionalSimulator({
      x: Float64Array.from(x),
      y: Float64Array.from(y),
      z: Float64Array.from(z),
      tx: Float64Array.from(tx),
      ty: Float64Array.from(ty),
      model: m,
      neighbors: Infinity,
      sampler: 'cholesky',
      errorVariance: Float64Array.from(ev),
    });
    const R = 4000;
    const real: Float64Array[] = [];
    sim.run(31, 0, R, (_r, v) => real.push(Float64Array.from(v)));
    const { mean, cov } = moments(real, 3);
    for (let t = 0; t < 3; t++) {
      const s2 = ref.variance[t];
      expect(Math.abs(mean[t] - ref.est[t])).toBeLessThan(4 * Math.sqrt(s2 / R));
      expect(Math.abs(cov[t][t] - s2)).toBeLessThan(4 * s2 * Math.sqrt(2 / (R - 1)));
    }
    // On a noisy datum the true field keeps a spread (the datum is not honoured exactly).
    expect(ref.variance[2]).toBeGreaterThan(0.5);
  });
  it('same realizations whatever the split into batches (one stream per realization)', () => {
    const { x, y, z } = dataSet(3, 12, true);
    const args = {
      x: Float64Array.from(x),
      y: Float64Array.from(y),
      z: Float64Array.from(z),
      tx: Float64Array.from([5, 17, 40]),
      ty: Float64Array.from([9, 33, 2]),
      model: { model: 'spherical', nugget: 1, partialSill: 5, rangeKm: 20 } as VariogramModel,
      neighbors: 8,
      sampler: 'lattice' as const,
      latticeKm: 1,
    };
    const whole: number[][] = [],
      parts: number[][] = [];
    createConditionalSimulator(args).run(9, 0, 7, (_r, v) => whole.push([...v]));
    const s = createConditionalSimulator(args);
    for (const [a, b] of [
      [0, 3],
      [3, 4],
      [4, 7],
    ])
      s.run(9, a, b, (_r, v) => parts.push([...v]));
    expect(parts).toEqual(whole);
  });
});

/** Standard normal CDF from the Abramowitz & Stegun (1964) 26.2.17 rational approximation (|error| < 7.5e-8). */
function phiAS(x: number): number {
  const t = 1 / (1 + 0.2316419 * Math.abs(x));
  const d = 0.3989422804014327 * Math.exp((-x * x) / 2);
  const p = d * t * (0.31938153 + t * (-0.356563782 + t * (1.781477937 + t * (-1.821255978 + t * 1.330274429))));
  return x >= 0 ? 1 - p : p;
}

describe('unconditional simulation: variogram and histogram reproduction', () => {
  it('the lattice sampler reproduces the model semivariogram along a transect (mean over realizations)', () => {
    // Circulant embedding is exact in distribution when the embedding's eigenvalues are ≥ 0 (Dietrich & Newsam
    // 1997): E[(Z(x) − Z(x + h))²]/2 = γ(h). Check at lags 1..40 km on a 120-node transect, 600 realizations;
    // tolerance 4 standard errors of the across-realization mean of the transect's empirical semivariogram.
    const m: VariogramModel = { model: 'spherical', nugget: 1, partialSill: 9, rangeKm: 30 };
    const N = 120,
      R = 600;
    const sx = Float64Array.from({ length: N }, (_, i) => i),
      sy = new Float64Array(N);
    const lags = [1, 3, 6, 10, 15, 20, 30, 40];
    const per: number[][] = lags.map(() => []);
    const res = simulateUnconditional(sx, sy, m, { sampler: 'lattice', latticeKm: 1 }, 77, 0, R, (_r, v) => {
      lags.forEach((h, k) => {
        let s = 0;
        for (let i = 0; i + h < N; i++) s += (v[i] - v[i + h]) ** 2;
        per[k].push(s / (2 * (N - h)));
      });
    });
    expect(res.info.clippedSpectrumFraction).toBe(0);
    lags.forEach((h, k) => {
      const a = per[k];
      const mean = a.reduce((s, v) => s + v, 0) / R;
      const sd = Math.sqrt(a.reduce((s, v) => s + (v - mean) ** 2, 0) / (R - 1));
      expect(Math.abs(mean - semivariance(m, h))).toBeLessThan((4 * sd) / Math.sqrt(R));
    });
  });

  it('one node over many realizations is N(0, sill) (Kolmogorov–Smirnov, 1 % critical value 1.63/√R)', () => {
    const m: VariogramModel = { model: 'exponential', nugget: 0.5, partialSill: 3.5, rangeKm: 10 };
    const R = 3000;
    const vals: number[] = [];
    simulateUnconditional(Float64Array.from([0, 20]), Float64Array.from([0, 5]), m, { sampler: 'lattice', latticeKm: 1 }, 5, 0, R, (_r, v) => vals.push(v[1]));
    vals.sort((a, b) => a - b);
    const s = Math.sqrt(4);
    let D = 0;
    vals.forEach((v, i) => {
      const F = phiAS(v / s);
      D = Math.max(D, Math.abs(F - i / R), Math.abs(F - (i + 1) / R));
    });
    expect(D).toBeLessThan(1.63 / Math.sqrt(R));
  });

  it('normal scores back-transformed reproduce the reference histogram (GSLIB nscore/backtr property)', () => {
    // Deutsch & Journel (1998) §V.1.12: back-transforming standard normal values through the score table gives the
    // reference cdf at the data quantiles. Reference: a skewed sample (lognormal-like heat flows); check the
    // deciles of 4000 back-transformed simulated values at one node against the reference deciles; tolerance from
    // the binomial SE of an empirical quantile, 4·√(p(1−p)/R) in probability.
    const r = prng(11);
    const data = Array.from({ length: 300 }, () => 40 * Math.exp(0.4 * (r() + r() + r() - 1.5)));
    const ns = new NormalScoreTransform(data);
    const R = 4000;
    const back: number[] = [];
    simulateUnconditional(
      Float64Array.from([0]),
      Float64Array.from([0]),
      { model: 'spherical', nugget: 0, partialSill: 1, rangeKm: 10 },
      { sampler: 'cholesky' },
      8,
      0,
      R,
      (_r, v) => back.push(ns.backward(v[0])),
    );
    const sorted = [...data].sort((a, b) => a - b);
    for (const p of [0.1, 0.25, 0.5, 0.75, 0.9]) {
      const q = sorted[Math.round(p * (sorted.length - 1))];
      const frac = back.filter((v) => v <= q).length / R;
      expect(Math.abs(frac - p)).toBeLessThan(4 * Math.sqrt((p * (1 - p)) / R) + 1 / sorted.length);
    }
    // The data's own scores are standard normal quantiles at (i − ½)/n (Hazen plotting positions).
    expect(ns.forward(sorted[0])).toBeCloseTo(-2.935, 2); // Φ⁻¹(0.5/300), standard normal table
  });
});

describe('per-target summaries of realizations', () => {
  it('P10/P50/P90 equal d3-array quantile (type 7) and mean/sd the plain formulas, with ties and odd counts', async () => {
    const { quantile } = await import('d3-array');
    const { summarizeTargets } = await import('../../shared/interp/targetSummaries.ts');
    const r = prng(4);
    for (const R of [1, 2, 7, 200, 201]) {
      const T = 600;
      const v = new Float32Array(R * T);
      for (let i = 0; i < v.length; i++) v[i] = Math.round(r() * 40) / 4;
      const s = summarizeTargets(v, R, T);
      for (let t = 0; t < T; t += 37) {
        const a = Array.from({ length: R }, (_, k) => v[k * T + t]);
        expect(s.p10[t]).toBeCloseTo(quantile(a, 0.1)!, 5);
        expect(s.p50[t]).toBeCloseTo(quantile(a, 0.5)!, 5);
        expect(s.p90[t]).toBeCloseTo(quantile(a, 0.9)!, 5);
        const mean = a.reduce((x, y) => x + y, 0) / R;
        expect(s.mean[t]).toBeCloseTo(mean, 4);
        if (R > 1) expect(s.sd[t]).toBeCloseTo(Math.sqrt(a.reduce((x, y) => x + (y - mean) ** 2, 0) / (R - 1)), 4);
      }
    }
  });
});
