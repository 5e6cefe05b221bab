import { InputError, type InputProblem } from '../errors.ts';
import { columnProblems, type LithologyInterval } from './conductivity.ts';
import type { ConductivityInterval, MeasurementInput, WellFlag } from './types.ts';

/** Temperatures outside this range (°C) are not well temperatures (a unit mix-up or a typo). */
export const WELL_TEMPERATURE_RANGE_C = [-40, 500] as const;
/** Deeper than this (m) is not a borehole depth (the deepest boreholes reach about 12 km). */
export const MAX_WELL_DEPTH_M = 15000;

/** One well ready for analysis (m, °C). */
export interface WellInput {
  id: string;
  name?: string;
  /** [longitude, latitude], degrees WGS84. */
  lonLat: [number, number];
  elevationM?: number;
  measurements: MeasurementInput[];
  conductivityColumn?: ConductivityInterval[];
  lithologyColumn?: LithologyInterval[];
  /** Measured heat production down the well (µW/m³), for the surface heat-flow correction. */
  heatProductionColumn?: { topM: number; bottomM: number; heatProductionUWm3: number }[];
  /** Input-level flags (e.g. a BHT with only one of its two times). */
  flags: WellFlag[];
}

interface FeatureLike {
  geometry: { type: string; coordinates: unknown };
  properties: Record<string, unknown>;
}

/**
 * Stricter per-well checks on a feature that already passed `parseFeatureCollection('wells', …)`: plausible
 * depths and temperatures, non-overlapping conductivity intervals, a well-formed optional `lithologyColumn`
 * ([{ topM, bottomM, lithology }], m below ground). Problems are collected for every well and thrown as one
 * InputError whose details name the feature (index and id) and the field.
 */
export function readWells(features: FeatureLike[]): WellInput[] {
  const problems: InputProblem[] = [];
  const wells = features.map((f, index) =>
    readWell(f, (field, problem) => problems.push({ feature: `${index} (${String(f.properties.id)})`, field, problem })),
  );
  if (problems.length > 0) {
    throw new InputError(
      `${problems.length} problem${problems.length === 1 ? '' : 's'} in the wells: ${problems
        .slice(0, 3)
        .map((d) => `well ${d.feature} ${d.field}: ${d.problem}`)
        .join('; ')}${problems.length > 3 ? '; …' : ''}`,
      problems.slice(0, 50),
      'invalid_wells',
    );
  }
  return wells;
}

/** Reports one problem of the well being read: the field (path within its properties) and what is wrong. */
type Bad = (field: string, problem: string) => void;

/** One well from its feature; its problems go to `bad`. */
function readWell(f: FeatureLike, bad: Bad): WellInput {
  const p = f.properties;
  const coords = f.geometry.coordinates as number[];
  const { measurements, flags } = readMeasurements(p.measurements as MeasurementInput[], bad);
  let conductivityColumn: ConductivityInterval[] | undefined;
  if (Array.isArray(p.conductivityColumn)) {
    conductivityColumn = (p.conductivityColumn as ConductivityInterval[]).map((c) => ({
      topM: c.topM,
      bottomM: c.bottomM,
      conductivityWmK: c.conductivityWmK,
    }));
    for (const q of columnProblems(conductivityColumn)) bad(`conductivityColumn[${q.index}]`, q.problem);
  }
  const lithologyColumn = readColumn(p.lithologyColumn, 'lithologyColumn', '{ topM: number, bottomM: number, lithology: non-empty string }', bad, (o) =>
    typeof o.topM === 'number' && typeof o.bottomM === 'number' && typeof o.lithology === 'string' && o.lithology.trim() !== ''
      ? { topM: o.topM, bottomM: o.bottomM, lithology: o.lithology }
      : null,
  );
  const heatProductionColumn = readColumn(
    p.heatProductionColumn,
    'heatProductionColumn',
    '{ topM: number, bottomM: number, heatProductionUWm3: 0–100 µW/m³ }',
    bad,
    (o) => {
      const a = o.heatProductionUWm3;
      return typeof o.topM === 'number' && typeof o.bottomM === 'number' && typeof a === 'number' && a >= 0 && a <= 100
        ? { topM: o.topM, bottomM: o.bottomM, heatProductionUWm3: a }
        : null;
    },
  );
  if (conductivityColumn && lithologyColumn)
    flags.push({ code: 'two-columns', message: 'both conductivityColumn and lithologyColumn given: the measured conductivityColumn is used' });
  return {
    id: String(p.id),
    name: typeof p.name === 'string' ? p.name : undefined,
    lonLat: [coords[0], coords[1]],
    elevationM: typeof p.elevationM === 'number' ? p.elevationM : undefined,
    measurements,
    conductivityColumn,
    lithologyColumn,
    heatProductionColumn,
    flags,
  };
}

/** Copies of a well's measurements with plausible depths and temperatures; a BHT giving only one of its two times is flagged. */
function readMeasurements(input: MeasurementInput[], bad: Bad): { measurements: MeasurementInput[]; flags: WellFlag[] } {
  const measurements = input.map((m) => ({ ...m }));
  const flags: WellFlag[] = [];
  const halfTimed: string[] = [];
  measurements.forEach((m, i) => {
    if (!Number.isFinite(m.depthM) || m.depthM < 0) bad(`measurements[${i}].depthM`, `depth must be ≥ 0 m below the ground surface, got ${m.depthM}`);
    else if (m.depthM > MAX_WELL_DEPTH_M)
      bad(`measurements[${i}].depthM`, `depth ${m.depthM} m is deeper than any borehole (limit ${MAX_WELL_DEPTH_M} m); feet given as metres?`);
    const [lo, hi] = WELL_TEMPERATURE_RANGE_C;
    if (!(m.temperatureC >= lo && m.temperatureC <= hi))
      bad(`measurements[${i}].temperatureC`, `temperature ${m.temperatureC} °C is outside ${lo}–${hi} °C; °F given as °C?`);
    if (m.kind === 'bht' && (m.hoursSinceCirculation === undefined) !== (m.circulationHours === undefined)) {
      halfTimed.push(`${i} (no ${m.circulationHours === undefined ? 'circulationHours' : 'hoursSinceCirculation'})`);
    }
  });
  if (halfTimed.length > 0) {
    flags.push({
      code: 'bht-time-incomplete',
      message: `BHT measurement${halfTimed.length === 1 ? '' : 's'} ${halfTimed.join(', ')} give${halfTimed.length === 1 ? 's' : ''} only one of the two times and cannot enter a Horner fit`,
    });
  }
  return { measurements, flags };
}

/**
 * An optional column of depth intervals (m below ground) from a well's property `field`: undefined when absent;
 * each item read by `pick` (null: not the `expected` shape), then checked for order and overlaps.
 */
function readColumn<T extends { topM: number; bottomM: number }>(
  value: unknown,
  field: string,
  expected: string,
  bad: Bad,
  pick: (o: Record<string, unknown>) => T | null,
): T[] | undefined {
  if (value === undefined) return undefined;
  if (!Array.isArray(value) || value.length === 0) {
    bad(field, `expected a non-empty array of ${expected.replace(/: [^,}]*?(?=,| })/g, '')}`);
    return undefined;
  }
  const column: T[] = [];
  (value as unknown[]).forEach((c, i) => {
    const item = pick((c ?? {}) as Record<string, unknown>);
    if (item === null) bad(`${field}[${i}]`, `expected ${expected}`);
    else column.push(item);
  });
  for (const q of columnProblems(column)) bad(`${field}[${q.index}]`, q.problem);
  return column;
}
