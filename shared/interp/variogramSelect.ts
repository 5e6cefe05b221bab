import { InputError } from '../errors.ts';
import { createGridRuntime, planDriftFrame, type GridPlan } from './gridKernel.ts';
import { crossValidateKriging, type CrossValidation } from './crossValidation.ts';
import { driftTerms, fitDriftOls, type DriftKind } from './drift.ts';
import type { InterpolationOptions, TrendReport, VariogramReport } from './interpTypes.ts';
import {
  VARIOGRAM_MODELS,
  anisotropyMatrix,
  transformCoords,
  empiricalVariogram,
  fitVariogram,
  checkVariogram,
  type EmpiricalLag,
  type VariogramModel,
  type VariogramModelName,
} from './variogram.ts';

/**
 * The kriging half of preparing an interpolation for one drift: the variogram (fixed, or fitted by Cressie's
 * weighted least squares, the model chosen by leave-one-out RMSE with 'auto'), fitted on the values, or with a
 * drift on the residuals of an ordinary-least-squares trend; the measurement-error split of the nugget; and the
 * leave-one-out cross-validation.
 *
 * Residual variogram: the variogram of OLS residuals is biased low, most at large lags, because the residuals are
 * the data's deviations from a trend fitted to the same data (Matheron 1971; Cressie 1993, Statistics for Spatial
 * Data, §3.4.3; Armstrong 1984, "Problems with universal kriging"). It is the common practice (Goovaerts 1997,
 * §5.3) and what is used here; the bias makes the kriging standard deviation somewhat optimistic, which the
 * cross-validation's MSDR shows.
 */

/** What every candidate shares: the plan without a variogram, the merged points' ids and error variances. */
export interface KrigingContext {
  basePlan: GridPlan;
  ids: string[];
  errorVariance: Float64Array | null;
  opts: InterpolationOptions;
  /** Cross-validate the chosen model (the request's crossValidation). */
  wantCv: boolean;
}

export interface KrigingChoice {
  plan: GridPlan;
  report: VariogramReport;
  cv: CrossValidation | null;
  warnings: string[];
  variogramMs: number;
  cvMs: number;
}

const now = () => (typeof performance !== 'undefined' ? performance.now() : Date.now());

/** The mean of the error variances (0 without); the known part of the nugget is this, capped at the nugget. */
function meanErrorVariance(ev: Float64Array | null): number {
  if (ev === null) return 0;
  let s = 0;
  for (let i = 0; i < ev.length; i++) s += ev[i];
  return s / ev.length;
}

/** Throws unless the points and the neighbourhood can carry a drift of this kind. */
function checkTrendFeasible(trend: DriftKind, n: number, neighbors: number): void {
  const p = driftTerms(trend);
  if (trend === 'none') return;
  if (n <= p + 1)
    throw new InputError(
      `a ${trend} trend has ${p} coefficients and needs at least ${p + 2} distinct points, got ${n}`,
      [{ field: 'trend', problem: `use a lower-order trend or none` }],
      'bad_option',
    );
  if (neighbors <= p)
    throw new InputError(
      `a ${trend} trend needs more than ${p} neighbours per location, got ${neighbors}`,
      [{ field: 'neighbors', problem: `expected > ${p} (default 16)` }],
      'bad_option',
    );
}

/** The OLS trend of the values in the plan's local km and its residuals (the values themselves for none). */
export function trendResiduals(plan: GridPlan, trend: DriftKind): { residuals: Float64Array; ols: TrendReport['ols'] } {
  if (trend === 'none') return { residuals: plan.z, ols: null };
  const f = planDriftFrame(plan, trend, plan.x, plan.y);
  const fit = fitDriftOls(f, plan.x, plan.y, plan.z);
  if (fit === null)
    throw new InputError(
      `the ${trend} trend cannot be fitted: the points do not determine it (too few, or on a line)`,
      [{ field: 'trend', problem: 'use a lower-order trend or none' }],
      'degenerate_trend',
    );
  const n = plan.z.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += plan.z[i];
  mean /= n;
  let tss = 0;
  for (let i = 0; i < n; i++) tss += (plan.z[i] - mean) ** 2;
  const ols: NonNullable<TrendReport['ols']> = {
    cxKm: f.cxKm,
    cyKm: f.cyKm,
    scaleKm: f.scaleKm,
    originLonLat: [plan.projection.lon0, plan.projection.lat0],
    coefficients: fit.coefficients,
    explainedVarianceFraction: tss > 0 ? 1 - fit.rss / tss : 0,
  };
  const cv = f.covariate;
  if (cv !== undefined) {
    const [a0, a1] = fit.coefficients;
    ols.covariate = { name: plan.covariate!.name, mean: cv.mean, sd: cv.scale, intercept: a0 - (a1 * cv.mean) / cv.scale, slope: a1 / cv.scale };
  }
  return { residuals: fit.residuals, ols };
}

