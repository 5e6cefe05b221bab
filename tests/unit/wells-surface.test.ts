import { describe, expect, it } from 'vitest';
import { compileModel, type ThermalModel } from '../../shared/thermal/index.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import type { WellInput } from '../../shared/wells/checks.ts';
import { wellModelFromCompiled } from '../../shared/wells/model-adapter.ts';
import { wellSites } from '../../shared/wells/sites.ts';

// Synthetic wells whose temperatures come from the published closed forms, not from the project's solver:
// exponential heat production (Turcotte & Schubert 2002, §4-8): T(z) = T0 + qm·z/k + (A0·hr²/k)(1 − e^(−z/hr)),
// qm = q0 − A0·hr; constant heat production (§4-6): T = T0 + q0·z/k − A·z²/(2k), q(z) = q0 − A·z.
// Units: q mW/m², A µW/m³, z km, k W/m/K → K.
const T0 = 12,
  Q0 = 65;

function well(id: string, depthsM: number[], t: (zKm: number) => number, extra: Partial<WellInput> = {}): WellInput {
  return { id, lonLat: [0, 0], measurements: depthsM.map((d) => ({ depthM: d, temperatureC: t(d / 1000), kind: 'log' as const })), flags: [], ...extra };
}
const every = (fromM: number, toM: number, stepM: number) => Array.from({ length: Math.round((toM - fromM) / stepM) + 1 }, (_, i) => fromM + i * stepM);

describe('surface heat flow from wells over a heat-producing crust (Turcotte & Schubert 2002 §4-8)', () => {
  const A0 = 2,
    hr = 10,
    k = 3;
  const published = (z: number) => T0 + ((Q0 - A0 * hr) * z) / k + ((A0 * hr * hr) / k) * (1 - Math.exp(-z / hr));
  const model: ThermalModel = {
    surfaceTemperatureC: T0,
    surfaceHeatFlowMWm2: Q0,
    layers: [{ name: 'crust', bottomKm: 40, conductivityWmK: k, heatProductionUWm3: A0, heatProductionDecayKm: hr, densityKgM3: 2700 }],
  };
  const wm = wellModelFromCompiled(compileModel(model));

  for (const [from, to] of [
    [500, 3000],
    [1000, 5000],
  ] as const) {
    it(`recovers q0 = 65 mW/m² within 0.5 mW/m² from a ${from / 1000}–${to / 1000} km well`, () => {
      const r = analyzeWell(well(`W${from}`, every(from, to, 250), published), { model: wm, surfaceTemperatureC: T0 });
      const hf = r.heatFlow!;
      // The interval value is the heat flow near mid-interval, q(z) = q0 − A0·hr·(1 − e^(−z/hr)): several mW/m² low.
      expect(hf.intervalHeatFlowMWm2).toBeLessThan(Q0 - 2);
      // Interval value + ∫₀^z_mid A dz, the correction of q0 = q(z) + ∫A dz.
      expect(Math.abs(hf.correctedIntervalMWm2 - Q0)).toBeLessThan(0.5);
      expect(hf.heatProductionCorrectionMWm2).toBeCloseTo(A0 * hr * (1 - Math.exp(-hf.intervalMidDepthM / 1000 / hr)), 9);
      // Direct fit with the model's k(T) and A(z): exact up to the fit's tolerance.
      expect(Math.abs(hf.modelFit!.heatFlowMWm2 - Q0)).toBeLessThan(0.01);
      expect(hf.surfaceMethod).toBe('model-fit');
      expect(Math.abs(hf.heatFlowMWm2 - Q0)).toBeLessThan(0.5);
      // The exported site takes q0, with the interval value and the correction beside it.
      const site = wellSites([r]).features[0].properties;
      expect(Math.abs(site.heatFlowMWm2 - Q0)).toBeLessThan(0.5);
      expect(site.intervalHeatFlowMWm2).toBeCloseTo(hf.intervalHeatFlowMWm2, 2);
      expect(site.heatProductionCorrectionMWm2).toBeCloseTo(hf.heatProductionCorrectionMWm2, 2);
    });
  }

  it('fits q0 and T0 together when the line is not anchored', () => {
    const r = analyzeWell(well('FREE', every(1000, 5000, 250), published), { model: wm, anchor: false });
    expect(r.heatFlow!.modelFit!.anchored).toBe(false);
    expect(Math.abs(r.heatFlow!.modelFit!.heatFlowMWm2 - Q0)).toBeLessThan(0.01);
    expect(Math.abs(r.heatFlow!.modelFit!.surfaceTemperatureC - T0)).toBeLessThan(0.01);
  });
});

