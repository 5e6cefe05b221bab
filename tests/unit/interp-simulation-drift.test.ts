import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { Matrix, solve } from 'ml-matrix';
import { createConditionalSimulator } from '../../shared/interp/simulation.ts';
import { simulateAtPoints } from '../../shared/interp/simulateField.ts';
import { localProjectionFor, lonLatToLocalKm } from '../../shared/interp/projection.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import type { TrendKind } from '../../shared/interp/drift.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { prng } from '../helpers/prng.ts';
import { requireGstat } from '../helpers/gstat.ts';

/**
 * Conditional simulation with a drift (docs/sources.md#conditional-simulation, #universal-kriging): the unconditional
 * field simulates the residual and the conditioning kriging is universal kriging, so with a global neighbourhood and
 * no transform the realizations at the targets have the universal-kriging estimate as mean, the universal-kriging
 * variance as variance and the universal-kriging error covariance
 *   Cov(t₁, t₂) = C(t₁, t₂) − λ₁ᵀc₂ − λ₂ᵀc₁ + λ₁ᵀCλ₂
 * between targets (Chilès & Delfiner 2012, §7.3.1). References: the bordered system [C F; Fᵀ 0] with raw monomials,
 * solved densely by ml-matrix (LU) in this file, and R gstat's krige (Debian r-cran-gstat) for the full
 * lon/lat path. Tolerances: 4 standard errors of the Monte Carlo estimators for R realizations (Gaussian sampling
 * theory): SE(mean) = σ/√R, SE(variance) = σ²·√(2/(R − 1)), SE(covariance) = √((σ₁²σ₂² + c₁₂²)/R).
 */

const monomials = (kind: TrendKind, x: number, y: number): number[] => (kind === 'none' ? [1] : kind === 'linear' ? [1, x, y] : [1, x, y, x * x, x * y, y * y]);

/** Universal-kriging weights, estimates, variances and error covariances at the targets from a dense solve. */
function denseUk(x: number[], y: number[], z: number[], tx: number[], ty: number[], m: VariogramModel, kind: TrendKind) {
  const n = x.length,
    p = monomials(kind, 0, 0).length;
  const K = Matrix.zeros(n + p, n + p);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) K.set(i, j, covariance(m, Math.hypot(x[i] - x[j], y[i] - y[j])));
    monomials(kind, x[i], y[i]).forEach((f, k) => {
      K.set(i, n + k, f);
      K.set(n + k, i, f);
    });
  }
  const lambda: number[][] = [],
    c0s: number[][] = [],
    est: number[] = [],
    variance: number[] = [];
  for (let t = 0; t < tx.length; t++) {
    const rhs = Matrix.zeros(n + p, 1);
    const c0 = x.map((xi, i) => covariance(m, Math.hypot(xi - tx[t], y[i] - ty[t])));
    c0.forEach((c, i) => rhs.set(i, 0, c));
    const f0 = monomials(kind, tx[t], ty[t]);
    f0.forEach((f, k) => rhs.set(n + k, 0, f));
    const sol = solve(K, rhs).getColumn(0);
    const l = sol.slice(0, n);
    lambda.push(l);
    c0s.push(c0);
    est.push(l.reduce((s, v, i) => s + v * z[i], 0));
    let v = m.nugget + m.partialSill - l.reduce((s, w, i) => s + w * c0[i], 0);
    for (let k = 0; k < p; k++) v -= sol[n + k] * f0[k];
    variance.push(v);
  }
  const cov = (a: number, b: number) => {
    let v = covariance(m, Math.hypot(tx[a] - tx[b], ty[a] - ty[b]));
    for (let i = 0; i < n; i++) v -= lambda[a][i] * c0s[b][i] + lambda[b][i] * c0s[a][i];
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v += lambda[a][i] * lambda[b][j] * covariance(m, Math.hypot(x[i] - x[j], y[i] - y[j]));
    return v;
  };
  return { est, variance, cov };
}

