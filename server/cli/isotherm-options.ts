/**
 * The options of `subtherm isotherms` (server/cli/isotherms.ts): the flag table, the numbers checked once with
 * errors that name the flag (exit 2), and the override polygons read from their file.
 */
import { InputError } from '../../shared/errors.ts';
import { ringsOfGeometry } from '../../shared/grid/polygon-cells.ts';
import { overrideFromProperties, type OverrideRegion } from '../../shared/products/overrides.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { sha256Hex } from '../io/export.ts';
import { numberListOption, numberOption, textOptions } from './args.ts';
import { readBytes } from './isotherm-inputs.ts';
import { SIMULATION_OPTIONS } from './simulation-input.ts';

export const ISOTHERM_OPTIONS = {
  ...textOptions('heat-flow band heat-flow-sd model isotherms depths-km facies-depth-km max-depth-km overrides contour-interval-km'),
  ...textOptions('contour-interval-c realizations seed heat-flow-error-correlation out-dir realizations-from'),
  ...SIMULATION_OPTIONS,
} as const;

/** The parsed flags (strings as given; booleans for switches). */
export type IsothermArgs = { [K in keyof typeof ISOTHERM_OPTIONS]?: (typeof ISOTHERM_OPTIONS)[K]['type'] extends 'boolean' ? boolean : string };

/** The checked numbers of the verb. */
export interface IsothermNumbers {
  isothermsC: number[];
  depthsKm: number[];
  faciesDepthKm: number;
  maxDepthKm: number | undefined;
  contourIntervalKm: number;
  contourIntervalC: number | undefined;
  realizations: number;
  seed: number;
  heatFlowErrorCorrelation: 'full' | 'independent';
  band: number | undefined;
}

const bad = (field: string, message: string, problem: string) => new InputError(message, [{ field, problem }], 'bad_option');

/** A positive number from a flag, or undefined when the flag is absent. */
function positiveOption(name: string, raw: string | undefined, problem = 'expected > 0'): number | undefined {
  if (raw === undefined) return undefined;
  const v = numberOption(name, raw);
  if (!(v > 0)) throw bad(name, `--${name} must be > 0, got ${v}`, problem);
  return v;
}

/** An integer in [lo, hi] from a flag (its default when absent). */
function integerOption(name: string, raw: string | undefined, fallback: number, lo: number, hi: number, problem: string): number {
  const v = raw !== undefined ? numberOption(name, raw) : fallback;
  if (!(Number.isInteger(v) && v >= lo && v <= hi)) throw bad(name, `--${name} must be an integer in ${lo}..${hi}, got ${raw}`, problem);
  return v;
}

/** Checks the numbers of the verb's flags. */
export function isothermNumbers(a: IsothermArgs): IsothermNumbers {
  // 300 and 500 °C unless asked otherwise, as in every other verb and the map.
  const isothermsC = numberListOption('isotherms', a.isotherms, [300, 500]);
  const depthsKm = numberListOption('depths-km', a['depths-km'], []);
  for (const d of depthsKm) if (!(d > 0)) throw bad('depths-km', `--depths-km must be > 0, got ${d}`, 'expected depths > 0 km');
  const faciesDepthKm = positiveOption('facies-depth-km', a['facies-depth-km'], 'expected > 0 km') ?? (depthsKm.length > 0 ? Math.max(...depthsKm) : 10);
  const corr = a['heat-flow-error-correlation'] ?? 'full';
  if (corr !== 'full' && corr !== 'independent')
    throw bad('heat-flow-error-correlation', `--heat-flow-error-correlation must be full or independent, got "${corr}"`, 'expected full or independent');
  return {
    isothermsC,
    depthsKm,
    faciesDepthKm,
    maxDepthKm: positiveOption('max-depth-km', a['max-depth-km'], 'expected > 0 km'),
    contourIntervalKm: positiveOption('contour-interval-km', a['contour-interval-km']) ?? 1,
    contourIntervalC: positiveOption('contour-interval-c', a['contour-interval-c']),
    realizations: integerOption('realizations', a.realizations, 0, 0, 100000, 'expected a whole number'),
    seed: integerOption('seed', a.seed, 0, 0, 2 ** 32 - 1, 'expected a whole number ≥ 0'),
    heatFlowErrorCorrelation: corr,
    band: a.band !== undefined ? numberOption('band', a.band) : undefined,
  };
}

/** The override polygons of --overrides (each feature needs its "layers"), with the file's SHA-256. */
export async function readOverrides(path: string): Promise<{ regions: OverrideRegion[]; sha256: string }> {
  const text = (await readBytes(path, 'overrides')).toString('utf8');
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(`${path}: not valid JSON: ${(e as Error).message}`, [{ field: 'overrides', problem: 'not valid JSON' }], 'bad_geojson');
  }
  const regions: OverrideRegion[] = [];
  parseFeatureCollection('regions', raw).collection.features.forEach((f, i) => {
    const props = f.properties ?? {};
    const label = `${path}: feature ${i}${props.id !== undefined ? ` (${String(props.id)})` : ''}`;
    const o = overrideFromProperties(props, label);
    if (o === null)
      throw new InputError(
        `${label} has no "layers": every override polygon needs them`,
        [{ feature: i, field: 'properties.layers', problem: 'missing' }],
        'invalid_override',
      );
    regions.push({ label, override: o, ringsLonLat: ringsOfGeometry(f.geometry) });
  });
  return { regions, sha256: sha256Hex(text) };
}
