/**
 * Conversion of heat in place to thermal and electric energy and power (Muffler & Cataldi 1978; Muffler 1979, USGS
 * Circular 790; Williams, Reed & Mariner 2008, USGS OFR 2008-1296):
 *   heat in place            qR  = ρC·V·(TR − T0)
 *   recoverable (wellhead)   qWH = Rg·qR
 *   thermal power            qWH / life
 *   electric (exergy route)  ηu·W over the life, W = qWH·(W/Q) the available work of the recovered heat, with, for a
 *                            fluid of constant heat capacity cooled from TR to T0 (kelvin),
 *                            W/Q = 1 − T0·ln(TR/T0)/(TR − T0)          (the route this project reports first)
 *   electric (thermal × conversion efficiency)  ηc·qWH / life, with a user-given overall conversion efficiency ηc
 *                            (a simpler route found in many screening studies; labelled as such, never the default).
 * T0 is the reference (dead-state) temperature; ηu the utilization efficiency (about 0.4 in the sources above).
 */
import { KELVIN_OFFSET } from './column-heat.ts';

/** One Julian year, s (IAU: 365.25 days of 86 400 s). */
export const JULIAN_YEAR_S = 365.25 * 86400;

/** The reported routes, with their labels (every output names the route it uses). */
export const ROUTES = {
  exergy: {
    id: 'exergy',
    label: 'electric power, available-work (exergy) route: ηu · Rg · qR · W/Q / life, W/Q = 1 − T0·ln(TR/T0)/(TR − T0) (Williams, Reed & Mariner 2008)',
  },
  thermal: { id: 'thermal', label: 'thermal power: Rg · qR / life (heat delivered at the wellhead, no conversion)' },
  conversion: { id: 'thermal-x-conversion', label: 'electric power, thermal × conversion-efficiency route: ηc · Rg · qR / life, ηc given by the user' },
} as const;

/**
 * W/Q = 1 − T0·ln(TR/T0)/(TR − T0), temperatures in °C converted to kelvin; the fraction of heat Q, given up by a
 * constant-heat-capacity fluid cooling from TR to T0, that is available work. 0 when TR ≤ T0.
 */
export function availableWorkFraction(reservoirTempC: number, refTempC: number): number {
  const tr = reservoirTempC + KELVIN_OFFSET,
    t0 = refTempC + KELVIN_OFFSET;
  if (!(t0 > 0)) throw new RangeError(`reference temperature must be above absolute zero, got ${refTempC} °C`);
  if (!(tr > t0)) return 0;
  const d = tr - t0;
  // ln(TR/T0) = log1p(d/T0): precise when TR is close to T0.
  return 1 - (t0 * Math.log1p(d / t0)) / d;
}

/** Heat in place qR = ρC·V·(TR − Tref), J, with ρC in MJ/m³/K and V in m³. */
export function heatInPlaceJ(volumeM3: number, reservoirTempC: number, refTempC: number, rhoCMJm3K: number): number {
  return rhoCMJm3K * 1e6 * volumeM3 * (reservoirTempC - refTempC);
}

/** Average power (MW) of an energy (J) delivered over a life in years (Julian). */
export function powerMWFromEnergyJ(energyJ: number, lifeYears: number): number {
  return energyJ / (lifeYears * JULIAN_YEAR_S) / 1e6;
}
