import { InputError } from '../errors.ts';
import { TREND_KINDS, type DriftKind } from './drift.ts';
import type { TrendReport } from './interpTypes.ts';
import type { KrigingChoice, KrigingContext } from './variogramSelect.ts';
import { krigingWithAnisotropy } from './anisotropy-select.ts';

/**
 * The drift of a kriging: given ('none', 'linear', 'quadratic'), or 'auto': every drift is prepared in full (its
 * own residual variogram, fitted or fixed) and cross-validated leave-one-out, and the one with the lowest RMSE of
 * the leave-one-out residuals wins (ties: the lower order). Cross-validation is the usual way to compare kriging
 * plans on the data themselves (Isaaks & Srivastava 1989, ch. 15; Goovaerts 1997, §5.3 advises choosing the
 * trend's order by cross-validation rather than by the fit to the data, since a higher order always fits better).
 * The report lists every drift's RMSE and MSDR side by side. With an external drift grid, 'external' (kriging with
 * that external drift) is one more candidate.
 */
export function prepareKrigingPlan(ctx: KrigingContext): KrigingChoice {
  const requested = ctx.opts.trend ?? 'none';
  const kinds: DriftKind[] = [...TREND_KINDS, ...(ctx.opts.externalDrift ? (['external'] as const) : [])];
  if (requested === 'external' && !ctx.opts.externalDrift)
    throw new InputError('an external drift needs its covariate grid', [{ field: 'trend', problem: 'give the grid: drift:G.tif' }], 'bad_option');
  if (requested !== 'auto' && !(kinds as string[]).includes(requested))
    throw new InputError(
      `unknown trend "${String(requested)}"`,
      [{ field: 'trend', problem: `expected ${TREND_KINDS.join(', ')}, external or auto` }],
      'bad_option',
    );
  if (requested !== 'auto') return krigingWithAnisotropy(ctx, requested, false);
  const candidates: NonNullable<TrendReport['candidates']> = [];
  let best: KrigingChoice | null = null;
  let variogramMs = 0,
    cvMs = 0;
  for (const kind of kinds) {
    let c: KrigingChoice;
    try {
      c = krigingWithAnisotropy(ctx, kind, true);
    } catch (e) {
      if (!(e instanceof InputError) || kind === 'none') throw e;
      candidates.push({ kind, model: null, cvRmse: null, msdr: null, problem: e.message });
      continue;
    }
    variogramMs += c.variogramMs;
    cvMs += c.cvMs;
    const rmse = c.cv!.rmse;
    candidates.push({ kind, model: c.report.model, cvRmse: rmse, msdr: c.cv!.meanSquaredDeviationRatio, problem: null });
    if (best === null || rmse < best.cv!.rmse) best = c;
  }
  const chosen = best!;
  const trend: TrendReport = { ...chosen.report.trend!, selectedBy: 'cross-validation', candidates };
  const warnings = [...chosen.warnings];
  if (trendKindOf(chosen) !== 'none')
    warnings.push(
      `--trend auto chose a ${trendKindOf(chosen)} drift (leave-one-out RMSE ${chosen.cv!.rmse.toPrecision(4)} against ${candidates[0].cvRmse?.toPrecision(4)} without): estimates far outside the points follow the fitted ${trendKindOf(chosen) === 'external' ? 'covariate' : 'polynomial'}`,
    );
  return {
    ...chosen,
    report: { ...chosen.report, trend },
    cv: ctx.wantCv ? chosen.cv : null,
    warnings,
    variogramMs,
    cvMs,
  };
}

function trendKindOf(c: KrigingChoice): DriftKind {
  return c.report.trend?.kind ?? 'none';
}
