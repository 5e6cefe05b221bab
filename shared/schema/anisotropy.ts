import { z } from 'zod';
import { VARIOGRAM_MODELS } from '../interp/variogram.ts';
import type { AnisotropyReport } from '../interp/anisotropy-select.ts';

/**
 * The estimated geometric anisotropy as a run summary and the CLI's JSON carry it (shared/interp/anisotropy.ts,
 * anisotropy-select.ts): each direction's empirical semivariances with the fitted model's range along it, the
 * variogram map, the fitted angle and ratio with the fit's weighted residual, and whether the kriging used them.
 */
const lagSchema = z.strictObject({ lagKm: z.number(), gamma: z.number(), pairs: z.number().int().min(0) });

export const anisotropyEstimateSchema = z.strictObject({
  model: z.enum(VARIOGRAM_MODELS),
  /** value units² */
  nugget: z.number().min(0),
  partialSill: z.number().min(0),
  majorRangeKm: z.number().gt(0),
  minorRangeKm: z.number().gt(0),
  /** Azimuth of the major axis, degrees clockwise from north, in [0, 180) (the convention of ANGLE_DEG,RATIO). */
  angleDeg: z.number().min(0).max(180),
  /** Minor/major range ratio. */
  ratio: z.number().gt(0).max(1),
  /** Cressie's weighted least-squares criterion Σ N·(γ̂/γ − 1)² over every direction and lag class, at the fit. */
  weightedResidual: z.number(),
  /** The same criterion for the best isotropic model on the same semivariances. */
  isotropicWeightedResidual: z.number(),
  /** Why the fit stopped at a bound (major range at its cap, ratio at its floor), or null; absent in summaries stored before it was reported. */
  limit: z.string().nullable().optional(),
  /** Half-width of each direction class in angle (degrees) and the bandwidth (km; null: none). */
  toleranceDeg: z.number(),
  bandwidthKm: z.number().nullable(),
  lagKm: z.number(),
  maxLagKm: z.number(),
  pointsUsed: z.number().int().min(0),
  directions: z.array(
    z.strictObject({
      azimuthDeg: z.number(),
      pairs: z.number().int().min(0),
      /** The fitted model's range along this azimuth, km. */
      rangeKm: z.number(),
      /** The same model shape fitted to this direction alone, km (null: under two lag classes). */
      separateRangeKm: z.number().nullable(),
      weightedResidual: z.number(),
      lags: z.array(lagSchema),
    }),
  ),
  /** γ̂ on a square grid of lag vectors: `size` × `size` cells of `cellKm`, centres from −cutoff to +cutoff; row 0 north, column 0 west. */
  map: z.strictObject({
    cutoffKm: z.number(),
    cellKm: z.number(),
    size: z.number().int().min(1),
    gamma: z.array(z.number().nullable()),
    pairs: z.array(z.number().int().min(0)),
    pointsUsed: z.number().int().min(0),
  }),
  /** The kriging used the estimated angle and ratio (lower leave-one-out RMSE), or stayed isotropic. */
  used: z.boolean(),
  selectedBy: z.enum(['cross-validation']),
  cvRmse: z.strictObject({ isotropic: z.number(), anisotropic: z.number() }),
});
export type AnisotropyEstimateSummary = z.infer<typeof anisotropyEstimateSchema>;

/** The library's report in the summary's shape (the lags' lag-vector moments are left out). */
export function anisotropyEstimateSummary(a: AnisotropyReport): AnisotropyEstimateSummary {
  return { ...a, directions: a.directions.map((d) => ({ ...d, lags: d.lags.map((l) => ({ lagKm: l.lagKm, gamma: l.gamma, pairs: l.pairs })) })) };
}
