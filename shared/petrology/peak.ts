/**
 * From a sample's peak P–T to its depth: depth from lithostatic pressure z = P/(ρ·g) for a uniform overburden, the
 * apparent (paleo) gradient (T − T0)/z, and the facies. A screening estimate: it assumes lithostatic pressure and
 * no tectonic overpressure.
 */
import { classifyFacies, type FaciesResult } from './facies.ts';

export interface PeakConditionsOptions {
  /** Mean overburden density, kg/m³ (default 2700, as for the thermal model). */
  densityKgM3?: number;
  /** Gravity, m/s² (default 9.81). */
  gravityMS2?: number;
  /** Surface temperature at the time, °C (default 10). */
  surfaceTemperatureC?: number;
}

export interface PeakConditions {
  depthKm: number;
  apparentGradientCPerKm: number;
  facies: FaciesResult;
}

/** Depth (km) of lithostatic pressure pressureKbar under a uniform column: z = P/(ρ g); 1 kbar = 10⁸ Pa. */
export function depthFromPressureKbar(pressureKbar: number, densityKgM3 = 2700, gravityMS2 = 9.81): number {
  if (!(pressureKbar >= 0) || !(densityKgM3 > 0) || !(gravityMS2 > 0)) return NaN;
  return (pressureKbar * 1e8) / (densityKgM3 * gravityMS2) / 1000;
}

/** Depth at peak, apparent gradient (°C/km) and facies of a peak temperature (°C) and pressure (kbar). */
export function peakConditions(peakTemperatureC: number, peakPressureKbar: number, o: PeakConditionsOptions = {}): PeakConditions {
  const depthKm = depthFromPressureKbar(peakPressureKbar, o.densityKgM3 ?? 2700, o.gravityMS2 ?? 9.81);
  const t0 = o.surfaceTemperatureC ?? 10;
  return {
    depthKm,
    apparentGradientCPerKm: depthKm > 0 ? (peakTemperatureC - t0) / depthKm : NaN,
    facies: classifyFacies(peakTemperatureC, peakPressureKbar),
  };
}
