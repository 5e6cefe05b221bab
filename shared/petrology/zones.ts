/**
 * The Barrovian index-mineral zones of pelitic rocks in order of increasing grade: chlorite < biotite < garnet <
 * staurolite < kyanite < sillimanite (order: standard; e.g. Yardley 1989). Isograd temperatures are approximate
 * values at about 6–8 kbar, from memory (not checked against one text), and vary with bulk composition and pressure.
 */
import { nearestName, normalizeName } from './edit-distance.ts';

/** One zone of a grade scale. */
export interface GradeZone<Name extends string> {
  name: Name;
  /** 0 (lowest grade) … the scale's last. */
  rank: number;
  /**
   * Approximate temperature range of the isograd that opens this zone, °C; null for the lowest (chlorite) zone and
   * where no temperature decides it.
   */
  isogradTemperatureC: { min: number; max: number } | null;
}

export type IndexMineralZone = GradeZone<'chlorite' | 'biotite' | 'garnet' | 'staurolite' | 'kyanite' | 'sillimanite'>;

export const INDEX_MINERAL_ZONES: readonly IndexMineralZone[] = Object.freeze([
  { name: 'chlorite', rank: 0, isogradTemperatureC: null },
  { name: 'biotite', rank: 1, isogradTemperatureC: { min: 400, max: 450 } },
  { name: 'garnet', rank: 2, isogradTemperatureC: { min: 480, max: 520 } },
  { name: 'staurolite', rank: 3, isogradTemperatureC: { min: 550, max: 600 } },
  { name: 'kyanite', rank: 4, isogradTemperatureC: { min: 600, max: 650 } },
  { name: 'sillimanite', rank: 5, isogradTemperatureC: { min: 650, max: 700 } },
]);

export const ZONE_NAMES: readonly IndexMineralZone['name'][] = INDEX_MINERAL_ZONES.map((z) => z.name);

/** Rank (0–5) of a zone name (case- and space-insensitive; "garnet zone" accepted), or −1 when unknown. */
export function zoneRank(name: string): number {
  return rankOn(ZONE_NAMES, name);
}

/** Index of a zone name (normalized, a trailing "zone" dropped) among a scale's names, or −1. */
function rankOn(names: readonly string[], name: string): number {
  return names.indexOf(normalizeName(name).replace(/-zone$/, ''));
}

/** The zone of a name, or null. */
export function zoneByName(name: string): IndexMineralZone | null {
  const r = zoneRank(name);
  return r < 0 ? null : INDEX_MINERAL_ZONES[r];
}

/** Compares two zones by grade: negative when a is lower grade than b. Throws on unknown names. */
export function compareZones(a: string, b: string): number {
  const ra = zoneRank(a),
    rb = zoneRank(b);
  if (ra < 0 || rb < 0) throw new RangeError(`unknown zone "${ra < 0 ? a : b}"`);
  return ra - rb;
}

/** The valid zone name nearest to an unknown one (edit distance), e.g. "staurolit" → "staurolite"; null if none close. */
export function suggestZoneName(name: string): string | null {
  return nearestName(name.replace(/\s*zone$/i, ''), ALL_ZONE_NAMES);
}

/** Approximate midpoint temperature (°C) of the isograd opening a zone; null for chlorite or unknown names. */
export function isogradTemperatureC(name: string): number | null {
  const z = zoneByName(name);
  return z?.isogradTemperatureC ? (z.isogradTemperatureC.min + z.isogradTemperatureC.max) / 2 : null;
}

/**
 * The andalusite-bearing low-pressure series (aluminosilicate path below the triple point), on its own scale:
 * chlorite < biotite < cordierite < andalusite < sillimanite (order: standard for low-pressure pelites, e.g. Yardley
 * 1989 ch. 3; zone temperatures at about 2–3.5 kbar are approximate values from memory). Sillimanite on this scale
 * is decided by the andalusite = sillimanite line, not by a temperature.
 */
export type LowPressureZone = GradeZone<'chlorite' | 'biotite' | 'cordierite' | 'andalusite' | 'sillimanite'>;

export const LOW_PRESSURE_ZONES: readonly LowPressureZone[] = Object.freeze([
  { name: 'chlorite', rank: 0, isogradTemperatureC: null },
  { name: 'biotite', rank: 1, isogradTemperatureC: { min: 400, max: 450 } },
  { name: 'cordierite', rank: 2, isogradTemperatureC: { min: 480, max: 530 } },
  { name: 'andalusite', rank: 3, isogradTemperatureC: { min: 530, max: 580 } },
  { name: 'sillimanite', rank: 4, isogradTemperatureC: null },
]);

export const LOW_PRESSURE_ZONE_NAMES: readonly LowPressureZone['name'][] = LOW_PRESSURE_ZONES.map((z) => z.name);

/** Rank (0–4) of a zone name on the low-pressure scale, or −1. */
export function lowPressureZoneRank(name: string): number {
  return rankOn(LOW_PRESSURE_ZONE_NAMES, name);
}

/** Every zone name the program accepts (both scales), for suggestions. */
export const ALL_ZONE_NAMES: readonly string[] = [...new Set([...ZONE_NAMES, ...LOW_PRESSURE_ZONE_NAMES])];

/** Checks a zone name against both scales: null when valid, else the problem text with the nearest valid name. */
export function zoneNameProblem(zone: string): string | null {
  if (zoneRank(zone) >= 0 || lowPressureZoneRank(zone) >= 0) return null;
  const hint = suggestZoneName(zone);
  return `unknown zone '${zone}'${hint !== null ? ` (did you mean '${hint}'?)` : ''}; expected one of ${ALL_ZONE_NAMES.join(', ')}`;
}
