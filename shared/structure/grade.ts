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
 * - peak T–P only (peakGrade): the stable aluminosilicate at (T, P) (Holdaway 1971 lines by default, or Pattison
 *   1992; shared/petrology/aluminosilicate.ts) decides the series and the aluminosilicate zone:
 *   · kyanite field, or sillimanite field at or above the triple-point pressure → the Barrovian (medium-pressure)
 *     scale: biotite, garnet and staurolite from the approximate isograd temperature ranges (lo = isograds whose
 *     upper temperature is ≤ T, hi = those whose lower temperature is ≤ T); from the kyanite-in range (600 °C) an
 *     aluminosilicate may be present, and it is kyanite (rank 4) in the kyanite field, sillimanite (rank 5) in the
 *     sillimanite field; from the top of that range (650 °C) it is certainly present (lo = hi). So 700 °C at
 *     9.5 kbar is kyanite zone, 700 °C at 6 kbar sillimanite zone.
 *   · andalusite field, or sillimanite field below the triple-point pressure → the andalusite-bearing low-pressure
 *     series, named on its own scale (LOW_PRESSURE_ZONES: chlorite, biotite, cordierite, andalusite, sillimanite).
 *     On the Barrovian scale such a sample decides only biotite-in (lo = 1 from 450 °C, hi = 5 above 400 °C): it
 *     is left out of the garnet-in … sillimanite-in indicators, which belong to the other series.
 *   · outside the facies diagram (0–1100 °C, 0–25 kbar), or in the blueschist or eclogite field (high P/T, off
 *     both scales): no zone, with a message naming the sample.
 *   E.g. 510 °C at 6 kbar → biotite–garnet; 620 °C at 2.5 kbar → sillimanite of the low-pressure series.
 * An interval sample informs an isograd only where it is decided: for the isograd opening rank j it counts as
 * "at or above" when lo ≥ j, "below" when hi < j, and is left out of that isograd's indicator otherwise.
 */
import { InputError, type InputProblem } from '../errors.ts';
import { zoneNameProblem } from '../petrology/zones.ts';
import {
  ALUMINOSILICATE_TRIPLE_POINTS,
  FACIES_FIELDS,
  FACIES_NAMES,
  INDEX_MINERAL_ZONES,
  LOW_PRESSURE_ZONES,
  LOW_PRESSURE_ZONE_NAMES,
  ZONE_NAMES,
  classifyFacies,
  isogradTemperatureC,
  lowPressureZoneRank,
  nearestName,
  normalizeName,
  stableAluminosilicate,
  zoneRank,
  type Aluminosilicate,
  type AluminosilicateCalibration,
} from '../petrology/index.ts';

/** Highest rank (sillimanite). */
export const MAX_RANK = INDEX_MINERAL_ZONES.length - 1;

/** Where a sample's grade came from. */
export type GradeSource = 'zone' | 'facies' | 'peak-pt' | 'none';

/** The metamorphic series a grade belongs to: Barrovian (medium pressure) or andalusite-bearing low pressure. */
export type GradeSeries = 'barrovian' | 'low-pressure';

export interface SampleGrade {
  id: string;
  /** Lowest and highest possible rank (0–5); −1, −1 when the sample says nothing about the zone. */
  lo: number;
  hi: number;
  source: GradeSource;
  /** The zone name when lo = hi (chlorite … sillimanite), else null. */
  zone: string | null;
  /** Series of the grade (null without zone information). */
  series: GradeSeries | null;
  /** The grade as a user reads it: "garnet", "biotite–garnet", "andalusite (low-pressure series)"; null without information. */
  label: string | null;
  /** Stable aluminosilicate at the peak P–T (samples graded from P–T only). */
  aluminosilicate?: Aluminosilicate;
}

/** Facies off the Barrovian sequence (no zone information). */
export const OFF_SCALE_FACIES: readonly string[] = ['blueschist', 'eclogite', 'hornfels'];

function faciesSpanC(name: string): { min: number; max: number } {
  const f = FACIES_FIELDS.find((x) => x.name === name);
  if (f === undefined) throw new RangeError(`unknown facies ${name}`);
  let min = Infinity,
    max = -Infinity;
  for (const [t] of f.polygon) {
    min = Math.min(min, t);
    max = Math.max(max, t);
  }
  return { min, max };
}

const MIDPOINTS: number[] = ZONE_NAMES.slice(1).map((z) => isogradTemperatureC(z) as number);

