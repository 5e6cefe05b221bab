import { describe, it, expect } from 'vitest';
import { CholeskyDecomposition, Matrix, solve } from 'ml-matrix';
import { KrigingPredictor } from '../../shared/interp/kriging.ts';
import { IdwPredictor } from '../../shared/interp/idw.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { crossValidateKriging, dubrule } from '../../shared/interp/crossValidation.ts';
import { prng } from '../helpers/prng.ts';

// Isaaks & Srivastava (1989), An Introduction to Applied Geostatistics, ch. 12: seven samples (x, y, value),
// target (65, 137), covariance C(h) = 10·e^(−0.3h) [checked, docs/sources.md#kriging-worked-example].
// In the practical-range convention C(h) = c·e^(−3h/a): c = 10, a = 10.
const IS = [
  [61, 139, 477],
  [63, 140, 696],
  [64, 129, 227],
  [68, 128, 646],
  [71, 140, 606],
  [73, 141, 791],
  [75, 128, 783],
];
const isX = Float64Array.from(IS, (p) => p[0]);
const isY = Float64Array.from(IS, (p) => p[1]);
const isZ = Float64Array.from(IS, (p) => p[2]);
const IS_MODEL: VariogramModel = { model: 'exponential', nugget: 0, partialSill: 10, rangeKm: 10 };

function randomPoints(n: number, seed: number, sizeKm = 50) {
  const r = prng(seed);
  const x = new Float64Array(n),
    y = new Float64Array(n),
    z = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = r() * sizeKm;
    y[i] = r() * sizeKm;
    z[i] = 60 + 15 * Math.sin(x[i] / 9) + 10 * Math.cos(y[i] / 13) + 4 * (r() - 0.5);
  }
  return { x, y, z };
}

/** Dense reference: the full (N+1)×(N+1) ordinary kriging system solved by ml-matrix (LU). */
function denseOk(x: Float64Array, y: Float64Array, z: Float64Array, ids: number[], m: VariogramModel, qx: number, qy: number, ev?: Float64Array) {
  const n = ids.length;
  const K = Matrix.zeros(n + 1, n + 1);
  const rhs = Matrix.zeros(n + 1, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const a = ids[i],
        b = ids[j];
      K.set(i, j, i === j ? m.nugget + m.partialSill + (ev ? ev[a] : 0) : covariance(m, Math.hypot(x[a] - x[b], y[a] - y[b])));
    }
    K.set(i, n, 1);
    K.set(n, i, 1);
    rhs.set(i, 0, covariance(m, Math.hypot(x[ids[i]] - qx, y[ids[i]] - qy)));
  }
  rhs.set(n, 0, 1);
  const sol = solve(K, rhs);
  let est = 0,
    lc = 0;
  for (let i = 0; i < n; i++) {
    est += sol.get(i, 0) * z[ids[i]];
    lc += sol.get(i, 0) * rhs.get(i, 0);
  }
  const mu = sol.get(n, 0);
  return { est, variance: m.nugget + m.partialSill - lc - mu, lambda: Array.from({ length: n }, (_, i) => sol.get(i, 0)) };
}

describe('ordinary kriging: Isaaks & Srivastava (1989) ch. 12 seven-sample example', () => {
  const k = new KrigingPredictor(isX, isY, isZ, IS_MODEL, { neighbors: Infinity });
  const out = new Float64Array(2);
  k.predict(65, 137, out, true);

  it('gives the printed estimate 592.73 and kriging variance 8.956', () => {
    expect(out[0]).toBeCloseTo(592.73, 2); // Isaaks & Srivastava 1989, ch. 12: 592.73
    expect(out[1] * out[1]).toBeCloseTo(8.956, 3); // Isaaks & Srivastava 1989, ch. 12: σ² = 8.956
  });

  it('gives the printed weights to four decimals', () => {
    const ids = new Int32Array(7),
      lam = new Float64Array(7);
    const { n } = k.weights(65, 137, ids, lam);
    expect(n).toBe(7);
    // Isaaks & Srivastava 1989, ch. 12, weights for samples 1..7:
    const printed = [0.1729, 0.3178, 0.1287, 0.0864, 0.1511, 0.0572, 0.0858];
    for (let i = 0; i < 7; i++) expect(lam[i]).toBeCloseTo(printed[ids[i]], 4);
    expect(lam.reduce((s, v) => s + v, 0)).toBeCloseTo(1, 12); // unbiasedness: weights sum to 1
  });

  it('IDW with p = 1 on the same data gives 593.95', () => {
    // [derived] from Shepard (1968) û = Σ d⁻¹u / Σ d⁻¹, listed in docs/sources.md#idw: 593.95
    const idw = new IdwPredictor(isX, isY, isZ, { power: 1, neighbors: Infinity });
    expect(idw.predict(65, 137)).toBeCloseTo(593.95, 2);
  });
});

