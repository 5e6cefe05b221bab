import type { DriftKind } from './drift.ts';
import { estimateAnisotropy, type AnisotropyEstimate } from './anisotropy.ts';
import type { DirectionChoice } from './directional-variogram.ts';
import { krigingForTrend, trendResiduals, type KrigingChoice, type KrigingContext } from './variogramSelect.ts';
import type { VariogramModelName } from './variogram.ts';

/** An estimated anisotropy as the variogram report carries it: the estimate, and whether the kriging used it. */
export interface AnisotropyReport extends AnisotropyEstimate {
  /** The kriging used the estimated angle and ratio (true) or stayed isotropic (false). */
  used: boolean;
  selectedBy: 'cross-validation';
  /** Leave-one-out RMSE (value units) of the kriging without and with the estimated anisotropy. */
  cvRmse: { isotropic: number; anisotropic: number };
}

/** Why direction classes need `anisotropy: 'auto'`, for the error of a request that gives them without it. */
export const DIRECTIONS_NEED_AUTO =
  'the direction classes choose the directional semivariograms that anisotropy auto is estimated from, and nothing else reads them: use them with anisotropy auto, or drop them';

/** The direction settings a request gives (azimuths, tolerance, bandwidth) while its anisotropy is not 'auto'; empty when none. */
export function directionsWithoutAuto(anisotropy: unknown, d: DirectionChoice | undefined): (keyof DirectionChoice)[] {
  if (d === undefined || anisotropy === 'auto') return [];
  return (['azimuthsDeg', 'toleranceDeg', 'bandwidthKm'] as const).filter((k) => d[k] !== undefined && d[k] !== null);
}

/**
 * The kriging plan for one drift with the request's anisotropy: given (ANGLE, RATIO), none, or 'auto': the geometric
 * anisotropy is estimated from directional semivariograms of the values (of the drift's least-squares residuals with
 * a drift; anisotropy.ts), and the kriging is prepared twice, isotropic and with the estimated angle and ratio (its
 * variogram refitted in the rotated, stretched coordinates); the one with the lower leave-one-out RMSE is used, as
 * `--trend auto` chooses a drift (Isaaks & Srivastava 1989, ch. 15). The report carries the estimate either way.
 */
export function krigingWithAnisotropy(ctx: KrigingContext, trend: DriftKind, forceCv: boolean): KrigingChoice {
  if (ctx.opts.anisotropy !== 'auto') return krigingForTrend(ctx, trend, forceCv);
  const iso = krigingForTrend({ ...ctx, basePlan: { ...ctx.basePlan, anisotropy: null } }, trend, true);
  const { residuals } = trendResiduals({ ...ctx.basePlan, trend }, trend);
  const vg = ctx.opts.variogram ?? 'auto';
  const model: VariogramModelName | 'auto' = typeof vg === 'object' ? vg.model : vg;
  const est = estimateAnisotropy(ctx.basePlan.x, ctx.basePlan.y, residuals, {
    model,
    lagKm: ctx.opts.lagKm,
    maxLagKm: ctx.opts.maxLagKm,
    ...ctx.opts.directions,
  });
  const aniso = krigingForTrend({ ...ctx, basePlan: { ...ctx.basePlan, anisotropy: { angleDeg: est.angleDeg, ratio: est.ratio } } }, trend, true);
  const used = aniso.cv!.rmse < iso.cv!.rmse;
  const chosen = used ? aniso : iso;
  const report: AnisotropyReport = { ...est, used, selectedBy: 'cross-validation', cvRmse: { isotropic: iso.cv!.rmse, anisotropic: aniso.cv!.rmse } };
  const warnings = est.limit === null || est.limit === undefined ? chosen.warnings : [...chosen.warnings, est.limit];
  return {
    ...chosen,
    warnings,
    report: { ...chosen.report, anisotropyEstimate: report },
    cv: ctx.wantCv || forceCv ? chosen.cv : null,
    variogramMs: iso.variogramMs + aniso.variogramMs,
    cvMs: iso.cvMs + aniso.cvMs,
  };
}