/** Rank interval [lo, hi] of a facies name (see the rules above); null for facies off the Barrovian sequence. */
export function faciesRankInterval(facies: string): [number, number] | null {
  const n = normalizeName(facies).replace(/-facies$/, '');
  if (!(FACIES_NAMES as readonly string[]).includes(n)) throw new RangeError(`unknown facies ${facies}`);
  if (OFF_SCALE_FACIES.includes(n)) return null;
  const { min, max } = faciesSpanC(n);
  let lo = 0,
    hi = 0;
  for (const m of MIDPOINTS) {
    if (m <= min) lo++;
    if (m < max) hi++;
  }
  return [lo, Math.max(lo, hi)];
}

/**
 * Rank interval [lo, hi] of a peak temperature (°C) against the approximate Barrovian isograd temperature ranges,
 * ignoring pressure (the temperature part of peakGrade).
 */
export function peakRankInterval(peakTemperatureC: number): [number, number] {
  if (!Number.isFinite(peakTemperatureC)) return [-1, -1];
  return crossedIsograds(INDEX_MINERAL_ZONES, peakTemperatureC, MAX_RANK);
}

/**
 * Of the isograds opening zones 1 … last of a series, how many a peak temperature t (°C) certainly crossed (the top of
 * the isograd's temperature range ≤ t) and how many it possibly crossed (the bottom of the range ≤ t).
 */
function crossedIsograds(zones: readonly { isogradTemperatureC: { min: number; max: number } | null }[], t: number, last: number): [number, number] {
  let lo = 0,
    hi = 0;
  for (let r = 1; r <= last; r++) {
    const z = zones[r].isogradTemperatureC;
    if (z === null) continue;
    if (z.max <= t) lo++;
    if (z.min <= t) hi++;
  }
  return [lo, hi];
}

export interface PeakGrade {
  /** Barrovian rank interval (as SampleGrade.lo/hi); −1, −1 without zone information. */
  lo: number;
  hi: number;
  series: GradeSeries | null;
  /** Rank interval on the series' own scale (ZONE_NAMES or LOW_PRESSURE_ZONE_NAMES). */
  seriesLo: number;
  seriesHi: number;
  /** e.g. "kyanite", "biotite–garnet", "andalusite (low-pressure series)". */
  label: string | null;
  aluminosilicate: Aluminosilicate | null;
  /** True within 0.5 kbar of an aluminosilicate reaction line (the series or zone may be the other one). */
  nearAluminosilicateLine: boolean;
  /** Why a P–T pair has no zone (outside every field), else null. */
  message: string | null;
}

const range = (names: readonly string[], lo: number, hi: number) => (lo === hi ? names[lo] : `${names[lo]}–${names[hi]}`);

/**
 * Grade of a peak temperature (°C) and pressure (kbar): series (Barrovian or andalusite-bearing low pressure) and
 * zone interval by the stable aluminosilicate and the approximate isograd temperatures (rules in the module
 * comment). `calibration` picks the aluminosilicate lines (default Holdaway 1971).
 */
export function peakGrade(temperatureC: number, pressureKbar: number, calibration: AluminosilicateCalibration = 'holdaway1971'): PeakGrade {
  const none = (message: string): PeakGrade => ({
    lo: -1,
    hi: -1,
    series: null,
    seriesLo: -1,
    seriesHi: -1,
    label: null,
    aluminosilicate: null,
    nearAluminosilicateLine: false,
    message,
  });
  if (!Number.isFinite(temperatureC) || !Number.isFinite(pressureKbar)) return none('peak temperature and pressure must be numbers');
  const fac = classifyFacies(temperatureC, pressureKbar);
  if (fac.facies === null) return none(`${temperatureC} °C at ${pressureKbar} kbar lies outside every field of the facies diagram (0–1100 °C, 0–25 kbar)`);
  if (fac.facies === 'blueschist' || fac.facies === 'eclogite')
    return none(
      `${temperatureC} °C at ${pressureKbar} kbar lies in the ${fac.facies} field (high pressure for its temperature), on neither the Barrovian nor the low-pressure scale`,
    );
  const as = stableAluminosilicate(temperatureC, pressureKbar, calibration);
  const tp = ALUMINOSILICATE_TRIPLE_POINTS[calibration];
  const lowP = as.polymorph === 'andalusite' || (as.polymorph === 'sillimanite' && pressureKbar < tp.pressureKbar);
  const t = temperatureC;
  if (!lowP) {
    let [lo, hi] = crossedIsograds(INDEX_MINERAL_ZONES, t, 3);
    const ky = INDEX_MINERAL_ZONES[4].isogradTemperatureC as { min: number; max: number };
    const asRank = as.polymorph === 'kyanite' ? 4 : 5;
    if (t >= ky.min) hi = asRank;
    if (t >= ky.max) lo = asRank;
    return {
      lo,
      hi,
      series: 'barrovian',
      seriesLo: lo,
      seriesHi: hi,
      label: range(ZONE_NAMES, lo, hi),
      aluminosilicate: as.polymorph,
      nearAluminosilicateLine: as.nearBoundary,
      message: null,
    };
  }
  let [slo, shi] = crossedIsograds(LOW_PRESSURE_ZONES, t, 3);
  if (as.polymorph === 'sillimanite') {
    shi = 4;
    if (t >= (LOW_PRESSURE_ZONES[3].isogradTemperatureC as { max: number }).max) slo = 4;
  }
  const bt = INDEX_MINERAL_ZONES[1].isogradTemperatureC as { min: number; max: number };
  const lo = t >= bt.max ? 1 : 0,
    hi = t >= bt.min ? MAX_RANK : 0;
  return {
    lo,
    hi,
    series: 'low-pressure',
    seriesLo: slo,
    seriesHi: shi,
    label: `${range(LOW_PRESSURE_ZONE_NAMES, slo, shi)} (low-pressure series)`,
    aluminosilicate: as.polymorph,
    nearAluminosilicateLine: as.nearBoundary,
    message: null,
  };
}

