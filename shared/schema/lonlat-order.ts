import { InputError } from '../errors.ts';

/**
 * One message for positions whose longitude and latitude look exchanged: some latitude lies outside [−90, 90]
 * degrees and every such position would be valid with the two exchanged. Returns null when that is not the case
 * (then the ordinary per-feature range checks apply). `where` names the position (a CSV line, a feature).
 */
export function swappedLonLatError(
  positions: Iterable<{ lon: number; lat: number; where: string }>,
  hint: string,
  fields: { lon: string; lat: string } = { lon: 'longitude', lat: 'latitude' },
): InputError | null {
  let bad = 0,
    swappable = 0;
  let first: { lon: number; lat: number; where: string } | null = null;
  for (const p of positions) {
    if (!(Number.isFinite(p.lat) && Math.abs(p.lat) > 90)) continue;
    bad++;
    if (Math.abs(p.lon) <= 90 && Math.abs(p.lat) <= 180) swappable++;
    first ??= p;
  }
  if (bad === 0 || swappable < bad || first === null) return null;
  const more = bad > 1 ? ` (and ${bad - 1} more position${bad === 2 ? '' : 's'})` : '';
  return new InputError(
    `${fields.lat} ${first.lat} at ${first.where} is outside [-90, 90] degrees${more}: longitude and latitude look swapped. ${hint}`,
    [
      {
        feature: first.where,
        field: fields.lat,
        problem: `${first.lat} is outside [-90, 90] degrees; with ${fields.lon} and ${fields.lat} exchanged every position would be valid`,
      },
    ],
    'swapped_lon_lat',
  );
}