describe('ordinary kriging agrees with a dense solve of the full system (ml-matrix)', () => {
  const { x, y, z } = randomPoints(120, 7);
  const models: VariogramModel[] = [
    { model: 'spherical', nugget: 2, partialSill: 80, rangeKm: 25 },
    { model: 'exponential', nugget: 0, partialSill: 80, rangeKm: 30 },
    { model: 'gaussian', nugget: 1, partialSill: 80, rangeKm: 20 },
  ];
  const r = prng(99);
  const targets = Array.from({ length: 25 }, () => [r() * 50, r() * 50]);

  for (const m of models) {
    it(`global ${m.model}: estimate and variance to 1e-9 relative`, () => {
      const k = new KrigingPredictor(x, y, z, m, { neighbors: Infinity });
      const out = new Float64Array(2);
      const all = Array.from({ length: x.length }, (_, i) => i);
      for (const [qx, qy] of targets) {
        k.predict(qx, qy, out, true);
        const d = denseOk(x, y, z, all, m, qx, qy);
        expect(Math.abs(out[0] - d.est) / Math.abs(d.est)).toBeLessThan(1e-9);
        expect(Math.abs(out[1] ** 2 - d.variance) / d.variance).toBeLessThan(1e-9);
        // The estimate-only path (one fused pass, no variance) gives the same estimate.
        k.predict(qx, qy, out, false);
        expect(Math.abs(out[0] - d.est) / Math.abs(d.est)).toBeLessThan(1e-9);
        expect(out[1]).toBeNaN();
      }
    });

    it(`local ${m.model} (16 neighbours, measurement error on the diagonal): same as the dense solve on the same set`, () => {
      const ev = Float64Array.from(x, (_, i) => (i % 3) * 0.5);
      const k = new KrigingPredictor(x, y, z, m, { neighbors: 16, errorVariance: ev });
      const out = new Float64Array(2),
        ids = new Int32Array(16),
        lam = new Float64Array(16);
      for (const [qx, qy] of targets) {
        k.predict(qx, qy, out, true);
        const { n } = k.weights(qx, qy, ids, lam);
        expect(n).toBe(16);
        const d = denseOk(x, y, z, Array.from(ids), m, qx, qy, ev);
        expect(Math.abs(out[0] - d.est) / Math.abs(d.est)).toBeLessThan(1e-9);
        expect(Math.abs(out[1] ** 2 - d.variance) / d.variance).toBeLessThan(1e-9);
        for (let i = 0; i < n; i++) expect(Math.abs(lam[i] - d.lambda[i])).toBeLessThan(1e-9);
      }
    });
  }
});

