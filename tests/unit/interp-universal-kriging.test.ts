import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { Matrix, solve } from 'ml-matrix';
import { KrigingPredictor } from '../../shared/interp/kriging.ts';
import { BlockKriging, discretisePolygon } from '../../shared/interp/blockKriging.ts';
import { crossValidateKriging } from '../../shared/interp/crossValidation.ts';
import { driftFrame, type TrendKind } from '../../shared/interp/drift.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { prepareInterpolation, predictAtPoints, type PointData } from '../../shared/interp/interpolate.ts';
import { simulateUnconditional } from '../../shared/interp/simulation.ts';
import { lonLatToLocalKm, localProjectionFor } from '../../shared/interp/projection.ts';
import { prng } from '../helpers/prng.ts';
import { requireGstat } from '../helpers/gstat.ts';

// Universal kriging (Matheron 1969; Goovaerts 1997 §5.3, "kriging with a trend model";
// docs/sources.md#universal-kriging) checked two ways, both outside the project: (1) the bordered system
// [C F; Fᵀ 0]·[λ; μ] = [c₀; f₀] with
// raw monomials 1, x, y[, x², xy, y²], solved densely by ml-matrix's LU in this file; (2) R's gstat (Debian
// r-cran-gstat; Pebesma 2004), krige() with formula z ~ x + y [+ I(x^2) + I(x*y) + I(y^2)] and krige.cv().

const N = 60;
function trendField(seed: number) {
  const r = prng(seed);
  const x = new Float64Array(N),
    y = new Float64Array(N),
    z = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    x[i] = r() * 80;
    y[i] = r() * 60;
    z[i] = 50 + 0.4 * x[i] - 0.25 * y[i] + 0.004 * x[i] * y[i] + 6 * Math.sin(x[i] / 7) * Math.cos(y[i] / 9) + 2 * (r() - 0.5);
  }
  return { x, y, z };
}
const DATA = trendField(1234);
const MODEL: VariogramModel = { model: 'exponential', nugget: 1.5, partialSill: 20, rangeKm: 30 };
const TARGETS: [number, number][] = [
  [10, 10],
  [40, 30],
  [75, 55],
  [-5, 20], // outside the points: extrapolation follows the drift
  [DATA.x[7], DATA.y[7]], // on a datum
];

function monomials(kind: TrendKind, x: number, y: number): number[] {
  if (kind === 'none') return [1];
  if (kind === 'linear') return [1, x, y];
  return [1, x, y, x * x, x * y, y * y];
}

/** The dense bordered universal-kriging system over the points `ids`, solved by ml-matrix (LU). */
function denseUk(ids: number[], kind: TrendKind, qx: number, qy: number) {
  const n = ids.length,
    p = monomials(kind, 0, 0).length;
  const K = Matrix.zeros(n + p, n + p);
  const rhs = Matrix.zeros(n + p, 1);
  const { x, y } = DATA;
  for (let i = 0; i < n; i++) {
    const a = ids[i];
    for (let j = 0; j < n; j++) {
      const b = ids[j];
      K.set(i, j, i === j ? MODEL.nugget + MODEL.partialSill : covariance(MODEL, Math.hypot(x[a] - x[b], y[a] - y[b])));
    }
    const f = monomials(kind, x[a], y[a]);
    for (let k = 0; k < p; k++) {
      K.set(i, n + k, f[k]);
      K.set(n + k, i, f[k]);
    }
    rhs.set(i, 0, covariance(MODEL, Math.hypot(x[a] - qx, y[a] - qy)));
  }
  const f0 = monomials(kind, qx, qy);
  for (let k = 0; k < p; k++) rhs.set(n + k, 0, f0[k]);
  const sol = solve(K, rhs);
  let est = 0,
    v = MODEL.nugget + MODEL.partialSill;
  for (let i = 0; i < n; i++) {
    est += sol.get(i, 0) * DATA.z[ids[i]];
    v -= sol.get(i, 0) * rhs.get(i, 0);
  }
  for (let k = 0; k < p; k++) v -= sol.get(n + k, 0) * f0[k];
  return { est, variance: v };
}