function moments(real: Float64Array[], T: number) {
  const R = real.length;
  const mean = new Array<number>(T).fill(0);
  for (const v of real) for (let t = 0; t < T; t++) mean[t] += v[t] / R;
  const cov = (a: number, b: number) => real.reduce((s, v) => s + (v[a] - mean[a]) * (v[b] - mean[b]), 0) / (R - 1);
  return { mean, cov };
}

// Invented data: 30 points over 60 × 50 km with a strong eastward gradient (0.8 per km) and a northward one.
function trendData(seed: number) {
  const r = prng(seed);
  const x: number[] = [],
    y: number[] = [],
    z: number[] = [];
  for (let i = 0; i < 30; i++) {
    x.push(r() * 60);
    y.push(r() * 50);
    z.push(40 + 0.8 * x[i] - 0.3 * y[i] + 4 * Math.sin(x[i] / 6) + 3 * r());
  }
  return { x, y, z };
}

describe('conditioning by universal kriging reproduces the universal-kriging moments (dense ml-matrix reference)', () => {
  const { x, y, z } = trendData(11);
  // Targets: two close inside points, one beyond the data (extrapolation follows the drift), one on datum 4.
  const tx = [20, 22, 75, x[4]],
    ty = [25, 27, 10, y[4]];
  /** R realizations at the targets: exact sampler, global neighbourhood, conditioned by kriging with drift `kind`. */
  const realize = (m: VariogramModel, kind: TrendKind, R: number): Float64Array[] => {
    const sim = createConditionalSimulator({
      ...{ x: Float64Array.from(x), y: Float64Array.from(y), z: Float64Array.from(z), tx: Float64Array.from(tx), ty: Float64Array.from(ty) },
      ...{ model: m, neighbors: Infinity, sampler: 'cholesky', trend: kind },
    });
    const real: Float64Array[] = [];
    sim.run(77, 0, R, (_r, v) => real.push(Float64Array.from(v)));
    return real;
  };
  for (const kind of ['linear', 'quadratic'] as const)
    it(`${kind} drift, exact sampler, global neighbourhood: mean, variance and covariance within 4 standard errors`, () => {
      const m: VariogramModel = { model: 'exponential', nugget: 0, partialSill: 12, rangeKm: 25 };
      const ref = denseUk(x, y, z, tx, ty, m, kind);
      const R = 4000;
      const real = realize(m, kind, R);
      const { mean, cov } = moments(real, tx.length);
      for (let t = 0; t < 3; t++) {
        const s2 = ref.variance[t];
        expect(Math.abs(mean[t] - ref.est[t])).toBeLessThan(4 * Math.sqrt(s2 / R));
        expect(Math.abs(cov(t, t) - s2)).toBeLessThan(4 * s2 * Math.sqrt(2 / (R - 1)));
      }
      const c01 = ref.cov(0, 1);
      expect(Math.abs(cov(0, 1) - c01)).toBeLessThan(4 * Math.sqrt((ref.variance[0] * ref.variance[1] + c01 * c01) / R));
      // Far outside the data the drift carries the mean: far from the data's mean of about 50.
      expect(ref.est[2]).toBeGreaterThan(80);
      // No nugget: the target on a datum reproduces it in every realization.
      for (const v of real) expect(v[3]).toBeCloseTo(z[4], 8);
    });

  it('ordinary-kriging conditioning of the same data does not reproduce the universal-kriging moments (the check can fail)', () => {
    const m: VariogramModel = { model: 'exponential', nugget: 0, partialSill: 12, rangeKm: 25 };
    const ref = denseUk(x, y, z, tx, ty, m, 'linear');
    const R = 2000;
    const real = realize(m, 'none', R);
    const { mean } = moments(real, tx.length);
    expect(Math.abs(mean[2] - ref.est[2])).toBeGreaterThan(10 * Math.sqrt(ref.variance[2] / R));
  });
});

