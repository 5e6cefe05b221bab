import { describe, expect, it } from 'vitest';
import { Matrix, inverse } from 'ml-matrix';
import { fitLine } from '../../shared/wells/linear-fit.ts';
import { fitGradient, DEFAULT_ANCHOR_SD_C } from '../../shared/wells/gradient.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import { DEFAULT_CONDUCTIVITY_REL_SD } from '../../shared/wells/analyze.ts';
import type { CorrectedPoint } from '../../shared/wells/types.ts';
import type { WellInput } from '../../shared/wells/checks.ts';

const point = (depthM: number, temperatureC: number, sdC: number): CorrectedPoint => ({
  sources: [0],
  depthM,
  rawTemperatureC: temperatureC,
  temperatureC,
  sdC,
  kind: 'log',
  method: 'equilibrium',
  flags: [],
  used: true,
});

function well(id: string, ms: { depthM: number; temperatureC: number; kind?: 'log' | 'bht' | 'test' }[], extra: Partial<WellInput> = {}): WellInput {
  return { id, lonLat: [-128, -38], measurements: ms.map((m) => ({ kind: 'log' as const, ...m })), flags: [], ...extra };
}

describe('weighted straight-line fit', () => {
  it('matches the weighted normal equations solved by ml-matrix, parameters and covariance', () => {
    const x = [0.1, 0.4, 0.7, 1.1, 1.6, 2.0];
    const y = [13.1, 21.7, 31.2, 42.5, 57.9, 69.6];
    const sd = [0.5, 0.5, 1, 2, 0.5, 1];
    const X = new Matrix(x.map((xi) => [1, xi]));
    const W = Matrix.diag(sd.map((s) => 1 / (s * s)));
    const xtw = X.transpose().mmul(W);
    const cov = inverse(xtw.mmul(X));
    const beta = cov.mmul(xtw.mmul(Matrix.columnVector(y)));
    const fit = fitLine(x, y, sd, 'none')!;
    expect(fit.intercept).toBeCloseTo(beta.get(0, 0), 10);
    expect(fit.slope).toBeCloseTo(beta.get(1, 0), 10);
    expect(fit.seIntercept).toBeCloseTo(Math.sqrt(cov.get(0, 0)), 10);
    expect(fit.seSlope).toBeCloseTo(Math.sqrt(cov.get(1, 1)), 10);
    expect(fit.covInterceptSlope).toBeCloseTo(cov.get(0, 1), 10);
    // Leverage: diagonal of the weighted hat matrix W^½ X (XᵀWX)⁻¹ Xᵀ W^½; studentized residual r/(σ√(1 − h)).
    const H = X.mmul(cov).mmul(xtw);
    for (let i = 0; i < x.length; i++) {
      const r = y[i] - (beta.get(0, 0) + beta.get(1, 0) * x[i]);
      expect(fit.standardized[i]).toBeCloseTo(r / (sd[i] * Math.sqrt(1 - H.get(i, i))), 9);
    }
    // 'residual' scaling multiplies the covariance by χ²/(n − 2).
    const res = fitLine(x, y, sd, 'residual')!;
    expect(res.seSlope).toBeCloseTo(Math.sqrt(cov.get(1, 1) * (fit.chi2 / 4)), 10);
  });

  it('returns null for a single depth', () => {
    expect(fitLine([1, 1, 1], [2, 3, 4], [1, 1, 1], 'birge')).toBeNull();
    expect(fitLine([1], [2], [1], 'birge')).toBeNull();
  });
});

