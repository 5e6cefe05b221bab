/**
 * Grade of a sample on the ordered index-mineral scale (chlorite 0 … sillimanite 5), as an interval of ranks
 * [lo, hi]: lo = hi for a sample with a zone; wider for partial information. Rules (the project's own, stated so
 * a user can check them):
 * - `zone` given: its rank (names are case- and space-insensitive; "garnet zone" accepted). It wins over facies
 *   and P–T, which are then only checked for consistency (a warning names the sample).
 * - `facies` only: the facies field's temperature span (FACIES_FIELDS, the project's simplified diagram) against
 *   the isograd midpoint temperatures (isogradTemperatureC): lo = number of isograds with midpoint ≤ Tmin of the
 *   field, hi = number with midpoint < Tmax. Greenschist (300–500 °C) → chlorite–biotite, amphibolite (500–750 °C)
 *   → garnet–sillimanite, granulite → sillimanite, zeolite and prehnite–pumpellyite → chlorite. Blueschist,
 *   eclogite and hornfels are not on the Barrovian (medium-pressure) sequence: such samples carry no zone
 *   information (a warning says so) and take no part in the isograds.
 * - peak T–P only: against the approximate isograd temperature ranges (INDEX_MINERAL_ZONES, from memory, about
 *   6–8 kbar): lo = number of isograds whose upper temperature is ≤ T (certainly crossed), hi = number whose lower
 *   temperature is ≤ T (possibly crossed). E.g. 510 °C → biotite–garnet.
 * An interval sample informs an isograd only where it is decided: for the isograd opening rank j it counts as
 * "at or above" when lo ≥ j, "below" when hi < j, and is left out of that isograd's indicator otherwise.
 */
import { InputError, type InputProblem } from '../errors.ts';
import { FACIES_FIELDS, FACIES_NAMES, INDEX_MINERAL_ZONES, ZONE_NAMES, isogradTemperatureC, nearestName, normalizeName, suggestZoneName, zoneRank } from '../petrology/index.ts';

/** Highest rank (sillimanite). */
export const MAX_RANK = INDEX_MINERAL_ZONES.length - 1;

/** Where a sample's grade came from. */
export type GradeSource = 'zone' | 'facies' | 'peak' | 'none';

export interface SampleGrade {
  id: string;
  /** Lowest and highest possible rank (0–5); −1, −1 when the sample says nothing about the zone. */
  lo: number;
  hi: number;
  source: GradeSource;
  /** The zone name when lo = hi (chlorite … sillimanite), else null. */
  zone: string | null;
}

/** Facies off the Barrovian sequence (no zone information). */
export const OFF_SCALE_FACIES: readonly string[] = ['blueschist', 'eclogite', 'hornfels'];

function faciesSpanC(name: string): { min: number; max: number } {
  const f = FACIES_FIELDS.find((x) => x.name === name);
  if (f === undefined) throw new RangeError(`unknown facies ${name}`);
  let min = Infinity, max = -Infinity;
  for (const [t] of f.polygon) { min = Math.min(min, t); max = Math.max(max, t); }
  return { min, max };
}

const MIDPOINTS: number[] = ZONE_NAMES.slice(1).map((z) => isogradTemperatureC(z) as number);

/** Rank interval [lo, hi] of a facies name (see the rules above); null for facies off the Barrovian sequence. */
export function faciesRankInterval(facies: string): [number, number] | null {
  const n = normalizeName(facies).replace(/-facies$/, '');
  if (!(FACIES_NAMES as readonly string[]).includes(n)) throw new RangeError(`unknown facies ${facies}`);
  if (OFF_SCALE_FACIES.includes(n)) return null;
  const { min, max } = faciesSpanC(n);
  let lo = 0, hi = 0;
  for (const m of MIDPOINTS) { if (m <= min) lo++; if (m < max) hi++; }
  return [lo, Math.max(lo, hi)];
}

/** Rank interval [lo, hi] of a peak temperature (°C) against the approximate isograd temperature ranges. */
export function peakRankInterval(peakTemperatureC: number): [number, number] {
  if (!Number.isFinite(peakTemperatureC)) return [-1, -1];
  let lo = 0, hi = 0;
  for (const z of INDEX_MINERAL_ZONES) {
    if (z.isogradTemperatureC === null) continue;
    if (z.isogradTemperatureC.max <= peakTemperatureC) lo++;
    if (z.isogradTemperatureC.min <= peakTemperatureC) hi++;
  }
  return [lo, hi];
}

export interface GradeInput {
  id: string;
  zone?: string;
  facies?: string;
  peakTemperatureC?: number;
  peakPressureKbar?: number;
}