describe('ordinary kriging invariants', () => {
  const { x, y, z } = randomPoints(200, 3);
  const m: VariogramModel = { model: 'spherical', nugget: 0, partialSill: 60, rangeKm: 20 };

  it('is exact at data points with zero nugget (value and sd 0)', () => {
    const k = new KrigingPredictor(x, y, z, m, { neighbors: 16 });
    const out = new Float64Array(2);
    for (let i = 0; i < x.length; i += 7) {
      k.predict(x[i], y[i], out, true);
      expect(out[0]).toBeCloseTo(z[i], 8);
      expect(out[1]).toBeLessThan(1e-6);
    }
  });

  it('is unchanged by translating all points and targets', () => {
    const shift = (a: Float64Array, d: number) => a.map((v) => v + d);
    const k1 = new KrigingPredictor(x, y, z, m, { neighbors: 16 });
    const k2 = new KrigingPredictor(shift(x, 1234.5), shift(y, -987.25), z, m, { neighbors: 16 });
    const o1 = new Float64Array(2),
      o2 = new Float64Array(2);
    for (let t = 0; t < 30; t++) {
      const qx = 1.7 * t,
        qy = 50 - 1.3 * t;
      k1.predict(qx, qy, o1, true);
      k2.predict(qx + 1234.5, qy - 987.25, o2, true);
      expect(o2[0]).toBeCloseTo(o1[0], 7);
      expect(o2[1]).toBeCloseTo(o1[1], 7);
    }
  });

  it('caches the factorization across cells sharing a neighbour set, with the same values as a fresh solve', () => {
    const k = new KrigingPredictor(x, y, z, m, { neighbors: 16 });
    const out = new Float64Array(2),
      ref = new Float64Array(2);
    for (let c = 0; c < 200; c++) k.predict(20 + c * 0.01, 20, out, true);
    expect(k.counters.factorizations).toBeLessThan(100); // sets are shared between neighbouring cells
    const fresh = new KrigingPredictor(x, y, z, m, { neighbors: 16 });
    k.predict(21.995, 20, out, true);
    fresh.predict(21.995, 20, ref, true);
    expect(out[0]).toBeCloseTo(ref[0], 10);
    expect(out[1]).toBeCloseTo(ref[1], 10);
  });

  it('never returns NaN for a near-singular system (Gaussian model, zero nugget, nearly coincident points)', () => {
    const xs = Float64Array.from([0, 1e-7, 1, 2, 3, 0.5]);
    const ys = Float64Array.from([0, 0, 1, 0, 2, 0.5]);
    const zs = Float64Array.from([10, 11, 12, 13, 14, 15]);
    const k = new KrigingPredictor(xs, ys, zs, { model: 'gaussian', nugget: 0, partialSill: 1, rangeKm: 50 }, { neighbors: Infinity });
    const out = new Float64Array(2);
    k.predict(1.5, 0.7, out, true);
    expect(Number.isFinite(out[0])).toBe(true);
    expect(Number.isFinite(out[1])).toBe(true);
    expect(k.counters.regularized + k.counters.fallbacks).toBeGreaterThan(0); // the ill-conditioning was counted
  });
});

