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
  const wells: WellInput[] = [];
  features.forEach((f, index) => {
    const p = f.properties;
    const id = String(p.id);
    const label = `${index} (${id})`;
    const bad = (field: string, problem: string) => problems.push({ feature: label, field, problem });
    const coords = f.geometry.coordinates as number[];
    const flags: WellFlag[] = [];
    const ms = (p.measurements as MeasurementInput[]).map((m) => ({ ...m }));
    const halfTimed: string[] = [];
    ms.forEach((m, i) => {
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
    let conductivityColumn: ConductivityInterval[] | undefined;
    if (Array.isArray(p.conductivityColumn)) {
      conductivityColumn = (p.conductivityColumn as ConductivityInterval[]).map((c) => ({
        topM: c.topM,
        bottomM: c.bottomM,
        conductivityWmK: c.conductivityWmK,
      }));
      for (const q of columnProblems(conductivityColumn)) bad(`conductivityColumn[${q.index}]`, q.problem);
    }
    let lithologyColumn: LithologyInterval[] | undefined;
    if (p.lithologyColumn !== undefined) {
      if (!Array.isArray(p.lithologyColumn) || p.lithologyColumn.length === 0)
        bad('lithologyColumn', 'expected a non-empty array of { topM, bottomM, lithology }');
      else {
        lithologyColumn = [];
        (p.lithologyColumn as unknown[]).forEach((c, i) => {
          const o = (c ?? {}) as Record<string, unknown>;
          if (typeof o.topM !== 'number' || typeof o.bottomM !== 'number' || typeof o.lithology !== 'string' || o.lithology.trim() === '') {
            bad(`lithologyColumn[${i}]`, 'expected { topM: number, bottomM: number, lithology: non-empty string }');
            return;
          }
          lithologyColumn?.push({ topM: o.topM, bottomM: o.bottomM, lithology: o.lithology });
        });
        for (const q of columnProblems(lithologyColumn)) bad(`lithologyColumn[${q.index}]`, q.problem);
      }
    }
    let heatProductionColumn: WellInput['heatProductionColumn'];
    if (p.heatProductionColumn !== undefined) {
      if (!Array.isArray(p.heatProductionColumn) || p.heatProductionColumn.length === 0)
        bad('heatProductionColumn', 'expected a non-empty array of { topM, bottomM, heatProductionUWm3 }');
      else {
        heatProductionColumn = [];
        (p.heatProductionColumn as unknown[]).forEach((c, i) => {
          const o = (c ?? {}) as Record<string, unknown>;
          const a = o.heatProductionUWm3;
          if (typeof o.topM !== 'number' || typeof o.bottomM !== 'number' || typeof a !== 'number' || !(a >= 0) || !(a <= 100)) {
            bad(`heatProductionColumn[${i}]`, 'expected { topM: number, bottomM: number, heatProductionUWm3: 0–100 µW/m³ }');
            return;
          }
          heatProductionColumn?.push({ topM: o.topM, bottomM: o.bottomM, heatProductionUWm3: a });
        });
        for (const q of columnProblems(heatProductionColumn)) bad(`heatProductionColumn[${q.index}]`, q.problem);
      }
    }
    if (conductivityColumn && lithologyColumn)
      flags.push({ code: 'two-columns', message: 'both conductivityColumn and lithologyColumn given: the measured conductivityColumn is used' });
    wells.push({
      id,
      name: typeof p.name === 'string' ? p.name : undefined,
      lonLat: [coords[0], coords[1]],
      elevationM: typeof p.elevationM === 'number' ? p.elevationM : undefined,
      measurements: ms,
      conductivityColumn,
      lithologyColumn,
      heatProductionColumn,
      flags,
    });
  });
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
