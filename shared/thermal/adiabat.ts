/**
 * The mantle adiabat below the conductive lid. The adiabatic gradient is dT/dz = α·g·T/c_p with T in kelvin
 * (Turcotte & Schubert 2002, §4-28, adiabatic compression; from memory for the section number); with α, g and c_p
 * held constant it integrates to T(z) = T_p·exp(α·g·z/c_p), T_p the potential temperature in kelvin (McKenzie &
 * Bickle 1988 define the potential temperature as the temperature the mantle would have if brought adiabatically to
 * the surface). With α = 3×10⁻⁵ K⁻¹, c_p = 1200 J/kg/K and g = 9.81 m/s², the gradient at T_p = 1330 °C is
 * 0.393 K/km, the "about 0.4 °C/km" usually quoted for the upper mantle.
 */

/** Thermal expansivity of upper-mantle peridotite, 1/K (a common figure; Turcotte & Schubert 2002 use 3×10⁻⁵). */
export const MANTLE_EXPANSIVITY_PER_K = 3e-5;
/** Isobaric heat capacity of upper-mantle peridotite, J/kg/K (common practice: 1000–1250). */
export const MANTLE_HEAT_CAPACITY_J_KG_K = 1200;

const KELVIN = 273.15;

/** Adiabat temperature (°C) at depthKm below the surface for potential temperature tpC (°C) and gravity g (m/s²). */
export function adiabatTemperatureC(tpC: number, depthKm: number, gravityMS2 = 9.81): number {
  if (!(depthKm >= 0)) return NaN;
  const c = (MANTLE_EXPANSIVITY_PER_K * gravityMS2 * 1e3) / MANTLE_HEAT_CAPACITY_J_KG_K; // per km
  return (tpC + KELVIN) * Math.exp(c * depthKm) - KELVIN;
}

/** Depth (km) at which the adiabat of potential temperature tpC reaches tC (°C); NaN when tC < tpC. */
export function adiabatDepthKm(tpC: number, tC: number, gravityMS2 = 9.81): number {
  if (!(tC >= tpC)) return NaN;
  const c = (MANTLE_EXPANSIVITY_PER_K * gravityMS2 * 1e3) / MANTLE_HEAT_CAPACITY_J_KG_K;
  return Math.log((tC + KELVIN) / (tpC + KELVIN)) / c;
}

/** Adiabatic gradient (K/km) at temperature tC (°C): α·g·T/c_p. */
export function adiabaticGradientKPerKm(tC: number, gravityMS2 = 9.81): number {
  return (MANTLE_EXPANSIVITY_PER_K * gravityMS2 * (tC + KELVIN) * 1e3) / MANTLE_HEAT_CAPACITY_J_KG_K;
}