function nearestIds(qx: number, qy: number, k: number): number[] {
  return Array.from({ length: N }, (_, i) => i)
    .sort((a, b) => Math.hypot(DATA.x[a] - qx, DATA.y[a] - qy) - Math.hypot(DATA.x[b] - qx, DATA.y[b] - qy))
    .slice(0, k);
}

function ours(kind: TrendKind, neighbors: number) {
  const k = new KrigingPredictor(DATA.x, DATA.y, DATA.z, MODEL, { neighbors, drift: driftFrame(kind, DATA.x, DATA.y) });
  const out = new Float64Array(2);
  return TARGETS.map(([qx, qy]) => {
    k.predict(qx, qy, out, true);
    return { est: out[0], variance: out[1] * out[1] };
  });
}

describe('universal kriging against a dense bordered solve (ml-matrix LU)', () => {
  for (const kind of ['linear', 'quadratic'] as const) {
    it(`${kind} drift, global neighbourhood: estimate and variance to 1e-9 relative`, () => {
      const got = ours(kind, Infinity);
      TARGETS.forEach(([qx, qy], t) => {
        const ref = denseUk(
          Array.from({ length: N }, (_, i) => i),
          kind,
          qx,
          qy,
        );
        expect(Math.abs(got[t].est - ref.est)).toBeLessThan(1e-9 * Math.abs(ref.est));
        expect(Math.abs(got[t].variance - ref.variance)).toBeLessThan(1e-9 * (MODEL.nugget + MODEL.partialSill));
      });
    });
    it(`${kind} drift, 16 nearest neighbours: estimate and variance to 1e-9 relative`, () => {
      const got = ours(kind, 16);
      TARGETS.forEach(([qx, qy], t) => {
        const ref = denseUk(nearestIds(qx, qy, 16), kind, qx, qy);
        expect(Math.abs(got[t].est - ref.est)).toBeLessThan(1e-9 * Math.abs(ref.est));
        expect(Math.abs(got[t].variance - ref.variance)).toBeLessThan(1e-9 * (MODEL.nugget + MODEL.partialSill));
      });
    });
  }

  it('a linear drift reproduces an exactly linear field with zero error wherever it predicts', () => {
    // Unbiasedness constraints Σλᵢfⱼ(xᵢ) = fⱼ(x₀) (Goovaerts 1997 eq. 5.24) make the estimate of a pure drift exact.
    const zLin = Float64Array.from(DATA.x, (xi, i) => 3 + 0.7 * xi - 1.1 * DATA.y[i]);
    const k = new KrigingPredictor(DATA.x, DATA.y, zLin, MODEL, { neighbors: 12, drift: driftFrame('linear', DATA.x, DATA.y) });
    const out = new Float64Array(2);
    for (const [qx, qy] of TARGETS) {
      k.predict(qx, qy, out, false);
      expect(out[0]).toBeCloseTo(3 + 0.7 * qx - 1.1 * qy, 9);
    }
  });
});

