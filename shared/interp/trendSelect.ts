import { InputError } from '../errors.ts';
import { TREND_KINDS, type TrendKind } from './drift.ts';
import type { TrendReport } from './interpTypes.ts';
import type { KrigingChoice, KrigingContext } from './variogramSelect.ts';
import { krigingWithAnisotropy } from './anisotropy-select.ts';

/**
 * The drift of a kriging: given ('none', 'linear', 'quadratic'), or 'auto': every drift is prepared in full (its
 * own residual variogram, fitted or fixed) and cross-validated leave-one-out, and the one with the lowest RMSE of
 * the leave-one-out residuals wins (ties: the lower order). Cross-validation is the usual way to compare kriging
 * plans on the data themselves (Isaaks & Srivastava 1989, ch. 15; Goovaerts 1997, §5.3 advises choosing the
 * trend's order by cross-validation rather than by the fit to the data, since a higher order always fits better).
 * The report lists every drift's RMSE and MSDR side by side.
 */
export function prepareKrigingPlan(ctx: KrigingContext): KrigingChoice {
  const requested = ctx.opts.trend ?? 'none';
  if (requested !== 'auto' && !(TREND_KINDS as readonly string[]).includes(requested))
    throw new InputError(`unknown trend "${String(requested)}"`, [{ field: 'trend', problem: `expected ${TREND_KINDS.join(', ')} or auto` }], 'bad_option');
  if (requested !== 'auto') return krigingWithAnisotropy(ctx, requested, false);
  const candidates: NonNullable<TrendReport['candidates']> = [];
  let best: KrigingChoice | null = null;
  let variogramMs = 0,
    cvMs = 0;
  for (const kind of TREND_KINDS) {
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
      `--trend auto chose a ${trendKindOf(chosen)} drift (leave-one-out RMSE ${chosen.cv!.rmse.toPrecision(4)} against ${candidates[0].cvRmse?.toPrecision(4)} without): estimates far outside the points follow the fitted polynomial`,
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

function trendKindOf(c: KrigingChoice): TrendKind {
  return c.report.trend?.kind ?? 'none';
}
