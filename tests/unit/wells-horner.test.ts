import { describe, expect, it } from 'vitest';
import { Matrix, solve, inverse } from 'ml-matrix';
import { hornerFit } from '../../shared/wells/horner.ts';
import { correctMeasurements, correctBht, DEFAULT_SD_C } from '../../shared/wells/correction.ts';
import type { MeasurementInput } from '../../shared/wells/types.ts';

// Horner worked example (docs/sources.md#horner-bht, [derived] from the Horner relation T(Δt) = T∞ − C·log10[(tc + Δt)/Δt]):
// tc = 4 h, Δt = 6, 10, 16 h, BHT = 98.34, 100.62, 102.09 °C → T∞ = 105.00 °C.
const TC = 4;
const DT = [6, 10, 16];
const BHT = [98.34, 100.62, 102.09];

describe('Horner extrapolation', () => {
  it('re-derives T∞ = 105.00 °C for the worked example', () => {
    // Re-derivation: ordinary least squares of T on x = log10[(tc + Δt)/Δt] by the normal equations, solved with
    // ml-matrix (a general-purpose linear-algebra library) as the reference.
    const x = DT.map((dt) => Math.log10((TC + dt) / dt));
    const X = new Matrix(x.map((xi) => [1, xi]));
    const y = Matrix.columnVector(BHT);
    const beta = solve(X.transpose().mmul(X), X.transpose().mmul(y));
    const refIntercept = beta.get(0, 0);
    expect(refIntercept).toBeCloseTo(105.0, 2); // docs/sources.md#horner-bht worked example, to 0.01 °C
    const fit = hornerFit([TC, TC, TC], DT, BHT);
    expect(fit).not.toBeNull();
    expect(fit!.temperatureC).toBeCloseTo(refIntercept, 9);
    expect(fit!.temperatureC).toBeCloseTo(105.0, 2);
    // Slope C: the reference slope with the sign of T = T∞ − C·x.
    expect(fit!.slopeC).toBeCloseTo(-beta.get(1, 0), 9);
    expect(fit!.slopeC).toBeGreaterThan(0);
  });

  it('gives the classical standard error of the intercept, s·√[(XᵀX)⁻¹]₀₀ with s² = SSR/(n − 2)', () => {
    const x = DT.map((dt) => Math.log10((TC + dt) / dt));
    const X = new Matrix(x.map((xi) => [1, xi]));
    const fit = hornerFit([TC, TC, TC], DT, BHT)!;
    const ssr = fit.residualsC.reduce((s, r) => s + r * r, 0);
    const s2 = ssr / (3 - 2);
    const cov = inverse(X.transpose().mmul(X)).mul(s2);
    expect(fit.seTemperatureC).toBeCloseTo(Math.sqrt(cov.get(0, 0)), 10);
    // The worked example is nearly exact: SE about 0.011 °C.
    expect(fit.seTemperatureC).toBeGreaterThan(0.005);
    expect(fit.seTemperatureC).toBeLessThan(0.02);
  });

  it('recovers T∞ exactly from points on a Horner line with per-point circulation times', () => {
    const tInf = 131.5,
      c = 12.25;
    const tc = [3, 3.5, 5, 4];
    const dt = [4, 7, 12, 30];
    const t = dt.map((d, i) => tInf - c * Math.log10((tc[i] + d) / d));
    const fit = hornerFit(tc, dt, t)!;
    expect(fit.temperatureC).toBeCloseTo(tInf, 10);
    expect(fit.slopeC).toBeCloseTo(c, 10);
    expect(fit.seTemperatureC).toBeLessThan(1e-9);
  });

  it('refuses times that are not positive', () => {
    expect(() => hornerFit([4, 4, 4], [0, 10, 16], BHT)).toThrow(RangeError);
    expect(() => hornerFit([4, NaN, 4], [6, 10, 16], BHT)).toThrow(RangeError);
  });
});