describe('gradient and heat flow of a well on a known linear geotherm', () => {
  // Invented synthetic well: Ts = 10 °C, q = 75 mW/m², k = 2.5 W/m/K → gradient q/k = 30 °C/km exactly
  // (Fourier's law, q = k·dT/dz; mW/m² over W/m/K is K/km). Logs every 100 m from 100 to 2000 m with a fixed,
  // zero-mean ±0.2 °C pattern as reading noise.
  const TS = 10,
    Q = 75,
    K = 2.5;
  const G = Q / K;
  const pattern = [0.2, -0.1, -0.2, 0.1, 0.15, -0.15];
  const ms = Array.from({ length: 20 }, (_, i) => {
    const z = 100 * (i + 1);
    return { depthM: z, temperatureC: TS + (G * z) / 1000 + pattern[i % pattern.length] };
  });

  it('recovers the gradient to 0.1 °C/km and the heat flow to 0.5 mW/m² with a constant conductivity', () => {
    const r = analyzeWell(well('SYN-1', ms), { surfaceTemperatureC: TS, conductivityWmK: K });
    expect(r.status).toBe('ok');
    expect(r.gradient!.gradientCPerKm).toBeCloseTo(G, 1);
    expect(Math.abs(r.gradient!.gradientCPerKm - G)).toBeLessThan(0.1);
    expect(Math.abs(r.heatFlow!.heatFlowMWm2 - Q)).toBeLessThan(0.5);
    expect(r.heatFlow!.method).toBe('gradient-conductivity');
    // σ_q/q = √((σ_g/g)² + 0.25²) with the default 25 % for one assumed conductivity.
    const rel = Math.hypot(r.gradient!.seGradientCPerKm / r.gradient!.gradientCPerKm, DEFAULT_CONDUCTIVITY_REL_SD.constant);
    expect(r.heatFlow!.uncertaintyMWm2).toBeCloseTo(r.heatFlow!.heatFlowMWm2 * rel, 9);
    expect(r.heatFlow!.quality).toBe('low'); // one assumed conductivity
    expect(r.gradient!.anchored).toBe(true);
    expect(r.row.heatFlowMWm2).toBe(r.heatFlow!.heatFlowMWm2);
    expect(r.plot.fitLine[0].temperatureC).toBeCloseTo(TS, 0);
    expect(r.plot.raw).toHaveLength(20);
  });

  it('recovers the same gradient without the surface anchor, with the intercept near Ts', () => {
    const r = analyzeWell(well('SYN-2', ms), { conductivityWmK: K });
    expect(r.gradient!.anchored).toBe(false);
    expect(Math.abs(r.gradient!.gradientCPerKm - G)).toBeLessThan(0.1);
    expect(Math.abs(r.gradient!.interceptC - TS)).toBeLessThan(0.2);
  });

  it('gives a high-quality heat flow with a measured column (Bullard = gradient method for one k)', () => {
    const r = analyzeWell(well('SYN-3', ms, { conductivityColumn: [{ topM: 0, bottomM: 2100, conductivityWmK: K }] }), { surfaceTemperatureC: TS });
    expect(r.heatFlow!.method).toBe('bullard');
    expect(Math.abs(r.heatFlow!.heatFlowMWm2 - Q)).toBeLessThan(0.5);
    expect(Math.abs(r.heatFlow!.gradientMethodMWm2 - Q)).toBeLessThan(0.5);
    expect(r.heatFlow!.quality).toBe('high');
    expect(r.conductivity!.harmonicMeanWmK).toBeCloseTo(K, 12);
  });

  it('flags an outlier (standardized residual > 3) and keeps it unless asked to exclude it', () => {
    const bad = ms.map((m) => (m.depthM === 1200 ? { ...m, temperatureC: m.temperatureC + 6 } : m));
    const kept = analyzeWell(well('SYN-4', bad), { surfaceTemperatureC: TS, conductivityWmK: K });
    const p = kept.points.find((x) => x.depthM === 1200)!;
    expect(p.flags).toContain('outlier');
    expect(p.used).toBe(true);
    expect(kept.flags.map((f) => f.code)).toContain('outlier');
    const dropped = analyzeWell(well('SYN-5', bad), { surfaceTemperatureC: TS, conductivityWmK: K, outliers: 'exclude' });
    const q = dropped.points.find((x) => x.depthM === 1200)!;
    expect(q.flags).toContain('outlier-excluded');
    expect(q.used).toBe(false);
    expect(Math.abs(dropped.gradient!.gradientCPerKm - G)).toBeLessThan(0.1);
    expect(dropped.gradient!.nPoints).toBe(19);
    // The excluded point is still in the plot data.
    expect(dropped.plot.corrected.find((x) => x.depthM === 1200)!.used).toBe(false);
  });

  it('uses the anchor as a weighted pseudo-point: a one-point well gets the line through it, flagged', () => {
    const pts = [point(1000, 40, 0.5)];
    const g = fitGradient(pts, { surfaceTemperatureC: 10 })!;
    expect(g.gradientCPerKm).toBeCloseTo(30, 12);
    expect(g.anchorSdC).toBe(DEFAULT_ANCHOR_SD_C);
    // Unscaled error of a two-point line: √(σ0² + σ1²)/Δz = √(4 + 0.25)/1 km.
    expect(g.seGradientCPerKm).toBeCloseTo(Math.sqrt(DEFAULT_ANCHOR_SD_C ** 2 + 0.25), 12);
    expect(g.flags.map((f) => f.code)).toContain('single-measurement');
  });
});
