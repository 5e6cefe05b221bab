import { fitLine, type LineFit } from './linear-fit.ts';
import type { CorrectedPoint, WellFlag } from './types.ts';

/** Default σ (°C) of the surface-temperature anchor: the ground surface is commonly 1–3 °C warmer than the mean
 * annual air temperature, and the regional mean hides local variation (common practice; this project's choice). */
export const DEFAULT_ANCHOR_SD_C = 2;
/** |standardized residual| above this flags a point as an outlier (about a 0.3 % two-sided tail of a normal). */
export const OUTLIER_THRESHOLD = 3;
/** Fewest points (data plus the anchor) for the outlier test to mean anything (two dof left after the line). */
export const MIN_POINTS_FOR_OUTLIER_TEST = 4;

export interface GradientOptions {
  /** Mean surface temperature (°C); with `anchor` it enters the fit as a weighted pseudo-point at depth 0. */
  surfaceTemperatureC?: number;
  /** Use the surface temperature as a weighted pseudo-point (default true when a surface temperature is given). */
  anchor?: boolean;
  /** σ of the anchor (°C), default DEFAULT_ANCHOR_SD_C. */
  anchorSdC?: number;
  /** 'flag' (default): outliers stay in the fit and are flagged; 'exclude': refit once without them, flagged. */
  outliers?: 'flag' | 'exclude';
}

export interface GradientFit {
  gradientCPerKm: number;
  seGradientCPerKm: number;
  /** Temperature of the fitted line at depth 0 (°C). */
  interceptC: number;
  seInterceptC: number;
  /** True when the surface-temperature pseudo-point was in the fit. */
  anchored: boolean;
  anchorTemperatureC?: number;
  anchorSdC?: number;
  /** Measured points in the fit (the anchor not counted). */
  nPoints: number;
  dof: number;
  /** χ²/dof with the stated σ (NaN when dof = 0); well above 1 means more scatter than the σ allow. */
  reducedChi2: number;
  /** Depth range of the measured points in the fit (m). */
  topM: number;
  bottomM: number;
  /** Standardized residual of each corrected point (aligned with the input points; NaN when not tested). */
  standardized: Float64Array;
  /** Standardized residual of the anchor (NaN without anchor). */
  anchorStandardized: number;
  flags: WellFlag[];
}

/**
 * Fits the temperature–depth line T(z) = T0 + g·z of one well by weighted least squares (weights 1/σ² from each
 * corrected point's σ), optionally anchored at the mean surface temperature as a weighted pseudo-point
 * (z = 0, T = Ts, σ = anchorSdC) — a soft anchor, not a constrained fit, so data that disagree with Ts show it
 * in the anchor's residual. The standard errors use the "Birge" scaling (σ are absolute; scatter beyond them
 * widens the errors, never narrows them). Outliers: internally studentized residual |r/(σ√(1 − h))| > 3, tested
 * only with four or more points; flagged, and with `outliers: 'exclude'` left out of one refit (still reported).
 * Points with `used = false` are not fitted. Returns null when the points (with the anchor) span fewer than two
 * depths; the caller reports why. Mutates `points[i].flags` / `.used` for flagged points. Gradient in °C/km.
 */