export interface GradeInput {
  id: string;
  zone?: string;
  facies?: string;
  peakTemperatureC?: number;
  peakPressureKbar?: number;
}

/** What one sample says of its grade, read before it is placed on the Barrovian scale. */
interface SampleReading {
  s: GradeInput;
  label: string;
  /** Rank of its Barrovian zone, or −1; rank of its low-pressure zone (when not Barrovian), or −1. */
  zr: number;
  lr: number;
  /** Rank interval of a known facies (null off the Barrovian sequence), and whether the facies is known. */
  fi: [number, number] | null;
  facOk: boolean;
  pk: PeakGrade | null;
}

/** Reads one sample's zone, facies and peak P–T; unknown names and a sample with no grade field go to `problems`. */
function readSample(s: GradeInput, i: number, problems: InputProblem[], off: string[], calibration: AluminosilicateCalibration): SampleReading {
  const label = `${i} (${s.id})`;
  let zr = -1,
    lr = -1,
    fi: [number, number] | null = null,
    facOk = false;
  if (s.zone !== undefined) {
    zr = zoneRank(s.zone);
    if (zr < 0) lr = lowPressureZoneRank(s.zone);
    const problem = zoneNameProblem(s.zone);
    if (problem !== null) problems.push({ feature: label, field: 'properties.zone', problem });
  }
  if (s.facies !== undefined) {
    const n = normalizeName(s.facies).replace(/-facies$/, '');
    if (!(FACIES_NAMES as readonly string[]).includes(n)) {
      const hint = nearestName(n, FACIES_NAMES);
      problems.push({
        feature: label,
        field: 'properties.facies',
        problem: `unknown facies '${s.facies}'${hint !== null ? ` (did you mean '${hint}'?)` : ''}; expected one of ${FACIES_NAMES.join(', ')}`,
      });
    } else {
      facOk = true;
      fi = faciesRankInterval(n);
      if (fi === null && s.zone === undefined) off.push(s.id);
    }
  }
  const t = s.peakTemperatureC,
    p = s.peakPressureKbar;
  const hasPeak = Number.isFinite(t) && Number.isFinite(p);
  if (s.zone === undefined && s.facies === undefined && !hasPeak) {
    problems.push({ feature: label, field: 'properties.zone', problem: 'a grade sample needs a zone, a facies, or peakTemperatureC with peakPressureKbar' });
  }
  const pk = hasPeak ? peakGrade(t as number, p as number, calibration) : null;
  return { s, label, zr, lr, fi, facOk, pk };
}

/** The grade of a sample that names a zone (Barrovian, low-pressure or unknown); null when it names none. */
function zoneGrade(r: SampleReading, warnings: string[], lowSeries: string[]): SampleGrade | null {
  const { s, label, zr, lr, fi, pk } = r;
  if (zr >= 0) {
    if (fi !== null && (zr < fi[0] || zr > fi[1]))
      warnings.push(
        `sample ${label}: zone ${ZONE_NAMES[zr]} is outside the range its facies ${s.facies} suggests (${ZONE_NAMES[fi[0]]}–${ZONE_NAMES[fi[1]]}); the zone is used`,
      );
    if (pk !== null && pk.lo >= 0 && (pk.series !== 'barrovian' || zr < pk.lo || zr > pk.hi))
      warnings.push(
        `sample ${label}: zone ${ZONE_NAMES[zr]} disagrees with its peak P–T ${s.peakTemperatureC} °C, ${s.peakPressureKbar} kbar (${pk.label}); the zone is used`,
      );
    return { id: s.id, lo: zr, hi: zr, source: 'zone', zone: ZONE_NAMES[zr], series: 'barrovian', label: ZONE_NAMES[zr] };
  }
  if (lr >= 0) {
    // A zone of the low-pressure scale: decides biotite-in only on the Barrovian scale.
    const lo = lr >= 1 ? 1 : 0,
      hi = lr >= 1 ? MAX_RANK : 0;
    lowSeries.push(s.id);
    return { id: s.id, lo, hi, source: 'zone', zone: null, series: 'low-pressure', label: `${LOW_PRESSURE_ZONE_NAMES[lr]} (low-pressure series)` };
  }
  if (s.zone !== undefined) return { id: s.id, lo: -1, hi: -1, source: 'none', zone: null, series: null, label: null };
  return null;
}