// R gstat: the same points, model vgm(20, "Exp", 30/3, 1.5) (gstat's exponential range is a third of the practical
// range), universal kriging with the drift as formula terms.
describe('universal kriging against R gstat (krige, krige.cv)', () => {
  let dir = '';
  const ref: Record<string, { pred: number[]; var: number[] }> = {};
  const cvRef: Record<string, number[]> = {};
  const formula: Record<string, string> = { linear: 'z ~ x + y', quadratic: 'z ~ x + y + I(x^2) + I(x*y) + I(y^2)' };
  beforeAll(() => {
    requireGstat();
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'uk-gstat-'));
    writeFileSync(join(dir, 'pts.csv'), 'x,y,z\n' + Array.from(DATA.x, (xi, i) => `${xi},${DATA.y[i]},${DATA.z[i]}`).join('\n'));
    writeFileSync(join(dir, 'tg.csv'), 'x,y\n' + TARGETS.map((t) => t.join(',')).join('\n'));
    const lines = [
      'suppressMessages({library(sp); library(gstat)})',
      `p <- read.csv("${join(dir, 'pts.csv')}"); coordinates(p) <- ~x+y`,
      `t <- read.csv("${join(dir, 'tg.csv')}"); coordinates(t) <- ~x+y`,
      'm <- vgm(20, "Exp", 10, 1.5)',
      'options(digits = 17)',
    ];
    for (const kind of ['linear', 'quadratic'])
      for (const nmax of ['Inf', '16']) {
        lines.push(`k <- krige(${formula[kind]}, p, t, model = m, nmax = ${nmax}, debug.level = 0)`);
        lines.push(`cat("${kind}-${nmax}", sprintf("%.17g", k$var1.pred), sprintf("%.17g", k$var1.var), "\\n")`);
      }
    for (const kind of ['linear', 'quadratic']) {
      lines.push(`cv <- krige.cv(${formula[kind]}, p, model = m, nfold = nrow(p), verbose = FALSE, debug.level = 0)`);
      lines.push(`cat("cv-${kind}", sprintf("%.17g", cv$residual), "\\n")`);
    }
    writeFileSync(join(dir, 'uk.R'), lines.join('\n'));
    const out = spawnSync('Rscript', [join(dir, 'uk.R')], { encoding: 'utf8' });
    if (out.status !== 0) throw new Error(`Rscript failed: ${out.stderr}`);
    for (const line of out.stdout.trim().split('\n')) {
      const [key, ...nums] = line.trim().split(/\s+/);
      const v = nums.map(Number);
      if (key.startsWith('cv-')) cvRef[key.slice(3)] = v;
      else ref[key] = { pred: v.slice(0, TARGETS.length), var: v.slice(TARGETS.length) };
    }
  }, 60_000);
  afterAll(() => {
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
  });

  for (const kind of ['linear', 'quadratic'] as const)
    for (const [nmax, neighbors] of [
      ['Inf', Infinity],
      ['16', 16],
    ] as const)
      it(`${kind} drift, nmax = ${nmax}: predictions and variances agree to 1e-9`, () => {
        const got = ours(kind, neighbors);
        const r = ref[`${kind}-${nmax}`];
        expect(r.pred).toHaveLength(TARGETS.length);
        got.forEach((g, t) => {
          expect(Math.abs(g.est - r.pred[t])).toBeLessThan(1e-9 * Math.abs(r.pred[t]));
          expect(Math.abs(g.variance - r.var[t])).toBeLessThan(1e-9 * (MODEL.nugget + MODEL.partialSill));
        });
      });

  for (const kind of ['linear', 'quadratic'] as const)
    it(`${kind} drift: leave-one-out residuals (Dubrule's closed form) equal gstat's krige.cv`, () => {
      const k = new KrigingPredictor(DATA.x, DATA.y, DATA.z, MODEL, { neighbors: Infinity, drift: driftFrame(kind, DATA.x, DATA.y) });
      const ids = Array.from({ length: N }, (_, i) => `p${i}`);
      const cv = crossValidateKriging(ids, DATA.x, DATA.y, DATA.z, k, MODEL, null, false, Infinity, driftFrame(kind, DATA.x, DATA.y));
      expect(cvRef[kind]).toHaveLength(N);
      cv.residuals.forEach((r, i) => expect(Math.abs(r.residual - cvRef[kind][i])).toBeLessThan(1e-8));
    });
});