export function fitGradient(points: CorrectedPoint[], opts: GradientOptions = {}): GradientFit | null {
  const ts = opts.surfaceTemperatureC;
  const anchored = (opts.anchor ?? true) && ts !== undefined && Number.isFinite(ts);
  const anchorSd = opts.anchorSdC ?? DEFAULT_ANCHOR_SD_C;
  if (anchored && !(anchorSd > 0)) throw new RangeError('anchorSdC must be > 0 (°C)');
  const n = points.length + (anchored ? 1 : 0);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const sd = new Float64Array(n);
  const include = new Uint8Array(n);
  points.forEach((p, i) => {
    x[i] = p.depthM / 1000;
    y[i] = p.temperatureC;
    sd[i] = p.sdC;
    include[i] = p.used ? 1 : 0;
  });
  const a = points.length;
  if (anchored) {
    x[a] = 0;
    y[a] = ts;
    sd[a] = anchorSd;
    include[a] = 1;
  }
  const flags: WellFlag[] = ts !== undefined && Number.isFinite(ts) ? flagCold(points, ts) : [];
  let fit = fitLine(x, y, sd, 'birge', include);
  if (fit === null) return null;
  if (include.reduce((s, v) => s + v, 0) >= MIN_POINTS_FOR_OUTLIER_TEST) {
    const refit = screenOutliers(points, { x, y, sd, include }, fit, opts.outliers === 'exclude', flags);
    if (refit === null) return null;
    fit = refit;
    if (anchored && Math.abs(fit.standardized[a]) > OUTLIER_THRESHOLD) {
      flags.push({
        code: 'anchor-misfit',
        message: `the surface temperature ${ts} °C disagrees with the measurements (standardized residual ${fit.standardized[a].toFixed(1)})`,
      });
    }
  }
  let top = Infinity;
  let bottom = -Infinity;
  let nPoints = 0;
  for (let i = 0; i < a; i++) {
    if (include[i] !== 1) continue;
    nPoints++;
    top = Math.min(top, points[i].depthM);
    bottom = Math.max(bottom, points[i].depthM);
  }
  if (nPoints === 1)
    flags.push({
      code: 'single-measurement',
      message: 'one measured point: the gradient is the line from the surface anchor through it, with no check on scatter',
    });
  else if (fit.dof === 0) flags.push({ code: 'no-redundancy', message: 'two points define the line exactly: its error comes from the stated σ only' });
  if (!(fit.slope > 0))
    flags.push({ code: 'non-positive-gradient', message: `the fitted gradient is ${fit.slope.toFixed(2)} °C/km: no conductive heat flow can be derived` });
  return {
    gradientCPerKm: fit.slope,
    seGradientCPerKm: fit.seSlope,
    interceptC: fit.intercept,
    seInterceptC: fit.seIntercept,
    anchored,
    anchorTemperatureC: anchored ? ts : undefined,
    anchorSdC: anchored ? anchorSd : undefined,
    nPoints,
    dof: fit.dof,
    reducedChi2: fit.dof > 0 ? fit.chi2 / fit.dof : NaN,
    topM: top,
    bottomM: bottom,
    standardized: fit.standardized.slice(0, a),
    anchorStandardized: anchored ? fit.standardized[a] : NaN,
    flags,
  };
}

/** Flags used points deeper than the surface whose corrected temperature is below the surface temperature ts (°C). */
function flagCold(points: CorrectedPoint[], ts: number): WellFlag[] {
  const cold = points.filter((p) => p.used && p.depthM > 0 && p.temperatureC < ts);
  for (const p of cold) if (!p.flags.includes('below-surface-temperature')) p.flags.push('below-surface-temperature');
  if (cold.length === 0) return [];
  return [
    {
      code: 'below-surface-temperature',
      message: `${cold.length} corrected temperature${cold.length === 1 ? ' is' : 's are'} below the surface temperature ${ts} °C (at ${cold.map((p) => `${p.depthM} m`).join(', ')})`,
    },
  ];
}

/**
 * Flags the measured points (the first points.length of the line's data) whose studentized residual exceeds
 * OUTLIER_THRESHOLD; with `exclude` (and two points left) leaves them out and refits. Returns the fit to keep (null
 * when the refit has no line); pushes the well's flag onto `flags`.
 */
function screenOutliers(
  points: CorrectedPoint[],
  line: { x: Float64Array; y: Float64Array; sd: Float64Array; include: Uint8Array },
  fit: LineFit,
  excludeOutliers: boolean,
  flags: WellFlag[],
): LineFit | null {
  const { x, y, sd, include } = line;
  const out: number[] = [];
  for (let i = 0; i < points.length; i++) if (include[i] === 1 && Math.abs(fit.standardized[i]) > OUTLIER_THRESHOLD) out.push(i);
  if (out.length === 0) return fit;
  const exclude = excludeOutliers && include.reduce((s, v) => s + v, 0) - out.length >= 2;
  for (const i of out) {
    points[i].flags.push(exclude ? 'outlier-excluded' : 'outlier');
    if (exclude) {
      points[i].used = false;
      include[i] = 0;
    }
  }
  flags.push({
    code: exclude ? 'outlier-excluded' : 'outlier',
    message: `${out.length} point${out.length === 1 ? '' : 's'} with |standardized residual| > ${OUTLIER_THRESHOLD} (at ${out.map((i) => `${points[i].depthM} m`).join(', ')})${exclude ? ', left out of the refit' : ', kept in the fit'}`,
  });
  return exclude ? fitLine(x, y, sd, 'birge', include) : fit;
}