describe('BHT corrections of a well', () => {
  const bht = (depthM: number, temperatureC: number, dt?: number, tc?: number): MeasurementInput => ({
    depthM,
    temperatureC,
    kind: 'bht',
    hoursSinceCirculation: dt,
    circulationHours: tc,
  });

  it('groups three timed BHTs within the 50 m tolerance into one Horner point at their mean depth', () => {
    const ms = [bht(2000, BHT[0], 6, 4), bht(2030, BHT[1], 10, 4), bht(2045, BHT[2], 16, 4), { depthM: 500, temperatureC: 30, kind: 'log' as const }];
    const r = correctMeasurements(ms, { bht: { method: 'none' } });
    expect(r.horner).toHaveLength(1);
    expect(r.horner[0].accepted).toBe(true);
    const h = r.points.find((p) => p.method === 'horner')!;
    expect(h.sources.sort()).toEqual([0, 1, 2]);
    expect(h.depthM).toBeCloseTo((2000 + 2030 + 2045) / 3, 9);
    expect(h.temperatureC).toBeCloseTo(105.0, 2); // the worked example again
    // σ = √(SE² + floor²), floor 3 °C (this project's choice).
    expect(h.sdC).toBeCloseTo(Math.hypot(r.horner[0].seTemperatureC, DEFAULT_SD_C.hornerFloor), 12);
    const log = r.points.find((p) => p.kind === 'log')!;
    expect(log.method).toBe('equilibrium');
    expect(log.sdC).toBe(DEFAULT_SD_C.log);
  });

  it('does not group BHTs farther apart than the tolerance', () => {
    const ms = [bht(2000, BHT[0], 6, 4), bht(2030, BHT[1], 10, 4), bht(2060, BHT[2], 16, 4)];
    const r = correctMeasurements(ms, { bht: { method: 'none' } });
    expect(r.horner).toHaveLength(0);
    expect(r.points.every((p) => p.method === 'none' && p.flags.includes('uncorrected-bht'))).toBe(true);
    const wide = correctMeasurements(ms, { bht: { method: 'none' }, hornerToleranceM: 60 });
    expect(wide.horner).toHaveLength(1);
  });

  it('flags a Horner set whose times are missing and applies the chosen correction instead', () => {
    const ms = [bht(2000, BHT[0], 6, 4), bht(2000, BHT[1], 10), bht(2000, BHT[2])];
    const r = correctMeasurements(ms, { bht: { method: 'offset', offsetC: 8 } });
    expect(r.horner).toHaveLength(0);
    const f = r.flags.find((x) => x.code === 'horner-times-missing');
    expect(f).toBeDefined();
    expect(f!.message).toContain('1 (circulationHours)');
    expect(f!.message).toContain('2 (circulationHours)');
    expect(r.points.map((p) => p.temperatureC)).toEqual(BHT.map((t) => t + 8));
    expect(r.points.every((p) => p.method === 'offset' && p.sdC === DEFAULT_SD_C.bhtOffset)).toBe(true);
  });

  it('rejects a Horner fit whose BHTs cool with time since circulation', () => {
    const ms = [bht(2000, BHT[2], 6, 4), bht(2000, BHT[1], 10, 4), bht(2000, BHT[0], 16, 4)];
    const r = correctMeasurements(ms, { bht: { method: 'none' } });
    expect(r.horner[0].accepted).toBe(false);
    expect(r.flags.map((f) => f.code)).toContain('horner-rejected');
    expect(r.points.filter((p) => p.used)).toHaveLength(3);
    expect(r.points.every((p) => p.method === 'none')).toBe(true);
  });

  it('marks untimed BHTs of a Horner group as superseded (reported, not fitted)', () => {
    const ms = [bht(2000, BHT[0], 6, 4), bht(2000, BHT[1], 10, 4), bht(2000, BHT[2], 16, 4), bht(2010, 97)];
    const r = correctMeasurements(ms, { bht: { method: 'none' } });
    const s = r.points.find((p) => p.sources[0] === 3)!;
    expect(s.used).toBe(false);
    expect(s.flags).toContain('superseded-by-horner');
  });

  it('applies a user polynomial ΔT = a0 + a1·z + a2·z² with z in km', () => {
    const c = { method: 'poly' as const, coefficients: [1.5, 4, -0.5], source: 'invented test coefficients' };
    // z = 2.5 km: ΔT = 1.5 + 10 − 3.125 = 8.375 °C.
    expect(correctBht(2500, 90, c).temperatureC).toBeCloseTo(98.375, 12);
    expect(correctBht(2500, 90, c).sdC).toBe(DEFAULT_SD_C.bhtPoly);
    expect(correctBht(2500, 90, { ...c, sdC: 4 }).sdC).toBe(4);
    expect(correctBht(0, 20, { method: 'none' })).toMatchObject({ temperatureC: 20, sdC: DEFAULT_SD_C.bhtNone, method: 'none' });
  });

  it('keeps exact duplicate rows out of the fit and flags repeated depths', () => {
    const ms: MeasurementInput[] = [
      { depthM: 500, temperatureC: 25, kind: 'log' },
      { depthM: 500, temperatureC: 25, kind: 'log' },
      { depthM: 500.2, temperatureC: 25.4, kind: 'log' },
      { depthM: 900, temperatureC: 37, kind: 'log' },
    ];
    const r = correctMeasurements(ms, { bht: { method: 'none' } });
    const dup = r.points.find((p) => p.sources[0] === 1)!;
    expect(dup.used).toBe(false);
    expect(dup.flags).toContain('duplicate-row');
    expect(r.flags.map((f) => f.code)).toEqual(expect.arrayContaining(['duplicate-row', 'duplicate-depth']));
    expect(r.points.find((p) => p.sources[0] === 2)!.flags).toContain('duplicate-depth');
    expect(r.points.find((p) => p.sources[0] === 3)!.flags).not.toContain('duplicate-depth');
  });
});