// The library entry points with a trend: invented data (a stationary Gaussian field, exponential, sill 30, range
// 40 km, from an exact Cholesky simulation, plus a strong linear drift of 0.5 mW/m² per km eastward).
describe('prepareInterpolation / predictAtPoints with a trend', () => {
  const n = 150;
  const r = prng(77);
  const lon = Float64Array.from({ length: n }, () => -131 + 1.6 * r());
  const lat = Float64Array.from({ length: n }, () => -41 + 1.2 * r());
  const proj = localProjectionFor(lon, lat);
  const x = new Float64Array(n),
    y = new Float64Array(n);
  lonLatToLocalKm(proj, lon, lat, x, y);
  const values = new Float64Array(n);
  simulateUnconditional(x, y, { model: 'exponential', nugget: 1, partialSill: 30, rangeKm: 40 }, { sampler: 'cholesky' }, 5, 0, 1, (_r, v) => values.set(v));
  for (let i = 0; i < n; i++) values[i] += 70 + 0.5 * x[i];
  const pts: PointData = { ids: Array.from({ length: n }, (_, i) => `s${i}`), lon, lat, values };

  it('--trend auto picks a drift by leave-one-out RMSE and reports every candidate side by side', () => {
    const p = prepareInterpolation(pts, { method: 'kriging', neighbors: 'all', trend: 'auto' }, false);
    const t = p.variogram!.trend!;
    expect(t.selectedBy).toBe('cross-validation');
    expect(t.candidates!.map((c) => c.kind)).toEqual(['none', 'linear', 'quadratic']);
    const rmses = t.candidates!.map((c) => c.cvRmse!);
    expect(t.kind).not.toBe('none');
    expect(p.crossValidation!.rmse).toBe(Math.min(...rmses));
    // The OLS gradient of the chosen drift recovers the invented 0.5 per km eastward: coefficient of u times 1/scale.
    expect(t.ols!.coefficients[1] / t.ols!.scaleKm).toBeGreaterThan(0.3);
    expect(t.ols!.coefficients[1] / t.ols!.scaleKm).toBeLessThan(0.7);
    expect(t.ols!.explainedVarianceFraction).toBeGreaterThan(0.5);
  });

  it('a fixed variogram with a linear drift and anisotropy equals a dense bordered solve in the rotated coordinates', () => {
    const model: VariogramModel = { model: 'spherical', nugget: 2, partialSill: 25, rangeKm: 50 };
    const aniso = { angleDeg: 30, ratio: 0.5 };
    const targets = { ids: ['a', 'b'], lon: [-130.4, -129.6], lat: [-40.5, -40.1] };
    const got = predictAtPoints(pts, { method: 'kriging', neighbors: 'all', variogram: model, anisotropy: aniso, trend: 'linear' }, targets);
    // Independent: rotate/stretch with Isaaks & Srivastava (1989, ch. 16) written out here, drift in raw local km.
    const th = (aniso.angleDeg * Math.PI) / 180;
    const map = (px: number, py: number): [number, number] => [Math.sin(th) * px + Math.cos(th) * py, (Math.cos(th) * px - Math.sin(th) * py) / aniso.ratio];
    const tx = new Float64Array(2),
      ty = new Float64Array(2);
    lonLatToLocalKm(proj, targets.lon, targets.lat, tx, ty);
    for (let t = 0; t < 2; t++) {
      const K = Matrix.zeros(n + 3, n + 3),
        rhs = Matrix.zeros(n + 3, 1);
      const q = map(tx[t], ty[t]);
      for (let i = 0; i < n; i++) {
        const a = map(x[i], y[i]);
        for (let j = 0; j < n; j++) {
          const b = map(x[j], y[j]);
          K.set(i, j, i === j ? 27 : covariance(model, Math.hypot(a[0] - b[0], a[1] - b[1])));
        }
        [1, x[i], y[i]].forEach((f, k) => {
          K.set(i, n + k, f);
          K.set(n + k, i, f);
        });
        rhs.set(i, 0, covariance(model, Math.hypot(a[0] - q[0], a[1] - q[1])));
      }
      [1, tx[t], ty[t]].forEach((f, k) => rhs.set(n + k, 0, f));
      const sol = solve(K, rhs);
      let est = 0,
        v = 27;
      for (let i = 0; i < n; i++) {
        est += sol.get(i, 0) * values[i];
        v -= sol.get(i, 0) * rhs.get(i, 0);
      }
      for (let k = 0; k < 3; k++) v -= sol.get(n + k, 0) * rhs.get(n + k, 0);
      expect(Math.abs(got.predictions[t].value! - est)).toBeLessThan(1e-8 * Math.abs(est));
      expect(Math.abs(got.predictions[t].sd! ** 2 - v)).toBeLessThan(1e-8 * 27);
    }
  });

  it('a quadratic drift on too few points is a clear error naming the trend', () => {
    const few: PointData = { ids: ['a', 'b', 'c', 'd', 'e', 'f', 'g'], lon: lon.slice(0, 7), lat: lat.slice(0, 7), values: values.slice(0, 7) };
    expect(() =>
      prepareInterpolation(few, { method: 'kriging', trend: 'quadratic', variogram: { model: 'exponential', nugget: 0, partialSill: 1, rangeKm: 10 } }, false),
    ).toThrow(/quadratic trend has 6 coefficients and needs at least 8 distinct points, got 7/);
  });
});