/** Leave-one-out cross-validation of a model (nugget already split) with the plan's drift. */
function crossValidate(ctx: KrigingContext, plan: GridPlan, model: VariogramModel): CrossValidation {
  const rt = createGridRuntime({ ...plan, variogram: model, grid: { ...plan.grid, width: 1, height: 1 }, region: null, maxDistanceKm: null });
  return crossValidateKriging(ctx.ids, rt.tx, rt.ty, plan.z, rt.kriging!, model, ctx.errorVariance, rt.hasBarrier, plan.radiusKm, rt.drift);
}

/** The empirical semivariogram of `values`, with the errors a fit would meet turned into InputErrors. */
function empiricalForFit(x: Float64Array, y: Float64Array, values: Float64Array, opts: InterpolationOptions, trend: DriftKind) {
  const n = values.length;
  let zmin = Infinity,
    zmax = -Infinity;
  for (let i = 0; i < n; i++) {
    zmin = Math.min(zmin, values[i]);
    zmax = Math.max(zmax, values[i]);
  }
  const what = trend === 'none' ? 'values' : `residuals of the ${trend} trend`;
  if (!(zmax > zmin))
    throw new InputError(
      `all ${n} ${what} are equal (${zmin}): the semivariogram is flat and cannot be fitted`,
      [{ field: 'values', problem: 'kriging needs varying values, or give a fixed --variogram MODEL:NUGGET,PARTIAL_SILL,RANGE_KM' }],
      'degenerate_variogram',
    );
  if (opts.lagKm !== undefined && !(opts.lagKm > 0))
    throw new InputError(`lagKm must be > 0, got ${opts.lagKm}`, [{ field: 'lagKm', problem: 'expected > 0' }], 'bad_option');
  if (opts.maxLagKm !== undefined && !(opts.maxLagKm > 0))
    throw new InputError(`maxLagKm must be > 0, got ${opts.maxLagKm}`, [{ field: 'maxLagKm', problem: 'expected > 0' }], 'bad_option');
  const emp = empiricalVariogram(x, y, values, { lagKm: opts.lagKm, maxLagKm: opts.maxLagKm });
  if (emp.lags.length < 2)
    throw new InputError(
      `the empirical semivariogram has ${emp.lags.length} non-empty lag(s); at least 2 are needed to fit a model`,
      [{ field: 'lagKm', problem: 'use a smaller --lag-km or a larger --max-lag-km, or give a fixed --variogram' }],
      'degenerate_variogram',
    );
  if (!emp.lags.some((l) => l.gamma > 0))
    throw new InputError(
      `the empirical semivariogram of the ${what} is zero at every lag: nothing to fit`,
      [{ field: 'values', problem: 'give a fixed variogram model' }],
      'degenerate_variogram',
    );
  return emp;
}

/** Fits each candidate model, cross-validating when the choice or the request needs it; the best by LOO RMSE. */
function fitModels(
  ctx: KrigingContext,
  plan: GridPlan,
  lags: EmpiricalLag[],
  needCv: boolean,
  split: (m: VariogramModel) => VariogramModel,
): { model: VariogramModel; cv: CrossValidation | null; candidates: NonNullable<VariogramReport['candidates']>; cvMs: number } {
  const vg = ctx.opts.variogram ?? 'auto';
  const models: VariogramModelName[] = vg === 'auto' ? [...VARIOGRAM_MODELS] : [vg as VariogramModelName];
  const candidates: NonNullable<VariogramReport['candidates']> = [];
  let best: { m: VariogramModel; cv: CrossValidation | null; score: number } | null = null;
  let cvMs = 0;
  for (const name of models) {
    const f = fitVariogram(name, lags);
    const m: VariogramModel = { model: name, nugget: f.nugget, partialSill: f.partialSill, rangeKm: f.rangeKm };
    let c: CrossValidation | null = null;
    let score = f.objective;
    if (vg === 'auto' || needCv) {
      const t3 = now();
      c = crossValidate(ctx, plan, split(m));
      cvMs += now() - t3;
      score = c.rmse;
    }
    candidates.push({ ...m, cvRmse: c?.rmse ?? NaN });
    if (best === null || score < best.score) best = { m, cv: c, score };
  }
  return { model: best!.m, cv: best!.cv, candidates, cvMs };
}

