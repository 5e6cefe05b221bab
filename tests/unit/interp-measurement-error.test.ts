import { describe, it, expect } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { prepareInterpolation, predictAtPoints, type PointData } from '../../shared/interp/interpolate.ts';
import { simulateUnconditional } from '../../shared/interp/simulation.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { lonLatToLocalKm, localProjectionFor } from '../../shared/interp/projection.ts';
import { prng } from '../helpers/prng.ts';

/**
 * Measurement error counted once. Invented data whose errors are what they claim: a Gaussian true field
 * (spherical, partial sill 40, micro-scale nugget 4, range 60 km) plus independent errors of known sd per site.
 * The variogram of the measured values then has nugget 4 + mean error variance. Checks:
 * - leave-one-out MSDR (Journel & Huijbregts 1978: mean of (r/σ)² ≈ 1 for an honest variance) is near 1 when
 *   the kriging standardizes by kriging variance + own error variance and the nugget is split; 3 standard errors of
 *   a mean of n χ²₁ variables, 3·√(2/n);
 * - the error-filtered estimate and sd at a site equal a dense ml-matrix solve of the filtered system (data
 *   diagonal psill + micro + eᵢ², target variance psill + micro).
 */
const n = 160;
const r = prng(99);
const lon = new Float64Array(n),
  lat = new Float64Array(n);
for (let i = 0; i < n; i++) {
  lon[i] = -128 + 1.2 * r();
  lat[i] = -38 + r();
}
const micro = 4,
  psill = 40,
  range = 60;
const errSd = Float64Array.from({ length: n }, (_, i) => 2 + (4 * ((i * 7) % 5)) / 4); // 2..6
const meanEv = errSd.reduce((s, e) => s + e * e, 0) / n;
const fitted: VariogramModel = { model: 'spherical', nugget: micro + meanEv, partialSill: psill, rangeKm: range };

function data(): PointData {
  // True field at the sites from an exact unconditional simulation (invented data), plus errors.
  const x = new Float64Array(n),
    y = new Float64Array(n);
  lonLatToLocalKm(localProjectionFor(lon, lat), lon, lat, x, y);
  const values = new Float64Array(n);
  simulateUnconditional(x, y, { model: 'spherical', nugget: micro, partialSill: psill, rangeKm: range }, { sampler: 'cholesky' }, 3, 0, 1, (_r, v) =>
    values.set(v),
  );
  for (let i = 0; i < n; i++) {
    const u = r(),
      w = r();
    values[i] += 60 + errSd[i] * Math.sqrt(-2 * Math.log(u + 1e-300)) * Math.cos(2 * Math.PI * w);
  }
  return { ids: Array.from({ length: n }, (_, i) => `p${i}`), lon, lat, values, errorSd: errSd };
}
const pts = data();

describe('measurement error once: nugget split, error-filtered kriging, honest cross-validation', () => {
  it('MSDR near 1 with the split; the nugget split is reported', () => {
    const p = prepareInterpolation(pts, { method: 'kriging', neighbors: 'all', variogram: fitted, measurementError: true }, false);
    const cv = p.crossValidation!;
    expect(Math.abs(cv.meanSquaredDeviationRatio! - 1)).toBeLessThan(3 * Math.sqrt(2 / n));
    expect(p.variogram!.nuggetSplit).toMatchObject({ capped: false });
    expect(p.variogram!.nuggetSplit!.measurementErrorVariance).toBeCloseTo(meanEv, 9);
    expect(p.variogram!.nuggetSplit!.microScale).toBeCloseTo(micro, 9);
    // Without the errors the kriging treats the whole nugget as one variance for every site: the MSDR of the
    // sites with the largest errors rises above 1 (their residuals are larger than the common nugget claims).
    const plain = prepareInterpolation(pts, { method: 'kriging', neighbors: 'all', variogram: fitted }, false).crossValidation!;
    const big = (cv0: typeof cv) => {
      const rs = cv0.residuals.filter((q) => errSd[Number(q.id.slice(1))] >= 5.9);
      return rs.reduce((s, q) => s + (q.residual / q.sd!) ** 2, 0) / rs.length;
    };
    expect(big(plain)).toBeGreaterThan(big(cv));
  });

  it('claimed errors larger than the nugget: capped with a warning', () => {
    const p = prepareInterpolation(
      pts,
      { method: 'kriging', neighbors: 'all', variogram: { ...fitted, nugget: 1 }, measurementError: true, crossValidation: false },
      false,
    );
    expect(p.variogram!.nuggetSplit).toMatchObject({ measurementErrorVariance: 1, microScale: 0, capped: true });
    expect(p.warnings.join(' ')).toMatch(/claimed errors are larger than the data allow/);
  });

  it('error-filtered estimate and sd at a site equal the dense filtered system (ml-matrix)', () => {
    const p = prepareInterpolation(pts, { method: 'kriging', neighbors: 'all', variogram: fitted, measurementError: true, crossValidation: false }, false);
    const { x, y, z } = p.plan;
    const m: VariogramModel = { ...fitted, nugget: micro };
    const K = Matrix.zeros(n + 1, n + 1),
      rhs = Matrix.zeros(n + 1, 1);
    const t = 17;
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) K.set(i, j, i === j ? micro + psill + errSd[i] ** 2 : covariance(m, Math.hypot(x[i] - x[j], y[i] - y[j])));
      K.set(i, n, 1);
      K.set(n, i, 1);
      rhs.set(i, 0, i === t ? micro + psill : covariance(m, Math.hypot(x[i] - x[t], y[i] - y[t])));
    }
    rhs.set(n, 0, 1);
    const sol = solve(K, rhs).getColumn(0);
    const est = sol.slice(0, n).reduce((s, l, i) => s + l * z[i], 0);
    const v = micro + psill - sol.slice(0, n).reduce((s, l, i) => s + l * rhs.get(i, 0), 0) - sol[n];
    const res = predictAtPoints(
      pts,
      { method: 'kriging', neighbors: 'all', variogram: fitted, measurementError: true, crossValidation: false },
      { ids: ['t'], lon: [lon[t]], lat: [lat[t]] },
    );
    expect(res.predictions[0].value!).toBeCloseTo(est, 6);
    expect(res.predictions[0].sd!).toBeCloseTo(Math.sqrt(v), 6);
    // Filtering: the estimate does not honour the noisy datum and the sd at the site is > 0.
    expect(res.predictions[0].sd!).toBeGreaterThan(0.5);
  });
});
