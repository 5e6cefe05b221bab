import { correctIntervalGradient, type HeatFlowCorrectionOptions, type IntervalCorrection } from '../heatflow/corrections.ts';
import type { WellFlag } from './types.ts';

/**
 * Applies the optional paleoclimatic and topographic corrections (shared/heatflow) to a well's gradient over the
 * interval its conductivity was averaged on (from the surface when the fit is anchored there). The interval's
 * effective conductivity is q/G (the interval heat flow over the fitted gradient), so a gradient change ΔG changes
 * the heat flow by q·ΔG/G. Returns undefined when no correction is asked for; a correction that cannot be made
 * (e.g. no terrain at the well) becomes a flag and no change.
 */
export function wellHeatFlowCorrections(
  lonLat: [number, number],
  topM: number,
  bottomM: number,
  gradientCPerKm: number,
  intervalHeatFlowMWm2: number,
  opts: HeatFlowCorrectionOptions | undefined,
  flags: WellFlag[],
): IntervalCorrection | undefined {
  if (!opts || (!opts.paleoclimate && !opts.topography)) return undefined;
  try {
    return correctIntervalGradient({ lonLat, topM, bottomM, gradientCPerKm, conductivityWmK: intervalHeatFlowMWm2 / gradientCPerKm }, opts);
  } catch (e) {
    flags.push({ code: 'heat-flow-correction-failed', message: `heat-flow corrections not applied: ${(e as Error).message}` });
    return undefined;
  }
}
