import type { Grid } from '../grid/grid.ts';
import { paleoclimateCorrection, type ClimateStep, type PaleoclimateCorrection } from './paleoclimate.ts';
import { defaultTopographyRadiusKm, topographicFactor, topographicallyCorrectedGradient, type TopographicFactor } from './topography.ts';

/** Which heat-flow corrections to apply; each is optional. */
export interface HeatFlowCorrectionOptions {
  /** Surface-temperature history (steps) and the rock's thermal diffusivity (m²/s). */
  paleoclimate?: { steps: ClimateStep[]; diffusivityM2s: number };
  /** Lon/lat terrain (m), the surface-temperature lapse rate (°C/km) and the radius of terrain used (km; default defaultTopographyRadiusKm). */
  topography?: { dem: Grid<Float32Array | Float64Array>; lapseRateCPerKm: number; radiusKm?: number };
}

/** One applied correction and its size. */
export interface HeatFlowCorrection {
  kind: 'paleoclimate' | 'topographic';
  method: string;
  /** Corrected − measured gradient (°C/km). */
  gradientChangeCPerKm: number;
  /** Corrected − measured heat flow (mW/m²): the gradient change × the interval's conductivity. */
  heatFlowChangeMWm2: number;
  paleoclimate?: PaleoclimateCorrection;
  topography?: TopographicFactor & { lapseRateCPerKm: number };
}

/** The corrections of one measured interval. */
export interface IntervalCorrection {
  topM: number;
  bottomM: number;
  measuredGradientCPerKm: number;
  correctedGradientCPerKm: number;
  conductivityWmK: number;
  corrections: HeatFlowCorrection[];
  /** Sum of the corrections' heat-flow changes (mW/m²). */
  totalHeatFlowChangeMWm2: number;
  /** Cautions on the corrections (terrain coverage, kernel beyond the radius). */
  notes: string[];
}

/**
 * One line naming the corrections of `opts` with their inputs (for reports and provenance); empty when none.
 * Paleoclimatic: Birch 1948, Beck 1977; topographic: Birch 1950.
 */
export function correctionMethodText(opts: HeatFlowCorrectionOptions): string {
  const parts: string[] = [];
  if (opts.paleoclimate)
    parts.push(
      `paleoclimatic: ΔT·erfc(z/2√(κt)) for steps ${JSON.stringify(opts.paleoclimate.steps)}, κ = ${opts.paleoclimate.diffusivityM2s} m²/s, averaged over each interval (Birch 1948; Beck 1977)`,
    );
  if (opts.topography)
    parts.push(`topographic: reference plane with (G − β)·Δh and its Poisson response (Birch 1950), β = ${opts.topography.lapseRateCPerKm} °C/km`);
  return parts.join('; ');
}

const TOPO_METHOD =
  'reference plane with surface temperature (G − β)·Δh and its half-space (Poisson) response, exact per terrain cell (Birch 1950, after Jeffreys 1938)';

/**
 * Corrects a gradient measured over [topM, bottomM] (m below ground) at lon/lat: first the paleoclimatic
 * disturbance is removed (paleoclimate.ts), then the topographic one (topography.ts) from that gradient; each
 * change of gradient times the interval's conductivity (W/m/K) is that correction's change of heat flow
 * (°C/km × W/m/K = mW/m²). Notes say where the terrain does not cover the radius or the kernel reaches beyond it.
 */
export function correctIntervalGradient(
  input: { lonLat: [number, number]; topM: number; bottomM: number; gradientCPerKm: number; conductivityWmK: number },
  opts: HeatFlowCorrectionOptions,
): IntervalCorrection {
  const { topM, bottomM, conductivityWmK: k } = input;
  if (!(k > 0)) throw new RangeError(`conductivity must be > 0 W/m/K, got ${k}`);
  const corrections: HeatFlowCorrection[] = [];
  const notes: string[] = [];
  let g = input.gradientCPerKm;
  if (opts.paleoclimate) {
    const p = paleoclimateCorrection(topM, bottomM, opts.paleoclimate.steps, opts.paleoclimate.diffusivityM2s);
    const dg = -p.gradientDisturbanceCPerKm;
    corrections.push({ kind: 'paleoclimate', method: p.method, gradientChangeCPerKm: dg, heatFlowChangeMWm2: dg * k, paleoclimate: p });
    g += dg;
  }
  if (opts.topography) {
    const t = opts.topography;
    const radiusKm = t.radiusKm ?? defaultTopographyRadiusKm(bottomM);
    const f = topographicFactor(t.dem, input.lonLat[0], input.lonLat[1], topM, bottomM, radiusKm);
    const corrected = topographicallyCorrectedGradient(g, f.factor, t.lapseRateCPerKm);
    const dg = corrected - g;
    corrections.push({
      kind: 'topographic',
      method: TOPO_METHOD,
      gradientChangeCPerKm: dg,
      heatFlowChangeMWm2: dg * k,
      topography: { ...f, lapseRateCPerKm: t.lapseRateCPerKm },
    });
    if (f.coverage < 0.99)
      notes.push(`the terrain covers ${(f.coverage * 100).toFixed(0)} % of the ${+radiusKm.toFixed(1)} km radius; the rest is taken as level with the site`);
    if (f.kernelBeyondRadius > 0.1)
      notes.push(
        `${(f.kernelBeyondRadius * 100).toFixed(0)} % of the topographic kernel at ${bottomM.toFixed(0)} m lies beyond ${+radiusKm.toFixed(1)} km and is ignored`,
      );
    g = corrected;
  }
  return {
    topM,
    bottomM,
    measuredGradientCPerKm: input.gradientCPerKm,
    correctedGradientCPerKm: g,
    conductivityWmK: k,
    corrections,
    totalHeatFlowChangeMWm2: corrections.reduce((s, c) => s + c.heatFlowChangeMWm2, 0),
    notes,
  };
}