// Universal block kriging (Journel & Huijbregts 1978 §V.A.2 with the drift rows of Goovaerts 1997 §5.3): checked
// against the same dense bordered system with block-averaged covariances and monomials, solved by ml-matrix.
describe('universal block kriging of the mean over a polygon', () => {
  for (const kind of ['linear', 'quadratic'] as const)
    it(`${kind} drift: block mean and variance equal a dense bordered solve; the mean is the mean of point estimates`, () => {
      const ring = [
        [20, 15],
        [55, 18],
        [50, 45],
        [25, 40],
        [20, 15],
      ];
      const d = discretisePolygon([ring])!;
      const bk = new BlockKriging(DATA.x, DATA.y, DATA.z, MODEL, null, null, kind);
      const e = bk.estimate(d);
      const p = monomials(kind, 0, 0).length,
        N2 = d.x.length;
      const K = Matrix.zeros(N + p, N + p),
        rhs = Matrix.zeros(N + p, 1);
      for (let i = 0; i < N; i++) {
        for (let j = 0; j < N; j++)
          K.set(i, j, i === j ? MODEL.nugget + MODEL.partialSill : covariance(MODEL, Math.hypot(DATA.x[i] - DATA.x[j], DATA.y[i] - DATA.y[j])));
        monomials(kind, DATA.x[i], DATA.y[i]).forEach((f, k) => {
          K.set(i, N + k, f);
          K.set(N + k, i, f);
        });
        let c = 0;
        for (let k = 0; k < N2; k++) c += covariance(MODEL, Math.hypot(DATA.x[i] - d.x[k], DATA.y[i] - d.y[k])) / N2;
        rhs.set(i, 0, c);
      }
      const fbar = new Array<number>(p).fill(0);
      for (let k = 0; k < N2; k++) monomials(kind, d.x[k], d.y[k]).forEach((f, j) => (fbar[j] += f / N2));
      fbar.forEach((f, j) => rhs.set(N + j, 0, f));
      let cvv = 0;
      for (let k = 0; k < N2; k++) for (let l = 0; l < N2; l++) cvv += covariance(MODEL, Math.hypot(d.x[k] - d.x[l], d.y[k] - d.y[l])) / (N2 * N2);
      const sol = solve(K, rhs);
      let est = 0,
        v = cvv;
      for (let i = 0; i < N; i++) {
        est += sol.get(i, 0) * DATA.z[i];
        v -= sol.get(i, 0) * rhs.get(i, 0);
      }
      for (let j = 0; j < p; j++) v -= sol.get(N + j, 0) * fbar[j];
      expect(Math.abs(e.value - est)).toBeLessThan(1e-9 * Math.abs(est));
      expect(Math.abs(e.sd * e.sd - v)).toBeLessThan(1e-9 * MODEL.partialSill);
      // Linearity of the estimator: the block estimate is the mean of the point estimates at the discretisation.
      const k = new KrigingPredictor(DATA.x, DATA.y, DATA.z, MODEL, { neighbors: Infinity, drift: driftFrame(kind, DATA.x, DATA.y) });
      const out = new Float64Array(2);
      let mean = 0;
      for (let i = 0; i < N2; i++) {
        k.predict(d.x[i], d.y[i], out, false);
        mean += out[0] / N2;
      }
      expect(Math.abs(e.value - mean)).toBeLessThan(1e-9 * Math.abs(mean));
    });
});
