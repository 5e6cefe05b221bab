import { fitLine } from './linear-fit.ts';

export interface HornerFit {
  /** Extrapolated formation temperature T∞ (°C): the intercept of T against log10[(tc + Δt)/Δt]. */
  temperatureC: number;
  /** Standard error of T∞ from the scatter about the line (°C); NaN with exactly two distinct points. */
  seTemperatureC: number;
  /** The Horner slope C (°C per log10 cycle), T = T∞ − C·x; positive when the well warms back up. */
  slopeC: number;
  /** Horner abscissae x = log10[(tc + Δt)/Δt] of the points, in input order. */
  hornerX: Float64Array;
  /** Residuals T − (T∞ − C·x), °C. */
  residualsC: Float64Array;
  n: number;
}

/**
 * Horner-plot extrapolation of bottom-hole temperatures to the undisturbed formation temperature:
 * T(Δt) = T∞ − C·log10[(tc + Δt)/Δt], fitted by ordinary least squares of T against x = log10[(tc + Δt)/Δt]; the
 * intercept (x → 0, Δt → ∞) is T∞, its standard error the classical one, s·√(1/n + x̄²/Sxx), s² = SSR/(n − 2)
 * (the line-source model of Horner 1951, applied to BHTs as in Dowdle & Cobb 1975 — from memory).
 * Each point has its own circulation time tc (h) and time since circulation Δt (h); both must be > 0.
 * Returns null when fewer than two distinct x values are given (no line).
 */
export function hornerFit(circulationHours: ArrayLike<number>, hoursSinceCirculation: ArrayLike<number>, temperatureC: ArrayLike<number>): HornerFit | null {
  const n = temperatureC.length;
  if (circulationHours.length !== n || hoursSinceCirculation.length !== n) throw new RangeError('hornerFit: tc, Δt and T must have the same length');
  const x = new Float64Array(n);
  const ones = new Float64Array(n).fill(1);
  for (let i = 0; i < n; i++) {
    const tc = circulationHours[i];
    const dt = hoursSinceCirculation[i];
    if (!(tc > 0) || !(dt > 0) || !Number.isFinite(tc) || !Number.isFinite(dt)) throw new RangeError(`hornerFit: point ${i} needs tc > 0 and Δt > 0 (hours)`);
    x[i] = Math.log10((tc + dt) / dt);
  }
  const fit = fitLine(x, temperatureC, ones, 'residual');
  if (fit === null) return null;
  return {
    temperatureC: fit.intercept,
    seTemperatureC: fit.seIntercept,
    slopeC: -fit.slope,
    hornerX: x,
    residualsC: fit.residuals,
    n,
  };
}
