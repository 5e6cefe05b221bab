import { erfc } from './erfc.ts';

/** One step of a surface-temperature history: at `yearsAgo` the mean surface temperature changed by `deltaC` (°C, warming positive). */
export interface ClimateStep {
  yearsAgo: number;
  deltaC: number;
}

/** Seconds in a Julian year (365.25 d; IAU), the year of `yearsAgo`. */
export const SECONDS_PER_YEAR = 365.25 * 86400;

/** Thermal diffusivity used when the user gives none (m²/s): a usual crustal rock value (common practice; rocks span about 0.5–1.5 × 10⁻⁶). */
export const DEFAULT_DIFFUSIVITY_M2S = 1e-6;

/** Throws a RangeError naming the first bad step or diffusivity. */
export function checkClimateHistory(steps: ClimateStep[], diffusivityM2s: number): void {
  if (!(diffusivityM2s > 0) || !Number.isFinite(diffusivityM2s)) throw new RangeError(`diffusivity must be > 0 m²/s, got ${diffusivityM2s}`);
  steps.forEach((s, i) => {
    if (!(s.yearsAgo > 0) || !Number.isFinite(s.yearsAgo)) throw new RangeError(`climate step ${i}: yearsAgo must be > 0, got ${s.yearsAgo}`);
    if (!Number.isFinite(s.deltaC)) throw new RangeError(`climate step ${i}: deltaC must be a finite number of °C, got ${s.deltaC}`);
  });
}

/**
 * Today's temperature disturbance (°C) at depth zM (m) left by surface-temperature steps: a half-space whose
 * surface temperature stepped by ΔTᵢ at time tᵢ ago carries ΔTᵢ·erfc(z / 2√(κtᵢ)) (Carslaw & Jaeger 1959, §2.4;
 * used for climate by Birch 1948 and Beck 1977). Steps add (the equation is linear).
 */
export function paleoDisturbanceC(zM: number, steps: ClimateStep[], diffusivityM2s: number): number {
  let t = 0;
  for (const s of steps) t += s.deltaC * erfc(zM / (2 * Math.sqrt(diffusivityM2s * s.yearsAgo * SECONDS_PER_YEAR)));
  return t;
}

/**
 * Disturbance of the gradient (°C/km) at depth zM (m): d/dz of paleoDisturbanceC,
 * −Σ ΔTᵢ·exp(−z²/4κtᵢ)/√(πκtᵢ) (same sources). A recent warming lowers today's shallow gradient.
 */
export function paleoGradientDisturbanceCPerKm(zM: number, steps: ClimateStep[], diffusivityM2s: number): number {
  let g = 0;
  for (const s of steps) {
    const kt = diffusivityM2s * s.yearsAgo * SECONDS_PER_YEAR;
    g -= (s.deltaC * Math.exp((-zM * zM) / (4 * kt))) / Math.sqrt(Math.PI * kt);
  }
  return g * 1000;
}

/** What a paleoclimatic correction did to one measured interval. */
export interface PaleoclimateCorrection {
  method: string;
  topM: number;
  bottomM: number;
  diffusivityM2s: number;
  steps: ClimateStep[];
  /** Mean disturbance of the gradient over [topM, bottomM] (°C/km): the measured gradient carries it. */
  gradientDisturbanceCPerKm: number;
}

/**
 * Paleoclimatic correction of a gradient measured over [topM, bottomM] (m below ground): the mean of the
 * gradient disturbance over the interval, [D(bottom) − D(top)]/(bottom − top) with D = paleoDisturbanceC (exact,
 * since the mean of a derivative is the difference quotient); a zero-length interval takes the point value.
 * The corrected gradient is measured − gradientDisturbanceCPerKm.
 */
export function paleoclimateCorrection(topM: number, bottomM: number, steps: ClimateStep[], diffusivityM2s: number): PaleoclimateCorrection {
  checkClimateHistory(steps, diffusivityM2s);
  if (!(topM >= 0) || !(bottomM >= topM)) throw new RangeError(`the interval must satisfy 0 ≤ top ≤ bottom (m), got ${topM}–${bottomM}`);
  const g =
    bottomM - topM > 1e-9
      ? ((paleoDisturbanceC(bottomM, steps, diffusivityM2s) - paleoDisturbanceC(topM, steps, diffusivityM2s)) / (bottomM - topM)) * 1000
      : paleoGradientDisturbanceCPerKm(topM, steps, diffusivityM2s);
  return {
    method:
      'half-space response to surface-temperature steps, ΔT·erfc(z/2√(κt)), averaged over the interval (Birch 1948; Beck 1977; Carslaw & Jaeger 1959 §2.4)',
    topM,
    bottomM,
    diffusivityM2s,
    steps: steps.map((s) => ({ ...s })),
    gradientDisturbanceCPerKm: g,
  };
}
