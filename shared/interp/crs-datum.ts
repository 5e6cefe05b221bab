import { InputError } from '../errors.ts';
import { TOWGS84_CORRECTIONS } from './towgs84-table.ts';

/**
 * Datum handling of proj4 definitions before use. proj4 shifts a datum to WGS84 either with seven Helmert
 * parameters (`+towgs84`, position-vector convention, arc-seconds, ppm) or with a datum grid file (`+nadgrids`).
 * The offline EPSG definitions copy some Helmert parameters in the EPSG dataset's own convention or units; those
 * are replaced here from the generated table (see bin/generate-datum-table.mjs). Grid files are not shipped, so a
 * definition that needs one is refused: proj4 would answer NaN or, worse, skip the shift.
 */

/** `def` with its `+towgs84` restated in proj4's convention when the offline EPSG copy had it in another. */
export function correctedDatumShift(def: string): string {
  return def.replace(/\+towgs84=([^\s]+)/, (whole, params: string) => {
    const fixed = TOWGS84_CORRECTIONS[params];
    return fixed === undefined ? whole : `+towgs84=${fixed}`;
  });
}

/**
 * The grid files a proj4 definition requires (`+nadgrids=a,@b,"c d"`): entries without the `@` (optional) prefix,
 * other than `null` (no shift).
 */
export function requiredDatumGrids(def: string): string[] {
  const m = /\+nadgrids=("[^"]*"|[^\s]+)/.exec(def);
  if (!m) return [];
  return m[1]
    .replace(/^"|"$/g, '')
    .split(',')
    .map((g) => g.trim())
    .filter((g) => g !== '' && !g.startsWith('@') && g !== 'null');
}

/** Throws an InputError naming `crs` when its definition needs a datum grid file (not available offline). */
export function refuseGridShift(crs: string, def: string): void {
  const grids = requiredDatumGrids(def);
  if (grids.length === 0) return;
  throw new InputError(
    `${crs} shifts its datum to WGS84 with the grid file ${grids.join(', ')} (+nadgrids), which is not available offline, so its coordinates cannot be converted`,
    [{ field: 'crs', problem: 'datum grid file needed; give the CRS as a proj4 string with a +towgs84 datum shift instead (a few metres less accurate)' }],
    'crs_needs_datum_grid',
  );
}