describe('surface heat flow over a layered column (Turcotte & Schubert 2002 §4-6 then §4-8, layer by layer)', () => {
  // 0–2 km sediment, constant A1 = 1.2, k1 = 2.2; below, crust with A2 = 2.5·e^(−(z−2)/8), k2 = 3.1.
  const A1 = 1.2,
    k1 = 2.2,
    z1 = 2,
    A2 = 2.5,
    hr = 8,
    k2 = 3.1;
  const T1 = T0 + (Q0 * z1) / k1 - (A1 * z1 * z1) / (2 * k1);
  const q1 = Q0 - A1 * z1;
  const published = (z: number) =>
    z <= z1 ? T0 + (Q0 * z) / k1 - (A1 * z * z) / (2 * k1) : T1 + ((q1 - A2 * hr) * (z - z1)) / k2 + ((A2 * hr * hr) / k2) * (1 - Math.exp(-(z - z1) / hr));
  const model: ThermalModel = {
    surfaceTemperatureC: T0,
    layers: [
      { name: 'sediment', rock: 'sediment', bottomKm: z1, conductivityWmK: k1, heatProductionUWm3: A1, densityKgM3: 2400 },
      { name: 'crust', bottomKm: 40, conductivityWmK: k2, heatProductionUWm3: A2, heatProductionDecayKm: hr, densityKgM3: 2700 },
    ],
  };
  const wm = wellModelFromCompiled(compileModel(model));
  for (const [from, to] of [
    [500, 3000],
    [1000, 5000],
  ] as const) {
    it(`recovers q0 within 0.5 mW/m² from a ${from / 1000}–${to / 1000} km well`, () => {
      const r = analyzeWell(well(`L${from}`, every(from, to, 250), published), { model: wm, surfaceTemperatureC: T0 });
      expect(Math.abs(r.heatFlow!.modelFit!.heatFlowMWm2 - Q0)).toBeLessThan(0.01);
      expect(Math.abs(r.heatFlow!.heatFlowMWm2 - Q0)).toBeLessThan(0.5);
    });
  }

  it("takes A(z) from the well's own heat-production column when given (constant A, §4-6)", () => {
    // One layer, constant A = 1.5, k = 2.5, measured conductivity column: q(z_mid) + A·z_mid = q0 exactly for a
    // quadratic profile fitted by a straight line over points symmetric about the middle.
    const A = 1.5,
      k = 2.5;
    const t = (z: number) => T0 + (Q0 * z) / k - (A * z * z) / (2 * k);
    const w = well('HP', every(500, 3000, 250), t, {
      conductivityColumn: [{ topM: 0, bottomM: 4000, conductivityWmK: k }],
      heatProductionColumn: [{ topM: 0, bottomM: 4000, heatProductionUWm3: A }],
    });
    const r = analyzeWell(w, { anchor: false });
    expect(r.heatFlow!.heatProductionSource).toBe('well-column');
    expect(r.heatFlow!.heatProductionCorrectionMWm2).toBeCloseTo(A * 1.75, 9); // ∫₀^1.75 km A dz
    expect(Math.abs(r.heatFlow!.heatFlowMWm2 - Q0)).toBeLessThan(0.5);
    expect(r.heatFlow!.surfaceMethod).toBe('interval-plus-heat-production');
  });

  it('says so when no heat production is known', () => {
    const w = well('NOA', every(500, 3000, 250), (z) => T0 + (Q0 * z) / 2.5, { conductivityColumn: [{ topM: 0, bottomM: 4000, conductivityWmK: 2.5 }] });
    const r = analyzeWell(w, { surfaceTemperatureC: T0 });
    expect(r.heatFlow!.surfaceMethod).toBe('interval-uncorrected');
    expect(r.flags.some((f) => f.code === 'no-heat-production')).toBe(true);
  });
});