/**
 * Grades of samples (in order). Unknown zone or facies names are an InputError naming the feature and field, with
 * the nearest valid name ("unknown zone 'garnett' (did you mean 'garnet'?)"); a sample with no grade field at all
 * is an error too. Inconsistencies between a zone and the sample's facies or peak T are warnings.
 */
export function sampleGrades(samples: readonly GradeInput[], warnings: string[] = []): SampleGrade[] {
  const problems: InputProblem[] = [];
  const out: SampleGrade[] = [];
  const off: string[] = [];
  samples.forEach((s, i) => {
    const label = `${i} (${s.id})`;
    let zr = -1, fi: [number, number] | null = null, facOk = false;
    if (s.zone !== undefined) {
      zr = zoneRank(s.zone);
      if (zr < 0) {
        const hint = suggestZoneName(s.zone);
        problems.push({ feature: label, field: 'properties.zone', problem: `unknown zone '${s.zone}'${hint !== null ? ` (did you mean '${hint}'?)` : ''}; expected one of ${ZONE_NAMES.join(', ')}` });
      }
    }
    if (s.facies !== undefined) {
      const n = normalizeName(s.facies).replace(/-facies$/, '');
      if (!(FACIES_NAMES as readonly string[]).includes(n)) {
        const hint = nearestName(n, FACIES_NAMES);
        problems.push({ feature: label, field: 'properties.facies', problem: `unknown facies '${s.facies}'${hint !== null ? ` (did you mean '${hint}'?)` : ''}; expected one of ${FACIES_NAMES.join(', ')}` });
      } else {
        facOk = true;
        fi = faciesRankInterval(n);
        if (fi === null && s.zone === undefined) off.push(s.id);
      }
    }
    const t = s.peakTemperatureC, p = s.peakPressureKbar;
    const hasPeak = Number.isFinite(t) && Number.isFinite(p);
    if (s.zone === undefined && s.facies === undefined && !hasPeak) {
      problems.push({ feature: label, field: 'properties.zone', problem: 'a grade sample needs a zone, a facies, or peakTemperatureC with peakPressureKbar' });
    }
    if (zr >= 0) {
      out.push({ id: s.id, lo: zr, hi: zr, source: 'zone', zone: ZONE_NAMES[zr] });
      if (fi !== null && (zr < fi[0] || zr > fi[1])) warnings.push(`sample ${label}: zone ${ZONE_NAMES[zr]} is outside the range its facies ${s.facies} suggests (${ZONE_NAMES[fi[0]]}–${ZONE_NAMES[fi[1]]}); the zone is used`);
      if (hasPeak) {
        const [lo, hi] = peakRankInterval(t as number);
        if (zr < lo || zr > hi) warnings.push(`sample ${label}: zone ${ZONE_NAMES[zr]} disagrees with its peak temperature ${t} °C (${ZONE_NAMES[lo]}–${ZONE_NAMES[hi]} by the approximate isograd temperatures); the zone is used`);
      }
      return;
    }
    if (s.zone !== undefined) { out.push({ id: s.id, lo: -1, hi: -1, source: 'none', zone: null }); return; }
    let lo = -1, hi = -1, source: GradeSource = 'none';
    if (facOk && fi !== null) { lo = fi[0]; hi = fi[1]; source = 'facies'; }
    if (hasPeak) {
      const [plo, phi] = peakRankInterval(t as number);
      if (source === 'none') { lo = plo; hi = phi; source = 'peak'; } else {
        // Both: the intersection when they overlap, else the peak estimate (measured) with a warning.
        const a = Math.max(lo, plo), b = Math.min(hi, phi);
        if (a <= b) { lo = a; hi = b; } else {
          warnings.push(`sample ${label}: facies ${s.facies} and peak temperature ${t} °C disagree; the peak temperature is used`);
          lo = plo; hi = phi;
        }
        source = 'peak';
      }
    }
    out.push({ id: s.id, lo, hi, source, zone: lo === hi && lo >= 0 ? ZONE_NAMES[lo] : null });
  });
  if (problems.length > 0) {
    const first = problems[0];
    const msg = problems.length === 1 ? `sample ${first.feature}: ${first.problem}` : `${problems.length} problems in the samples; first: sample ${first.feature}: ${first.problem}`;
    throw new InputError(msg, problems.slice(0, 50), 'invalid_features', 422);
  }
  if (off.length > 0) warnings.push(`${off.length} sample(s) have a facies off the Barrovian sequence (${OFF_SCALE_FACIES.join(', ')}) and no zone: they take no part in the isograds (${off.slice(0, 10).join(', ')}${off.length > 10 ? ', ...' : ''})`);
  return out;
}
