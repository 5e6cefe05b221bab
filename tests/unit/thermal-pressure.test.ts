import { describe, expect, it } from 'vitest';
import {
  STANDARD_GRAVITY_MS2,
  assessPoreFluidFactor,
  compileModel,
  depthFromLithostaticPressure,
  effectivePressureMPa,
  hydrostaticPressureMPa,
  kbarFromMPa,
  lithostaticPressureMPa,
  poreFluidFactor,
  uniformLithostaticPressureMPa,
} from '../../shared/thermal/index.ts';

const uniform = (rho: number) =>
  compileModel({ surfaceTemperatureC: 10, layers: [{ bottomKm: 40, conductivityWmK: 3, heatProductionUWm3: 1, densityKgM3: rho }] });

describe('lithostatic pressure P = ∫ρ g dz', () => {
  it('ρ = 2700, 10 km, g = 9.81 → 264.87 MPa = 2.649 kbar (docs/sources.md#pressure-lithostatic [derived], P = ρgh)', () => {
    expect(lithostaticPressureMPa(uniform(2700), 10)).toBeCloseTo((2700 * 9.81 * 10000) / 1e6, 9);
    expect(lithostaticPressureMPa(uniform(2700), 10)).toBeCloseTo(264.87, 6);
    expect(kbarFromMPa(lithostaticPressureMPa(uniform(2700), 10))).toBeCloseTo(2.649, 3);
  });
  it('10 km of rock at 2650 kg/m³ is about 2.6 kbar (common practice)', () => {
    expect(kbarFromMPa(uniformLithostaticPressureMPa(10, 2650))).toBeCloseTo(2.6, 1);
  });
  it('sums layer densities and inverts exactly', () => {
    const cm = compileModel({
      surfaceTemperatureC: 10,
      layers: [
        { bottomKm: 2, conductivityWmK: 2, heatProductionUWm3: 1, densityKgM3: 2300 },
        { bottomKm: 20, conductivityWmK: 3, heatProductionUWm3: 1, densityKgM3: 2750 },
      ],
    });
    const p = lithostaticPressureMPa(cm, 12);
    expect(p).toBeCloseTo((2300 * 2 + 2750 * 10) * 9.81 * 1e-3, 9);
    expect(depthFromLithostaticPressure(cm, p)).toBeCloseTo(12, 9);
  });
});

describe('hydrostatic pressure, pore-fluid factor and effective pressure (Hubbert & Rubey 1959)', () => {
  it('fresh water, g = 9.80665: 9.807 kPa/m = 0.4335 psi/ft (docs/sources.md#pressure-hydrostatic [derived])', () => {
    const kPaPerM = hydrostaticPressureMPa(1, { gravityMS2: STANDARD_GRAVITY_MS2 }); // MPa per km = kPa per m
    expect(kPaPerM).toBeCloseTo(9.80665, 9);
    // 1 psi = 6.894757 kPa, 1 ft = 0.3048 m (exact definitions).
    expect((kPaPerM / 6.894757293168) * 0.3048).toBeCloseTo(0.4335, 4);
  });
  it('3 km, ρ 2500, g 9.81 → Plith 73.575, Pf 29.43, λ 0.400, effective 44.145 MPa (docs/sources.md#pore-fluid-factor [derived])', () => {
    const pl = uniformLithostaticPressureMPa(3, 2500, 9.81);
    const pf = hydrostaticPressureMPa(3);
    expect(pl).toBeCloseTo(73.575, 9);
    expect(pf).toBeCloseTo(29.43, 9);
    expect(poreFluidFactor(pf, pl)).toBeCloseTo(0.4, 9);
    expect(effectivePressureMPa(pl, pf)).toBeCloseTo(44.145, 9);
  });
  it('flags λ ≥ 0.6 as a fracturing hazard and never calls λ < 1 safe (Hubbert & Willis 1957)', () => {
    expect(assessPoreFluidFactor(0.4).warning).toBeNull();
    const e = assessPoreFluidFactor(0.65);
    expect(e.level).toBe('elevated');
    expect(e.warning).toMatch(/never a guarantee of safety/);
    expect(assessPoreFluidFactor(0.85).level).toBe('high');
    expect(assessPoreFluidFactor(1.02).level).toBe('exceeds-lithostatic');
  });
});
