import type { GridPlan } from './gridKernel.ts';
import type { CrossValidation } from './crossValidation.ts';
import type { OutputGridOptions } from './projection.ts';
import type { DriftKind } from './drift.ts';
import type { ExternalDriftGrid } from './externalDrift.ts';
import type { Anisotropy, EmpiricalLag, VariogramModel, VariogramModelName } from './variogram.ts';
import type { AnisotropyReport } from './anisotropy-select.ts';
import type { DirectionChoice } from './directional-variogram.ts';

/** The types of the interpolation engine's library entry points (interpolate.ts). */

export interface PointData {
  ids: string[];
  lon: ArrayLike<number>;
  lat: ArrayLike<number>;
  values: ArrayLike<number>;
  /** Data quality per point (`high|medium|low`), for IDW multipliers. */
  quality?: (string | null | undefined)[];
  /** Measurement standard deviation per point (value units); NaN or absent = none. */
  errorSd?: ArrayLike<number> | null;
}

/** Default IDW multipliers by quality: a project choice ("common practice": halve the weight per class down). */
export const DEFAULT_QUALITY_WEIGHTS = { high: 1, medium: 0.5, low: 0.25 } as const;

export interface InterpolationOptions {
  method: 'idw' | 'kriging';
  /** Neighbours per cell, or 'all'. Default 12 (IDW), 16 (kriging). */
  neighbors?: number | 'all';
  radiusKm?: number;
  /** IDW power (default 2). */
  power?: number;
  /** Use quality multipliers in IDW. */
  useQuality?: boolean;
  qualityWeights?: Partial<Record<'high' | 'medium' | 'low', number>>;
  /** 'auto' (default): best leave-one-out RMSE among the three models; a model name: fitted; an object: fixed. */
  variogram?: 'auto' | VariogramModelName | VariogramModel;
  lagKm?: number;
  maxLagKm?: number;
  /** Geometric anisotropy (kriging): given, none (null), or 'auto': estimated and used when it cross-validates better (anisotropy-select.ts). */
  anisotropy?: Anisotropy | 'auto' | null;
  /** With anisotropy 'auto': the direction classes of the directional semivariograms it is estimated from (defaults: directional-variogram.ts). */
  directions?: DirectionChoice;
  /**
   * Drift of the mean (kriging): 'none' (ordinary kriging, default), 'linear' or 'quadratic' in the coordinates
   * (universal kriging, drift.ts; the variogram is fitted on the residuals of a least-squares trend), or 'auto': the
   * one with the lowest leave-one-out RMSE (trend-select.ts); 'external': kriging with the external drift of
   * `externalDrift` (auto then compares it too).
   */
  trend?: DriftKind | 'auto';
  /** The covariate grid of an external drift (externalDrift.ts). */
  externalDrift?: ExternalDriftGrid | null;
  /**
   * Measurement error done once: each point's errorSd² goes on the kriging diagonal, and the fitted (or given)
   * nugget is split into the known error part (the mean error variance, capped at the nugget, with a warning when
   * the cap binds) and the micro-scale part; estimates and sd are then of the true field (error-filtered), and
   * cross-validation standardizes by the kriging variance plus the point's own error variance.
   */
  measurementError?: boolean;
  /** Fault traces: polylines of [lon, lat]. */
  faults?: number[][][] | null;
  maxDistanceKm?: number | null;
  /** Region rings of [lon, lat] (outer rings and holes, even–odd). */
  region?: number[][][] | null;
  grid?: OutputGridOptions;
  /** Kriging standard-deviation grid (default true for kriging). */
  sd?: boolean;
  /** Leave-one-out cross-validation (default true). */
  crossValidation?: boolean;
  /** Largest grid (cells); default 25,000,000. */
  maxCells?: number;
  /** Largest global kriging system (points); default 5000. */
  maxGlobal?: number;
  /** Units of the values, e.g. 'mW/m²'. */
  units?: string;
}

export interface VariogramReport {
  model: VariogramModelName;
  nugget: number;
  partialSill: number;
  sill: number;
  rangeKm: number;
  /** 'fitted' (Cressie WLS), or 'fixed' (given by the user). */
  source: 'fitted' | 'fixed';
  anisotropy: Anisotropy | null;
  lagKm: number | null;
  maxLagKm: number | null;
  /** Points used for the empirical semivariogram (a seeded subset above 4000). */
  empiricalPoints: number;
  empirical: EmpiricalLag[];
  /**
   * With measurement errors: the nugget split into the sites' mean error variance (value units², capped at the
   * nugget) and the micro-scale remainder; the kriging uses the micro-scale nugget plus each site's own error
   * variance on its diagonal.
   */
  nuggetSplit?: { measurementErrorVariance: number; microScale: number; meanClaimedErrorVariance: number; capped: boolean };
  /** With 'auto': each candidate and its leave-one-out RMSE. */
  candidates?: { model: VariogramModelName; nugget: number; partialSill: number; rangeKm: number; cvRmse: number }[];
  /** The drift of the mean the kriging used, and how it was chosen (always present for kriging). */
  trend?: TrendReport;
  /** With anisotropy 'auto': the directional semivariograms, the variogram map, the fitted angle and ratio, and whether they were used. */
  anisotropyEstimate?: AnisotropyReport;
}

/** The drift of a kriging (universal kriging with a polynomial drift in the coordinates, or none). */
export interface TrendReport {
  kind: DriftKind;
  /** 'given' (the request named it) or 'cross-validation' (--trend auto: lowest leave-one-out RMSE). */
  selectedBy: 'given' | 'cross-validation';
  /**
   * The ordinary-least-squares trend whose residuals the variogram was fitted on (null for none): coefficients of
   * the monomials 1, u, v[, u², u·v, v²] with u = (x − cxKm)/scaleKm, v = (y − cyKm)/scaleKm, x east and y north in
   * km of the local transverse Mercator projection centred at `originLonLat`; and the fraction of the values'
   * variance it explains. The kriging itself re-estimates the drift locally (generalized least squares).
   */
  ols: {
    cxKm: number;
    cyKm: number;
    scaleKm: number;
    originLonLat: [number, number];
    coefficients: number[];
    explainedVarianceFraction: number;
    /**
     * An external drift: the covariate's name, its mean and sd at the data (the terms are 1 and (s − mean)/sd), and
     * the least-squares trend in its own units, value = intercept + slope·s.
     */
    covariate?: { name: string; mean: number; sd: number; intercept: number; slope: number };
  } | null;
  /** With 'auto': each trend's best variogram and its leave-one-out statistics (null: the trend could not be fitted). */
  candidates?: { kind: DriftKind; model: VariogramModelName | null; cvRmse: number | null; msdr: number | null; problem: string | null }[];
}

export interface PreparedInterpolation {
  plan: GridPlan;
  cellKm: number;
  /** Smallest and largest ground side of a cell over the grid, km (shared/geodesy/ground-cell.ts). */
  groundCellKmRange: [number, number];
  ids: string[];
  variogram: VariogramReport | null;
  crossValidation: CrossValidation | null;
  warnings: string[];
  timingsMs: Record<string, number>;
  units: string;
}
