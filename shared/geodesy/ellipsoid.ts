/**
 * The WGS84 reference ellipsoid (NIMA TR8350.2, 3rd ed., 2000, Table 3.1): semi-major axis a and flattening f, and
 * the derived quantities the area formulas use.
 */
export const WGS84_A_M = 6378137;
export const WGS84_F = 1 / 298.257223563;
/** Semi-minor axis b = a(1 − f), m. */
export const WGS84_B_M = WGS84_A_M * (1 - WGS84_F);
/** First eccentricity squared e² = f(2 − f). */
export const WGS84_E2 = WGS84_F * (2 - WGS84_F);
/** First eccentricity e. */
export const WGS84_E = Math.sqrt(WGS84_E2);
