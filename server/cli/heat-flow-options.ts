import { readFileSync } from 'node:fs';
import { InputError } from '../../shared/errors.ts';
import type { HeatFlowCorrectionOptions } from '../../shared/heatflow/corrections.ts';
import { checkClimateHistory, DEFAULT_DIFFUSIVITY_M2S, type ClimateStep } from '../../shared/heatflow/paleoclimate.ts';
import { DEFAULT_LAPSE_RATE_C_PER_KM } from '../../shared/heatflow/topography.ts';
import { loadDem } from '../terrain.ts';
import { numberOption, textOptions } from './args.ts';

/** The options of the heat-flow corrections, shared by `wells` and `correct-sites`. */
export const CORRECTION_OPTIONS = {
  ...textOptions('paleoclimate diffusivity-m2s terrain lapse-rate-c-per-km terrain-radius-km'),
} as const;

export const CORRECTION_HELP = `  --paleoclimate H          surface-temperature steps, "yearsAgo:deltaC,..." (warming positive, e.g. 12000:8,3000:-1)
                            or a JSON file [{ "yearsAgo": 12000, "deltaC": 8 }, ...]: paleoclimatic correction
  --diffusivity-m2s K       thermal diffusivity of the rock (m²/s, default ${DEFAULT_DIFFUSIVITY_M2S})
  --terrain DEM.tif         lon/lat DEM (m): topographic correction (reference plane, Birch 1950)
  --lapse-rate-c-per-km B   fall of surface temperature with elevation (°C/km, default ${DEFAULT_LAPSE_RATE_C_PER_KM})
  --terrain-radius-km R     terrain taken into account around each site (km, default max(25, 20 × bottom depth))
`;

const bad = (field: string, message: string, problem: string) => new InputError(message, [{ field, problem }], 'bad_option');

/** Parses --paleoclimate as inline steps or a JSON file of steps. */
function climateSteps(raw: string): ClimateStep[] {
  let steps: ClimateStep[];
  if (/^[-+\d.eE]+:[-+\d.eE]+(,[-+\d.eE]+:[-+\d.eE]+)*$/.test(raw.replace(/\s+/g, ''))) {
    steps = raw
      .replace(/\s+/g, '')
      .split(',')
      .map((p) => {
        const [a, b] = p.split(':');
        return { yearsAgo: Number(a), deltaC: Number(b) };
      });
  } else {
    let text: string;
    try {
      text = readFileSync(raw, 'utf8');
    } catch (e) {
      throw bad(
        'paleoclimate',
        `--paleoclimate: "${raw}" is neither yearsAgo:deltaC pairs nor a readable file (${(e as NodeJS.ErrnoException).code ?? 'read error'})`,
        'expected "12000:8,3000:-1" or a JSON file',
      );
    }
    let v: unknown;
    try {
      v = JSON.parse(text);
    } catch (e) {
      throw bad('paleoclimate', `${raw}: not valid JSON (${(e as Error).message})`, 'expected a JSON array of { yearsAgo, deltaC }');
    }
    if (!Array.isArray(v)) throw bad('paleoclimate', `${raw}: expected a JSON array of { yearsAgo, deltaC }`, 'not an array');
    steps = v.map((s, i) => {
      const o = s as Record<string, unknown>;
      if (typeof o?.yearsAgo !== 'number' || typeof o?.deltaC !== 'number')
        throw bad('paleoclimate', `${raw}: step ${i} needs numbers yearsAgo and deltaC`, `step ${i}: got ${JSON.stringify(s)}`);
      return { yearsAgo: o.yearsAgo, deltaC: o.deltaC };
    });
  }
  if (steps.length === 0) throw bad('paleoclimate', '--paleoclimate has no steps', 'empty');
  return steps;
}

/** Reads the correction options into HeatFlowCorrectionOptions (loading the DEM), or undefined when none is asked for. */
export async function correctionOptions(o: Partial<Record<keyof typeof CORRECTION_OPTIONS, string>>): Promise<HeatFlowCorrectionOptions | undefined> {
  const out: HeatFlowCorrectionOptions = {};
  if (o.paleoclimate !== undefined) {
    const steps = climateSteps(o.paleoclimate);
    const diffusivityM2s = numberOption('diffusivity-m2s', o['diffusivity-m2s'], DEFAULT_DIFFUSIVITY_M2S);
    try {
      checkClimateHistory(steps, diffusivityM2s);
    } catch (e) {
      throw bad('paleoclimate', `--paleoclimate: ${(e as Error).message}`, (e as Error).message);
    }
    out.paleoclimate = { steps, diffusivityM2s };
  } else if (o['diffusivity-m2s'] !== undefined) throw bad('diffusivity-m2s', '--diffusivity-m2s is only used with --paleoclimate', 'no --paleoclimate');
  if (o.terrain !== undefined) {
    let dem;
    try {
      dem = await loadDem(o.terrain);
    } catch (e) {
      throw new InputError(`--terrain: ${(e as Error).message}`, [{ field: 'terrain', problem: (e as Error).message }], 'bad_file');
    }
    const lapseRateCPerKm = numberOption('lapse-rate-c-per-km', o['lapse-rate-c-per-km'], DEFAULT_LAPSE_RATE_C_PER_KM);
    const radiusKm = o['terrain-radius-km'] === undefined ? undefined : numberOption('terrain-radius-km', o['terrain-radius-km']);
    if (radiusKm !== undefined && !(radiusKm > 0)) throw bad('terrain-radius-km', '--terrain-radius-km must be > 0 km', `got ${radiusKm}`);
    out.topography = { dem, lapseRateCPerKm, radiusKm };
  } else if (o['lapse-rate-c-per-km'] !== undefined || o['terrain-radius-km'] !== undefined) {
    throw bad('terrain', '--lapse-rate-c-per-km and --terrain-radius-km need --terrain', 'no --terrain');
  }
  return out.paleoclimate || out.topography ? out : undefined;
}
