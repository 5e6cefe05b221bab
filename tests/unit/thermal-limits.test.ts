import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import {
  ColumnState,
  adiabatTemperatureC,
  adiabaticGradientKPerKm,
  columnLimits,
  columnProfile,
  compileModel,
  limitedIsothermDepth,
  limitedTemperature,
  nominalModel,
  solveColumn,
  type ThermalModel,
} from '../../shared/thermal/index.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';

const G = 9.81;

/** A linear conductive geotherm (A = 0, constant k): T = T0 + q0·z/k (Turcotte & Schubert 2002, eq. 4-28 form). */
function linearModel(rock: ThermalModel['layers'][0]['rock'], density: number): ThermalModel {
  return { surfaceTemperatureC: 10, layers: [{ name: 'slab', rock, bottomKm: 60, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: density }] };
}

function solved(m: ThermalModel, q0: number, maxDepthKm = 60) {
  const cm = compileModel(m, { maxDepthKm });
  const st = new ColumnState(cm.nLayers);
  solveColumn(cm, q0, m.surfaceTemperatureC, st);
  return { cm, st, lim: columnLimits(cm, st, maxDepthKm) };
}

describe('melt onset at the solidus of the rock it is in', () => {
  it('felsic crust: the fluid-absent biotite-melting curve, 780 °C (Le Breton & Thompson 1988, 760–800 °C at 10 kbar)', () => {
    // T = 10 + 100·z/2.5 = 10 + 40·z reaches 780 °C at z = 770/40 = 19.25 km.
    const { cm, st, lim } = solved(linearModel('felsic-crust', 2700), 100);
    expect(lim.meltOnsetKm).toBeCloseTo(19.25, 5);
    expect(lim.endReason).toBe('melt-onset');
    // No temperature is valid below it; above it the conductive value stands.
    expect(limitedTemperature(cm, st, lim, 19)).toBeCloseTo(770, 9);
    for (const z of [19.3, 20, 35, 60]) expect(Number.isNaN(limitedTemperature(cm, st, lim, z))).toBe(true);
    expect(Number.isNaN(limitedIsothermDepth(cm, st, lim, 900, 60))).toBe(true);
    // The water-saturated granite solidus (Huang & Wyllie 1973: 680 °C at 2 kbar) is crossed first: at 2 kbar
    // (200 MPa = 2700·9.81·z·1e-3 → z = 7.55 km) T = 312 °C < 680, and at 680 °C (z = 16.75 km, 4.44 kbar) the curve
    // lies between 680 and 620 °C, so the crossing is between 15 and 16.75 km.
    expect(lim.wetSolidusKm).toBeGreaterThan(15);
    expect(lim.wetSolidusKm).toBeLessThan(16.75);
    expect(lim.wetSolidusKm).toBeLessThan(lim.meltOnsetKm);
  });

  it('mafic crust: the dry basalt curve, T = 1100 + 10 °C/kbar·P (after Yoder & Tilley 1962, from memory)', () => {
    // 10 + 40z = 1100 + 0.1·(2900·9.81·z·1e-3) → z = 1090 / (40 − 0.1·28.449).
    const { lim } = solved(linearModel('mafic-crust', 2900), 100);
    expect(lim.meltOnsetKm).toBeCloseTo(1090 / (40 - 0.1 * 2.9 * G), 5);
  });

  it('applies each curve only in its own rock: felsic over mafic crust', () => {
    // Same geotherm; 0–15 km mafic (dry basalt far hotter), 15–60 km felsic: melt onset where T first reaches 780 °C
    // in the felsic layer, not in the mafic one above (which is below 780 °C anyway) nor by a mantle curve.
    const m: ThermalModel = {
      surfaceTemperatureC: 10,
      layers: [
        { name: 'gabbro', rock: 'mafic-crust', bottomKm: 15, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2900 },
        { name: 'granite', rock: 'felsic-crust', bottomKm: 60, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2700 },
      ],
    };
    const hot = solved(m, 160); // T = 10 + 64z: 780 °C at 12.03 km inside the gabbro, where it does not apply
    expect(hot.lim.meltOnsetKm).toBeCloseTo(15, 5); // the first felsic depth is already above 780 °C
    expect(hot.lim.meltOnsetLayer).toBe(1);
    // The same hot geotherm in a mantle-only column: only the dry peridotite curve (Hirschmann 2000) applies.
    const mantleOnly = solved({ ...m, layers: [{ ...m.layers[0], rock: 'mantle', bottomKm: 60, densityKgM3: 3300 }] }, 160);
    expect(mantleOnly.lim.meltOnsetKm).toBeGreaterThan(15);
  });
});

