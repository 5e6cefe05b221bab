/**
 * `--directions A1,A2,…`, `--angle-tolerance DEG` and `--bandwidth-km KM`: the direction classes of the directional
 * semivariograms `--anisotropy auto` is estimated from (shared/interp/directional-variogram.ts), read by every verb
 * that krigs or simulates a point field. Checked against the run request's schema (shared/schema/interp.ts
 * `directionsSchema`), with errors naming the flag, the value and the limit.
 */
import type { z } from 'zod';
import { InputError } from '../../shared/errors.ts';
import { textOptions } from './args.ts';
import { directionsSchema } from '../../shared/schema/interp.ts';
import { DIRECTIONS_NEED_AUTO, directionsWithoutAuto } from '../../shared/interp/anisotropy-select.ts';
import type { DirectionChoice } from '../../shared/interp/directional-variogram.ts';

/** parseArgs options (each verb spreads them into its table). */
export const DIRECTION_OPTIONS = textOptions('directions angle-tolerance bandwidth-km');

export const DIRECTION_HELP = `  --directions A1,A2,…       with --anisotropy auto: azimuths of the directional semivariograms, degrees
                             clockwise from north, each 0 ≤ A < 180, distinct, 2 to 36 (default 0,45,90,135)
  --angle-tolerance DEG      half-width of each direction class in angle, (0, 90] (default 90 / directions)
  --bandwidth-km KM          largest distance of a pair's lag from its direction's line (default none)
`;

const shape = directionsSchema.shape;
const FLAG = { azimuthsDeg: 'directions', toleranceDeg: 'angle-tolerance', bandwidthKm: 'bandwidth-km' } as const;

/** One flag's value checked against its schema; the error names the flag, the value given and what is allowed. */
function checked<S extends z.ZodType>(schema: S, key: keyof typeof FLAG, raw: string, value: unknown, expected: string): z.output<S> {
  const r = schema.safeParse(value);
  if (r.success) return r.data;
  const why = r.error.issues.map((i) => i.message).join('; ');
  throw new InputError(`--${FLAG[key]} ${raw}: ${why}`, [{ field: FLAG[key], problem: `expected ${expected}` }], 'bad_option');
}

/**
 * The direction classes from the flags, or undefined when none is given. `anisotropy` is the parsed
 * `--anisotropy`: the flags need `auto` (nothing else reads them).
 */
export function directionsOption(
  a: { directions?: string; 'angle-tolerance'?: string; 'bandwidth-km'?: string },
  anisotropy: unknown,
): DirectionChoice | undefined {
  const raw = { azimuthsDeg: a.directions, toleranceDeg: a['angle-tolerance'], bandwidthKm: a['bandwidth-km'] };
  if (raw.azimuthsDeg === undefined && raw.toleranceDeg === undefined && raw.bandwidthKm === undefined) return undefined;
  const num = (s: string) => (s.trim() === '' ? NaN : Number(s));
  const d: DirectionChoice = {};
  if (raw.azimuthsDeg !== undefined)
    d.azimuthsDeg = checked(
      shape.azimuthsDeg,
      'azimuthsDeg',
      raw.azimuthsDeg,
      raw.azimuthsDeg.split(',').map(num),
      '2 to 36 distinct azimuths A1,A2,… in degrees clockwise from north, 0 ≤ A < 180',
    );
  if (raw.toleranceDeg !== undefined)
    d.toleranceDeg = checked(shape.toleranceDeg, 'toleranceDeg', raw.toleranceDeg, num(raw.toleranceDeg), 'degrees in (0, 90]');
  if (raw.bandwidthKm !== undefined)
    d.bandwidthKm = checked(shape.bandwidthKm, 'bandwidthKm', raw.bandwidthKm, num(raw.bandwidthKm), 'km > 0 (at most 100000)');
  const stray = directionsWithoutAuto(anisotropy, d);
  if (stray.length > 0)
    throw new InputError(
      `${stray.map((k) => `--${FLAG[k]}`).join(', ')} without --anisotropy auto: ${DIRECTIONS_NEED_AUTO}`,
      stray.map((k) => ({ field: FLAG[k], problem: 'needs --anisotropy auto' })),
      'bad_option',
    );
  return d;
}
