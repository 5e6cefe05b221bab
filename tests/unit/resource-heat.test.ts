import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import {
  ColumnHeatScratch,
  DEFAULT_WINDOW,
  JULIAN_YEAR_S,
  ROUTES,
  availableWorkFraction,
  buildHeatTable,
  columnHeat,
  emptyColumnHeat,
  exergyIntegral,
  gaussLegendre,
  heatInPlaceJ,
  lookupHeatTable,
  powerMWFromEnergyJ,
} from '../../shared/resource/index.ts';
import { ColumnState, compileModel, nominalModel } from '../../shared/thermal/index.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';

const demo = parseThermalModel(JSON.parse(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8')));

describe('worked example of the volumetric method (docs/sources.md#heat-in-place, derived from Williams, Reed & Mariner 2008)', () => {
  // V = 1 km³, TR = 200 °C, T0 = 15 °C, ρC = 2.7 MJ/m³/K (Muffler & Cataldi 1978 qR = ρC·V·(TR − T0)).
  const qR = heatInPlaceJ(1e9, 200, 15, 2.7);
  it('heat in place qR = 4.995e17 J', () => {
    // Re-derived: 2.7e6 J/m³/K × 1e9 m³ × 185 K = 4.995e17 J.
    expect(qR).toBeCloseTo(2.7e6 * 1e9 * 185, -3);
    expect(qR / 4.995e17).toBeCloseTo(1, 12);
  });
  it('thermal route: Rg = 0.1 over 30 Julian years → 52.76 MWt', () => {
    expect(JULIAN_YEAR_S * 30).toBe(30 * 365.25 * 86400);
    // Re-derived: 4.995e16 J / 946,728,000 s = 52.761 MW.
    expect(powerMWFromEnergyJ(0.1 * qR, 30)).toBeCloseTo(52.76, 2);
    expect(ROUTES.thermal.label).toMatch(/thermal power/);
  });
  it('exergy route: W/Q = 1 − T0·ln(TR/T0)/(TR − T0) = 0.22755 → 4.80 MWe with ηu = 0.4', () => {
    // Re-derived in kelvin: 1 − 288.15·ln(473.15/288.15)/185 = 0.227546.
    const wq = availableWorkFraction(200, 15);
    expect(wq).toBeCloseTo(1 - (288.15 * Math.log(473.15 / 288.15)) / 185, 12);
    expect(wq).toBeCloseTo(0.22755, 5);
    expect(0.4 * wq * powerMWFromEnergyJ(0.1 * qR, 30)).toBeCloseTo(4.8, 2);
    expect(ROUTES.exergy.label).toMatch(/exergy/);
    expect(ROUTES.conversion.label).toMatch(/conversion/);
    expect(availableWorkFraction(15, 15)).toBe(0);
  });
  it('the column form X/G equals W/Q of the mean reservoir temperature', () => {
    // A 1000 m column whose ∫(T − Tref)dz = 185 K × 1000 m has mean TR = 200 °C.
    expect(exergyIntegral(185_000, 1000, 288.15) / 185_000).toBeCloseTo(availableWorkFraction(200, 15), 12);
    // Tiny excess temperature: the series branch agrees with the direct form.
    expect(exergyIntegral(1e-3, 1000, 288.15)).toBeCloseTo(1e-3 ** 2 / (2 * 1000 * 288.15), 18);
  });
});

describe('Gauss–Legendre rule (Abramowitz & Stegun 1964, §25.4.29)', () => {
  it('has the tabulated 5-point nodes and integrates degree 2n − 1 exactly', () => {
    const r = gaussLegendre(5);
    // A&S Table 25.4: ±0.906179845938664, ±0.538469310105683, 0; weights 0.236926885056189, 0.478628670499366, 0.568888888888889.
    expect(r.x[4]).toBeCloseTo(0.906179845938664, 14);
    expect(r.x[3]).toBeCloseTo(0.538469310105683, 14);
    expect(r.w[2]).toBeCloseTo(0.568888888888889, 14);
    expect(r.w[4]).toBeCloseTo(0.236926885056189, 14);
    const g = gaussLegendre(10);
    let s = 0;
    for (let i = 0; i < 10; i++) s += g.w[i] * g.x[i] ** 18;
    expect(s).toBeCloseTo(2 / 19, 14);
  });
});

describe('column heat against closed forms', () => {
  const window = { ...DEFAULT_WINDOW };
  it('linear geotherm (k constant, A = 0): ∫(T − Tref) dz in closed form', () => {
    // T = T0 + q·z/k (Turcotte & Schubert 2002 §4-6 with A = 0): T0 15, q 90 mW/m², k 2.5 → 36 K/km; Tmin 150 °C at
    // z* = 135/36 = 3.75 km; G = 1000·[(T0 − Tref)(zb − z*) + q/(2k)(zb² − z*²)] = 628,875 K·m, h = 3250 m.
    const cm = compileModel(
      { surfaceTemperatureC: 15, layers: [{ bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2700 }] },
      { maxDepthKm: 7 },
    );
    const st = new ColumnState(1),
      out = emptyColumnHeat();
    columnHeat(cm, 90, 15, window, st, new ColumnHeatScratch(), out);
    expect(out.heatKm).toBeCloseTo(628_875, 6);
    expect(out.thicknessM).toBeCloseTo(3250, 9);
    // Mean reservoir temperature 208.5 °C, the mean of a linear profile from 150 to 267 °C.
    expect(15 + out.heatKm / out.thicknessM).toBeCloseTo(208.5, 9);
    // Available work integrated over the profile: X = ∫[(T − T0) − T0·ln(T/T0)] dz (kelvin) = [F(Tb) − F(Ta)]/γ with
    // F(u) = u²/2 − T0·u·ln(u/T0) (antiderivative in u), γ = 0.036 K/m, Ta = 150 °C, Tb = 267 °C.
    const t0 = 288.15,
      tr = 208.5 + 273.15;
    const F = (u: number) => (u * u) / 2 - t0 * u * Math.log(u / t0);
    expect(out.exergyKm).toBeCloseTo((F(267 + 273.15) - F(150 + 273.15)) / 0.036, 4);
    // From the mean temperature instead the value is lower (the integrand is convex in T).
    expect(out.exergyKm).toBeGreaterThan(3250 * (tr - t0 - t0 * Math.log(tr / t0)));
  });

  it('constant heat production, two layers: closed form per layer', () => {
    // Layer 1 (0–5 km): T = T0 + q0·z/k1 − A·z²/(2k1) (Turcotte & Schubert 2002 §4-6); layer 2 continues with the
    // flow q0 − A·5 km and k2. Integral of each quadratic in closed form.
    const k1 = 2.5,
      k2 = 3.2,
      A = 1.5,
      q0 = 95,
      T0 = 12;
    const cm = compileModel(
      {
        surfaceTemperatureC: T0,
        layers: [
          { bottomKm: 5, conductivityWmK: k1, heatProductionUWm3: A, densityKgM3: 2700 },
          { bottomKm: 30, conductivityWmK: k2, heatProductionUWm3: 0, densityKgM3: 2800 },
        ],
      },
      { maxDepthKm: 7 },
    );
    const T1 = (z: number) => T0 + (q0 * z) / k1 - (A * z * z) / (2 * k1);
    const q5 = q0 - A * 5,
      T5 = T1(5);
    const T2 = (z: number) => T5 + (q5 * (z - 5)) / k2;
    // Root of T1 = 150 in layer 1: z = [q0 − √(q0² − 2Ak(T − T0))]/A (Turcotte & Schubert §4-6).
    const zs = (q0 - Math.sqrt(q0 * q0 - 2 * A * k1 * (150 - T0))) / A;
    expect(zs).toBeGreaterThan(3);
    expect(zs).toBeLessThan(5);
    const I1 = (z: number) => (T0 - 15) * z + (q0 * z * z) / (2 * k1) - (A * z ** 3) / (6 * k1);
    const I2 = (z: number) => (T5 - 15) * (z - 5) + (q5 * (z - 5) ** 2) / (2 * k2);
    const G = 1000 * (I1(5) - I1(zs) + I2(7));
    const st = new ColumnState(2),
      out = emptyColumnHeat();
    columnHeat(cm, q0, T0, window, st, new ColumnHeatScratch(), out);
    expect(T2(7)).toBeGreaterThan(150);
    expect(out.heatKm / G).toBeCloseTo(1, 12);
    expect(out.thicknessM).toBeCloseTo((7 - zs) * 1000, 6);
  });

  it('no heat when Tmin is not reached, and Tmin above the window counts the whole window', () => {
    const cm = compileModel({ surfaceTemperatureC: 15, layers: [{ bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 0 }] }, { maxDepthKm: 7 });
    const st = new ColumnState(1),
      out = emptyColumnHeat(),
      sc = new ColumnHeatScratch();
    columnHeat(cm, 40, 15, window, st, sc, out); // 16 K/km: 127 °C at 7 km
    expect(out.heatKm).toBe(0);
    expect(out.thicknessM).toBe(0);
    columnHeat(cm, 200, 15, window, st, sc, out); // 80 K/km: 255 °C at 3 km
    expect(out.thicknessM).toBeCloseTo(4000, 9);
    // ∫3..7 of 80·z dz = 40·(49 − 9) = 1600 K·km.
    expect(out.heatKm).toBeCloseTo(1_600_000, 6);
  });

  it('quadrature error on the k(T), exponential-A demo model is below 1e-12 of the integral', () => {
    // Bound against the same rule on 256 sub-intervals per piece (a much finer rule).
    const cm = compileModel(nominalModel(demo), { maxDepthKm: 7 });
    const st = new ColumnState(cm.nLayers),
      a = emptyColumnHeat(),
      b = emptyColumnHeat();
    const coarse = new ColumnHeatScratch(),
      fine = new ColumnHeatScratch(10, 256);
    let worst = 0;
    for (let q = 55; q <= 140; q += 5) {
      columnHeat(cm, q, 12, window, st, coarse, a);
      columnHeat(cm, q, 12, window, st, fine, b);
      if (b.heatKm > 0) worst = Math.max(worst, Math.abs(a.heatKm - b.heatKm) / b.heatKm);
    }
    expect(worst).toBeLessThan(1e-12);
    // A layer boundary inside the window (5 km in this two-layer model) is a kink handled as a piece end.
    const two = compileModel(
      {
        surfaceTemperatureC: 10,
        layers: [
          { bottomKm: 5, conductivityWmK: 2.2, conductivityTempCoeffPerK: 0.0015, heatProductionUWm3: 2.5, heatProductionDecayKm: 8 },
          { bottomKm: 40, conductivityWmK: 3.1, conductivityTempCoeffPerK: 0.001, heatProductionUWm3: 0.5 },
        ],
      },
      { maxDepthKm: 7 },
    );
    const s2 = new ColumnState(2);
    columnHeat(two, 100, 10, window, s2, coarse, a);
    columnHeat(two, 100, 10, window, s2, fine, b);
    expect(b.heatKm).toBeGreaterThan(0);
    expect(Math.abs(a.heatKm - b.heatKm) / b.heatKm).toBeLessThan(1e-12);
  });
});

describe('heat-flow table (one per realization)', () => {
  it('interpolates G, X and h within 1e-7 of the largest value, across the kinks', () => {
    const cm = compileModel(nominalModel(demo), { maxDepthKm: 7 });
    const st = new ColumnState(cm.nLayers),
      sc = new ColumnHeatScratch(),
      ch = emptyColumnHeat();
    const t = buildHeatTable(cm, 12, DEFAULT_WINDOW, 20, 200, st, sc);
    // Kinks where the 150 °C isotherm crosses 7 km and 3 km are segment ends.
    expect(t.ends.length).toBeGreaterThanOrEqual(4);
    const o = new Float64Array(3);
    let eG = 0,
      eX = 0,
      eH = 0,
      mG = 0,
      mX = 0;
    for (let i = 0; i <= 5000; i++) {
      const q = 20 + (180 * i) / 5000;
      expect(lookupHeatTable(t, q, o)).toBe(true);
      columnHeat(cm, q, 12, DEFAULT_WINDOW, st, sc, ch);
      eG = Math.max(eG, Math.abs(o[0] - ch.heatKm));
      eX = Math.max(eX, Math.abs(o[1] - ch.exergyKm));
      eH = Math.max(eH, Math.abs(o[2] - ch.thicknessM));
      mG = Math.max(mG, ch.heatKm);
      mX = Math.max(mX, ch.exergyKm);
    }
    expect(eG / mG).toBeLessThan(1e-7);
    expect(eX / mX).toBeLessThan(1e-7);
    expect(eH / 4000).toBeLessThan(1e-7);
    expect(lookupHeatTable(t, 250, o)).toBe(false);
  });
});

describe('percentiles by selection (Hyndman & Fan type 7)', () => {
  it('equal d3-array quantile (the R-7 method) on random samples with ties', async () => {
    const { quantile } = await import('d3-array');
    const { createStream } = await import('../../shared/random/index.ts');
    const { percentilesBySelection } = await import('../../shared/resource/index.ts');
    const rng = createStream(3, 0);
    const out = new Float64Array(3);
    for (const n of [1, 2, 3, 10, 11, 500, 501]) {
      const v = Float64Array.from({ length: n }, () => Math.round(rng.uniform() * 50) / 5);
      const ref = [0.1, 0.5, 0.9].map((p) => quantile(Array.from(v), p)!);
      percentilesBySelection(v, n, [0.1, 0.5, 0.9], out);
      for (let i = 0; i < 3; i++) expect(out[i]).toBeCloseTo(ref[i], 12);
    }
  });
});