describe('leave-one-out cross-validation', () => {
  const { x, y, z } = randomPoints(60, 11);
  const m: VariogramModel = { model: 'exponential', nugget: 1, partialSill: 50, rangeKm: 30 };
  const ids = Array.from({ length: 60 }, (_, i) => `p${i}`);

  it('Dubrule (1983) closed form equals explicit leave-one-out global kriging', () => {
    const ev = Float64Array.from(x, (_, i) => (i % 2) * 0.3);
    const d = dubrule(x, y, z, m, ev)!;
    for (const i of [0, 13, 37, 59]) {
      const keep = Array.from({ length: 60 }, (_, j) => j).filter((j) => j !== i);
      const ref = denseOk(x, y, z, keep, m, x[i], y[i], ev);
      expect(z[i] - d.residual[i]).toBeCloseTo(ref.est, 8);
      expect(d.sd[i] ** 2).toBeCloseTo(ref.variance + ev[i], 8); // error of predicting the (noisy) observation
    }
  });

  it('reports mean error, RMSE, standardized error and MSDR, and per-point residuals', () => {
    const k = new KrigingPredictor(x, y, z, m, { neighbors: 16 });
    const cv = crossValidateKriging(ids, x, y, z, k, m, null, false);
    expect(cv.n).toBe(60);
    expect(cv.residuals[5].residual).toBeCloseTo(cv.residuals[5].observed - cv.residuals[5].predicted, 12);
    const rmse = Math.sqrt(cv.residuals.reduce((s, r) => s + r.residual ** 2, 0) / 60);
    expect(cv.rmse).toBeCloseTo(rmse, 12);
  });

  it('MSDR equals the mean of (r/σ)² from explicit leave-one-out solves (ml-matrix LU), global neighbourhood', () => {
    // Journel & Huijbregts (1978): MSDR = mean((zᵢ − ẑ₋ᵢ)²/σ²₋ᵢ); the reference solves each (N)×(N) system densely.
    const k = new KrigingPredictor(x, y, z, m, { neighbors: Infinity });
    const cv = crossValidateKriging(ids, x, y, z, k, m, null, false);
    let s = 0;
    for (let i = 0; i < 60; i++) {
      const ref = denseOk(
        x,
        y,
        z,
        Array.from({ length: 60 }, (_, j) => j).filter((j) => j !== i),
        m,
        x[i],
        y[i],
      );
      s += (z[i] - ref.est) ** 2 / ref.variance;
    }
    expect(cv.meanSquaredDeviationRatio).toBeCloseTo(s / 60, 6);
  });

  it("MSDR is near 1 when the field truly has the kriging model's covariance", () => {
    // Under the right model each leave-one-out standardized error has unit variance (Journel & Huijbregts 1978;
    // Isaaks & Srivastava 1989 ch. 15), so MSDR ≈ 1. The field: a Gaussian field with exponential covariance
    // C(h) = c0·[h = 0] + c·e^(−3h/a) (written out here, DESIGN.md §3 convention) simulated through ml-matrix's
    // Cholesky factor, 4 seeded realizations of 80 sites. The mean of 320 χ²₁-like terms (correlated within a
    // realization) has a spread of about 0.1–0.15: a wrong variance by a factor of 2 fails the bounds.
    const truth: VariogramModel = { model: 'exponential', nugget: 0.5, partialSill: 20, rangeKm: 25 };
    const cov = (h: number) => (h === 0 ? 0.5 + 20 : 20 * Math.exp((-3 * h) / 25));
    const r = prng(99);
    const n = 80;
    const px = Float64Array.from({ length: n }, () => r() * 60),
      py = Float64Array.from({ length: n }, () => r() * 60);
    const C = Matrix.zeros(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) C.set(i, j, cov(Math.hypot(px[i] - px[j], py[i] - py[j])));
    const L = new CholeskyDecomposition(C).lowerTriangularMatrix;
    const normal = () => Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r()); // Box–Muller
    const pid = Array.from({ length: n }, (_, i) => `s${i}`);
    const half: VariogramModel = { ...truth, nugget: truth.nugget / 2, partialSill: truth.partialSill / 2 };
    let sum = 0,
      sumHalf = 0;
    for (let rep = 0; rep < 4; rep++) {
      const e = Matrix.columnVector(Array.from({ length: n }, normal));
      const pz = Float64Array.from(L.mmul(e).getColumn(0), (v) => 100 + v);
      const cv = crossValidateKriging(pid, px, py, pz, new KrigingPredictor(px, py, pz, truth, { neighbors: Infinity }), truth, null, false);
      sum += cv.meanSquaredDeviationRatio ?? NaN;
      sumHalf +=
        crossValidateKriging(pid, px, py, pz, new KrigingPredictor(px, py, pz, half, { neighbors: Infinity }), half, null, false).meanSquaredDeviationRatio ??
        NaN;
    }
    const msdr = sum / 4;
    expect(msdr).toBeGreaterThan(0.7);
    expect(msdr).toBeLessThan(1.3);
    // The same fields kriged with half the true covariance: the same weights, half the variance, so twice the MSDR
    // (ordinary kriging weights do not change when the covariance is scaled), outside the bounds above.
    expect(sumHalf / 4).toBeCloseTo(2 * msdr, 6);
    expect(sumHalf / 4).toBeGreaterThan(1.3);
  });
});