// The whole path from lon/lat points (simulateAtPoints, --transform none, --trend linear, --neighbors all, a fixed
// variogram) against R gstat's universal kriging of the same points in the same local km coordinates.
describe('simulateAtPoints with a linear drift against R gstat krige (z ~ x + y)', () => {
  const n = 40;
  const r = prng(321);
  const lon = Float64Array.from({ length: n }, () => -131 + 0.8 * r());
  const lat = Float64Array.from({ length: n }, () => -41 + 0.6 * r());
  const proj = localProjectionFor(lon, lat);
  const x = new Float64Array(n),
    y = new Float64Array(n);
  lonLatToLocalKm(proj, lon, lat, x, y);
  const values = Float64Array.from(x, (xi, i) => 60 + 0.5 * xi + 0.2 * y[i] + 5 * Math.cos(y[i] / 8) + 2 * r());
  const pts: PointData = { ids: Array.from({ length: n }, (_, i) => `s${i}`), lon, lat, values };
  const targets = { ids: ['a', 'b', 'c'], lon: [-130.7, -130.4, -129.9], lat: [-40.8, -40.6, -40.2] };
  const model: VariogramModel = { model: 'spherical', nugget: 1, partialSill: 15, rangeKm: 40 };
  let dir = '';
  let ref: { pred: number[]; var: number[] } = { pred: [], var: [] };
  beforeAll(() => {
    requireGstat();
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'sim-uk-gstat-'));
    const tx = new Float64Array(3),
      ty = new Float64Array(3);
    lonLatToLocalKm(proj, targets.lon, targets.lat, tx, ty);
    writeFileSync(join(dir, 'pts.csv'), 'x,y,z\n' + Array.from(x, (xi, i) => `${xi},${y[i]},${values[i]}`).join('\n'));
    writeFileSync(join(dir, 'tg.csv'), 'x,y\n' + Array.from(tx, (v, i) => `${v},${ty[i]}`).join('\n'));
    const script = [
      'suppressMessages({library(sp); library(gstat)})',
      `p <- read.csv("${join(dir, 'pts.csv')}"); coordinates(p) <- ~x+y`,
      `t <- read.csv("${join(dir, 'tg.csv')}"); coordinates(t) <- ~x+y`,
      'k <- krige(z ~ x + y, p, t, model = vgm(15, "Sph", 40, 1), debug.level = 0)',
      'cat(sprintf("%.17g", k$var1.pred), "\\n", sprintf("%.17g", k$var1.var), "\\n")',
    ];
    writeFileSync(join(dir, 'uk.R'), script.join('\n'));
    const out = spawnSync('Rscript', [join(dir, 'uk.R')], { encoding: 'utf8' });
    if (out.status !== 0) throw new Error(`Rscript failed: ${out.stderr}`);
    const [a, b] = out.stdout.trim().split('\n');
    ref = { pred: a.trim().split(/\s+/).map(Number), var: b.trim().split(/\s+/).map(Number) };
  }, 60_000);
  afterAll(() => {
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
  });

  it('realizations: mean → gstat prediction, variance → gstat variance (4 standard errors, 3000 realizations)', () => {
    const R = 3000;
    const res = simulateAtPoints(
      pts,
      { realizations: R, seed: 5, variogram: model, transform: 'none', trend: 'linear', neighbors: 'all', crossValidation: false },
      targets,
    );
    expect(res.variogram.trend!.kind).toBe('linear');
    expect(res.sampler.method).toContain('universal kriging with a linear drift');
    expect(ref.pred).toHaveLength(3);
    for (let t = 0; t < 3; t++) {
      let s = 0,
        ss = 0;
      for (let k = 0; k < R; k++) s += res.values[k * 3 + t];
      const mean = s / R;
      for (let k = 0; k < R; k++) ss += (res.values[k * 3 + t] - mean) ** 2;
      const v = ss / (R - 1);
      // Float32 storage of the values adds at most ~1e-5 relative, far below the Monte Carlo error.
      expect(Math.abs(mean - ref.pred[t])).toBeLessThan(4 * Math.sqrt(ref.var[t] / R));
      expect(Math.abs(v - ref.var[t])).toBeLessThan(4 * ref.var[t] * Math.sqrt(2 / (R - 1)));
    }
  });
});
