/**
 * Published empirical corrections of bottom-hole temperatures (BHTs) for wells whose BHTs cannot be Horner-
 * extrapolated. Each was calibrated on one basin's data: outside its depth range it is extrapolation, and the
 * caller flags it.
 */

/** One published empirical BHT correction. */
export interface EmpiricalBhtMethod {
  /** Short name used on the command line and in reports. */
  name: 'harrison1983' | 'waples2004';
  source: string;
  /** Depths (m below ground or sea floor) of the data the correction was calibrated on. */
  calibratedDepthM: [number, number];
  /** True when the correction needs the hours since circulation and the surface temperature. */
  needsTime: boolean;
}

export const EMPIRICAL_BHT: Record<EmpiricalBhtMethod['name'], EmpiricalBhtMethod> = {
  harrison1983: {
    name: 'harrison1983',
    source:
      'Harrison, Luza, Prater & Cheung (1983), Oklahoma Geological Survey Special Publication 83-1: ΔT = −16.51213476 + 0.01826842109·z − 2.344936959×10⁻⁶·z² (°C, z in m; from memory)',
    calibratedDepthM: [1000, 3900],
    needsTime: false,
  },
  waples2004: {
    name: 'waples2004',
    source:
      "Waples, Pacheco & Vera (2004), Petroleum Geoscience 10, 239–245: T = Ts + f·(BHT − Ts) − 0.001391·(z − 4498), f = 1.32866 − 0.005289·TSC (°C, z in m below ground or sea floor, TSC hours since circulation; calibrated on wells 3500–6500 m deep) [coefficients checked against the paper's abstract; the full text could not be reached: docs/sources.md#bht-empirical]",
    calibratedDepthM: [3500, 6500],
    needsTime: true,
  },
};

/** Harrison et al. (1983) correction ΔT (°C) to add to a BHT at depthM (m below ground). See EMPIRICAL_BHT. */
export function harrisonCorrectionC(depthM: number): number {
  return -16.51213476 + 0.01826842109 * depthM - 2.344936959e-6 * depthM * depthM;
}

/**
 * Formation temperature (°C) from a log-derived BHT by Waples, Pacheco & Vera (2004): the BHT's excess over the
 * surface temperature is scaled by f = 1.32866 − 0.005289·TSC (TSC in hours since the end of circulation), then
 * a small depth term −0.001391·(z − 4498) (z m below ground or sea floor) is added. The linear factor and the depth
 * term are those of the paper's abstract (the full text could not be reached: docs/sources.md#bht-empirical), which gives
 * them for its calibration depths, 3500–6500 m: outside that range both are extrapolated and the caller flags it.
 * (A logarithmic factor of TSC belongs, as far as could be told, to other calibrations, not to this paper's.)
 * See EMPIRICAL_BHT.
 */
export function waplesTemperatureC(bhtC: number, surfaceTemperatureC: number, hoursSinceCirculation: number, depthM: number): number {
  const f = 1.32866 - 0.005289 * hoursSinceCirculation;
  return surfaceTemperatureC + f * (bhtC - surfaceTemperatureC) - 0.001391 * (depthM - 4498);
}