/** The grade of a sample without a zone: from its facies, its peak P–T, or their intersection when both are given. */
function faciesPeakGrade(r: SampleReading, warnings: string[], lowSeries: string[]): SampleGrade {
  const { s, label, fi, facOk, pk } = r;
  let lo = -1,
    hi = -1,
    source: GradeSource = 'none';
  let series: GradeSeries | null = null,
    glabel: string | null = null;
  if (facOk && fi !== null) {
    lo = fi[0];
    hi = fi[1];
    source = 'facies';
    series = 'barrovian';
    glabel = range(ZONE_NAMES, lo, hi);
  }
  let polymorph: Aluminosilicate | undefined;
  if (pk !== null) {
    if (pk.message !== null)
      warnings.push(`sample ${label}: ${pk.message}; it takes no part in the isograds${source === 'facies' ? ' beyond its facies' : ''}`);
    else {
      polymorph = pk.aluminosilicate ?? undefined;
      if (pk.series === 'low-pressure') lowSeries.push(s.id);
      if (source === 'none' || pk.series === 'low-pressure') {
        lo = pk.lo;
        hi = pk.hi;
      } else {
        // Both: the intersection when they overlap, else the P–T estimate (measured) with a warning.
        const a = Math.max(lo, pk.lo),
          b = Math.min(hi, pk.hi);
        if (a <= b) {
          lo = a;
          hi = b;
        } else {
          warnings.push(`sample ${label}: facies ${s.facies} and peak P–T ${s.peakTemperatureC} °C, ${s.peakPressureKbar} kbar disagree; the peak P–T is used`);
          lo = pk.lo;
          hi = pk.hi;
        }
      }
      source = 'peak-pt';
      series = pk.series;
      glabel = pk.series === 'barrovian' ? range(ZONE_NAMES, lo, hi) : pk.label;
    }
  }
  const g: SampleGrade = { id: s.id, lo, hi, source, zone: series === 'barrovian' && lo === hi && lo >= 0 ? ZONE_NAMES[lo] : null, series, label: glabel };
  if (polymorph !== undefined) g.aluminosilicate = polymorph;
  return g;
}

/**
 * Grades of samples (in order). Unknown zone or facies names are an InputError naming the feature and field, with
 * the nearest valid name ("unknown zone 'garnett' (did you mean 'garnet'?)"); a sample with no grade field at all
 * is an error too. Zone names of the low-pressure scale (cordierite, andalusite) put a sample in that series.
 * Inconsistencies between a zone and the sample's facies or peak P–T are warnings; a peak P–T outside every field
 * is a warning naming the sample.
 */
export function sampleGrades(samples: readonly GradeInput[], warnings: string[] = [], calibration: AluminosilicateCalibration = 'holdaway1971'): SampleGrade[] {
  const problems: InputProblem[] = [];
  const out: SampleGrade[] = [];
  const off: string[] = [];
  const lowSeries: string[] = [];
  samples.forEach((s, i) => {
    const r = readSample(s, i, problems, off, calibration);
    out.push(zoneGrade(r, warnings, lowSeries) ?? faciesPeakGrade(r, warnings, lowSeries));
  });
  if (problems.length > 0) {
    const first = problems[0];
    const msg =
      problems.length === 1
        ? `sample ${first.feature}: ${first.problem}`
        : `${problems.length} problems in the samples; first: sample ${first.feature}: ${first.problem}`;
    throw new InputError(msg, problems.slice(0, 50), 'invalid_features');
  }
  if (off.length > 0)
    warnings.push(
      `${off.length} sample(s) have a facies off the Barrovian sequence (${OFF_SCALE_FACIES.join(', ')}) and no zone: they take no part in the isograds (${off.slice(0, 10).join(', ')}${off.length > 10 ? ', ...' : ''})`,
    );
  if (lowSeries.length > 0)
    warnings.push(
      `${lowSeries.length} sample(s) belong to the andalusite-bearing low-pressure series: they are named on its own scale and inform only biotite-in among the Barrovian isograds (${lowSeries.slice(0, 10).join(', ')}${lowSeries.length > 10 ? ', ...' : ''})`,
    );
  return out;
}