/**
 * The variogram, nugget split and cross-validation for kriging with drift `trend` ('none' = ordinary kriging).
 * `forceCv` cross-validates even when the request did not ask (the trend choice needs it).
 */
export function krigingForTrend(ctx: KrigingContext, trend: DriftKind, forceCv: boolean): KrigingChoice {
  const t2 = now();
  const base: GridPlan = { ...ctx.basePlan, trend };
  checkTrendFeasible(trend, base.z.length, base.neighbors);
  const warnings: string[] = [];
  const am = anisotropyMatrix(base.anisotropy);
  const t = base.anisotropy ? transformCoords(am, base.x, base.y) : { x: base.x, y: base.y };
  const { residuals, ols } = trendResiduals(base, trend);
  const meanEv = meanErrorVariance(ctx.errorVariance);
  const split = (model: VariogramModel): VariogramModel =>
    ctx.errorVariance === null ? model : { ...model, nugget: model.nugget - Math.min(meanEv, model.nugget) };
  const needCv = ctx.wantCv || forceCv;
  const vg = ctx.opts.variogram ?? 'auto';
  let report: VariogramReport;
  let cv: CrossValidation | null = null;
  let cvMs = 0;
  if (typeof vg === 'object') {
    try {
      checkVariogram(vg);
    } catch (e) {
      throw new InputError(`bad variogram: ${(e as Error).message}`, [{ field: 'variogram', problem: (e as Error).message }], 'bad_option');
    }
    report = {
      ...vg,
      sill: vg.nugget + vg.partialSill,
      source: 'fixed',
      anisotropy: base.anisotropy,
      lagKm: null,
      maxLagKm: null,
      empiricalPoints: 0,
      empirical: [],
    };
    try {
      const emp = empiricalVariogram(t.x, t.y, residuals, { lagKm: ctx.opts.lagKm, maxLagKm: ctx.opts.maxLagKm });
      Object.assign(report, { empirical: emp.lags, lagKm: emp.lagKm, maxLagKm: emp.maxLagKm, empiricalPoints: emp.pointsUsed });
    } catch {
      /* empirical points are informative only for a fixed model */
    }
    if (needCv) {
      const t3 = now();
      cv = crossValidate(ctx, base, split(vg));
      cvMs = now() - t3;
    }
  } else {
    const emp = empiricalForFit(t.x, t.y, residuals, ctx.opts, trend);
    const fit = fitModels(ctx, base, emp.lags, needCv, split);
    const m = fit.model;
    cv = needCv ? fit.cv : null;
    cvMs = fit.cvMs;
    if (m.rangeKm >= 10 * Math.max(...emp.lags.map((l) => l.lagKm)) * (1 - 1e-9))
      warnings.push(
        `the fitted range reached its limit (${m.rangeKm.toFixed(0)} km, 10 × the largest lag): the semivariogram has no sill within the lags (${trend === 'none' ? 'a trend? try --trend linear or auto' : 'a stronger trend?'}); treat the standard deviation with care`,
      );
    report = {
      ...m,
      sill: m.nugget + m.partialSill,
      source: 'fitted',
      anisotropy: base.anisotropy,
      lagKm: emp.lagKm,
      maxLagKm: emp.maxLagKm,
      empiricalPoints: emp.pointsUsed,
      empirical: emp.lags,
    };
    if (vg === 'auto') report.candidates = fit.candidates;
  }
  report.trend = { kind: trend, selectedBy: 'given', ols };
  const plan: GridPlan = {
    ...base,
    variogram: split({ model: report.model, nugget: report.nugget, partialSill: report.partialSill, rangeKm: report.rangeKm }),
  };
  warnings.push(...nuggetSplitWarnings(report, ctx.errorVariance, meanEv));
  return { plan, report, cv, warnings, variogramMs: now() - t2 - cvMs, cvMs };
}

/** Records the nugget split in the report; warns when the claimed errors exceed the nugget. */
function nuggetSplitWarnings(report: VariogramReport, ev: Float64Array | null, meanEv: number): string[] {
  if (ev === null) return [];
  const known = Math.min(meanEv, report.nugget);
  const capped = meanEv > report.nugget;
  report.nuggetSplit = { measurementErrorVariance: known, microScale: report.nugget - known, meanClaimedErrorVariance: meanEv, capped };
  return capped
    ? [
        `the sites' mean error variance (${meanEv.toPrecision(4)}) exceeds the variogram's nugget (${report.nugget.toPrecision(4)}): the claimed errors are larger than the data allow; the error part of the nugget is capped at the nugget (no micro-scale part left)`,
      ]
    : [];
}