describe('the mantle adiabat below the conductive lid', () => {
  const crustMantle = (q0: number, tp?: number): ThermalModel => ({
    surfaceTemperatureC: 10,
    surfaceHeatFlowMWm2: q0,
    ...(tp === undefined ? {} : { mantlePotentialTemperatureC: tp }),
    layers: [
      { name: 'crust', rock: 'mafic-crust', bottomKm: 30, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2900 },
      { name: 'mantle', rock: 'mantle', bottomKm: 200, conductivityWmK: 3, heatProductionUWm3: 0, densityKgM3: 3300 },
    ],
  });
  const P = (z: number) => (z <= 30 ? 2900 * G * z : 2900 * G * 30 + 3300 * G * (z - 30)) * 1e-3; // ρ·g·h, MPa

  it('has a gradient of about 0.4 °C/km at 1330 °C: αgT/c_p (Turcotte & Schubert 2002, §4-28, from memory)', () => {
    // 3e-5 · 9.81 · 1603.15 K / 1200 J/kg/K = 3.93e-4 K/m.
    expect(adiabaticGradientKPerKm(1330)).toBeCloseTo((3e-5 * 9.81 * 1603.15 * 1e3) / 1200, 10);
    expect(adiabaticGradientKPerKm(1330)).toBeGreaterThan(0.35);
    expect(adiabaticGradientKPerKm(1330)).toBeLessThan(0.45);
    // T(z) = T_p·exp(αgz/c_p) in kelvin: at 100 km, 1603.15·e^(0.024525) − 273.15.
    expect(adiabatTemperatureC(1330, 100)).toBeCloseTo(1603.15 * Math.exp(0.024525) - 273.15, 9);
  });

  it('meets the conductive geotherm at the lithosphere base and is never exceeded below it', () => {
    // Conductive: T = 10 + 40·z/2.5 in the crust (16 K/km, 490 °C at 30 km), then 490 + 40·(z − 30)/3 in the mantle.
    const q0 = 40;
    const { cm, st, lim } = solved(crustMantle(q0), q0, 200);
    const cond = (z: number) => 490 + (40 * (z - 30)) / 3;
    const adiabat = (z: number) => 1603.15 * Math.exp((3e-5 * 9.81 * 1e3 * z) / 1200) - 273.15;
    let lo = 30,
      hi = 200;
    for (let i = 0; i < 200; i++) {
      const m = 0.5 * (lo + hi);
      if (cond(m) < adiabat(m)) lo = m;
      else hi = m;
    }
    expect(lim.lithosphereBaseKm).toBeCloseTo(lo, 5);
    for (let z = 30; z <= 200; z += 0.5) {
      const t = limitedTemperature(cm, st, lim, z);
      if (Number.isFinite(t)) expect(t).toBeLessThanOrEqual(adiabat(z) + 1e-9);
    }
    expect(limitedTemperature(cm, st, lim, 150)).toBeCloseTo(adiabat(150), 9);
    // Isotherms below the base come from the adiabat: 1400 °C where the adiabat reaches it.
    const z1400 = (Math.log((1400 + 273.15) / 1603.15) * 1200) / (3e-5 * 9.81 * 1e3);
    expect(limitedIsothermDepth(cm, st, lim, 1400, 200)).toBeCloseTo(z1400, 6);
  });

  it('says where the adiabat is above the dry peridotite solidus (Hirschmann 2000), and melts a thin lid there', () => {
    // Depth where 1330 °C adiabat = −5.104P² + 132.899P + 1120.661 (P in GPa, ρgh).
    const hir = (z: number) => {
      const p = P(z) / 1000;
      return -5.104 * p * p + 132.899 * p + 1120.661;
    };
    const adiabat = (z: number) => 1603.15 * Math.exp((3e-5 * 9.81 * 1e3 * z) / 1200) - 273.15;
    let lo = 30,
      hi = 200;
    for (let i = 0; i < 200; i++) {
      const m = 0.5 * (lo + hi);
      if (adiabat(m) > hir(m)) lo = m;
      else hi = m;
    }
    const cold = solved(crustMantle(40), 40, 200);
    expect(cold.lim.adiabatAboveDrySolidusToKm).toBeCloseTo(lo, 5);
    expect(cold.lim.lithosphereBaseKm).toBeGreaterThan(lo); // a thick lid: no decompression melting
    expect(Number.isNaN(cold.lim.meltOnsetKm)).toBe(true);
    // A hot column whose lid ends above that depth reaches the dry solidus at or above the lithosphere base: the
    // conductive geotherm 910 + 25·(z − 30) °C (T0 10, q0 75, k 2.5 then 3) meets Hirschmann's curve first.
    const hot = solved(crustMantle(75), 75, 200);
    expect(hot.lim.lithosphereBaseKm).toBeLessThan(lo);
    expect(hot.lim.meltOnsetKm).toBeLessThanOrEqual(hot.lim.lithosphereBaseKm);
    lo = 30;
    hi = 60;
    for (let i = 0; i < 200; i++) {
      const m = 0.5 * (lo + hi);
      if (910 + 25 * (m - 30) < hir(m)) lo = m;
      else hi = m;
    }
    expect(hot.lim.meltOnsetKm).toBeCloseTo(lo, 5);
    expect(Number.isNaN(limitedTemperature(hot.cm, hot.st, hot.lim, hot.lim.meltOnsetKm + 0.01))).toBe(true);
  });

  it('takes mantlePotentialTemperatureC from the model', () => {
    const a = solved(crustMantle(40, 1280), 40, 200);
    const b = solved(crustMantle(40), 40, 200);
    expect(a.lim.mantlePotentialTemperatureC).toBe(1280);
    expect(b.lim.mantlePotentialTemperatureC).toBe(1330);
    expect(a.lim.lithosphereBaseKm).toBeLessThan(b.lim.lithosphereBaseKm);
  });
});

describe('the demo model at 110 mW/m²', () => {
  it('gives no temperature below the melt onset, which is in the crust and flagged', () => {
    const model = parseThermalModel(JSON.parse(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8')));
    const cm = compileModel(nominalModel(model), { maxDepthKm: 60 });
    const p = columnProfile(cm, { heatFlowMWm2: 110, stepKm: 0.5, maxDepthKm: 60 });
    expect(p.limits.meltOnsetKm).toBeLessThan(35); // inside the crust (Moho at 35 km)
    expect(p.limits.endReason).toBe('melt-onset');
    for (let j = 0; j < p.depthKm.length; j++) {
      if (p.depthKm[j] > p.limits.meltOnsetKm) expect(Number.isNaN(p.temperatureC[j])).toBe(true);
    }
    expect(p.warnings.some((w) => w.startsWith('melt onset at'))).toBe(true);
  });
});
