import type { CorrectionMethod } from './types.ts';

/** Where a well's conductivity came from, best first. */
export type ConductivitySource = 'column' | 'lithology' | 'model' | 'constant';

export interface QualityInput {
  /** Correction methods of the points in the fit. */
  methods: CorrectionMethod[];
  /** Measured points in the fit (anchor not counted). */
  nPoints: number;
  conductivitySource: ConductivitySource;
  /** Fraction of the fitted depth interval the conductivity source covers (0–1). */
  conductivityCoverage: number;
  /** uncertainty / heat flow. */
  relativeUncertainty: number;
  /** Any outlier flagged (kept or excluded). */
  outliers: boolean;
}

/** The thresholds of `heatFlowQuality` (this project's rule). */
export const QUALITY_RULE = {
  highMinPoints: 5,
  highMaxRelativeUncertainty: 0.15,
  highMinCoverage: 0.9,
  lowMaxPoints: 2,
  lowMinRelativeUncertainty: 0.3,
  lowMaxCoverage: 0.5,
} as const;

/**
 * Quality of a derived heat flow, this project's rule (no published standard is followed):
 * - low when any point is an uncorrected BHT, or ≤ 2 measured points, or the conductivity is one constant for the
 *   whole well, or it covers < 50 % of the interval, or the relative uncertainty is > 30 %;
 * - high when every point is an equilibrium (log/test) or Horner-corrected temperature, ≥ 5 measured points, the
 *   conductivity is the well's own measured column covering ≥ 90 % of the interval, no outliers, and the relative
 *   uncertainty is ≤ 15 %;
 * - medium otherwise.
 * Returns the grade and the reasons it is not higher.
 */
export function heatFlowQuality(q: QualityInput): { quality: 'high' | 'medium' | 'low'; reasons: string[] } {
  const R = QUALITY_RULE;
  const low: string[] = [];
  if (q.methods.includes('none')) low.push('uncorrected BHTs in the fit');
  if (q.nPoints <= R.lowMaxPoints) low.push(`only ${q.nPoints} measured point${q.nPoints === 1 ? '' : 's'}`);
  if (q.conductivitySource === 'constant') low.push('one assumed conductivity for the whole well');
  if (q.conductivityCoverage < R.lowMaxCoverage) low.push(`conductivity covers ${(q.conductivityCoverage * 100).toFixed(0)} % of the interval`);
  if (!(q.relativeUncertainty <= R.lowMinRelativeUncertainty)) low.push(`relative uncertainty ${(q.relativeUncertainty * 100).toFixed(0)} %`);
  if (low.length > 0) return { quality: 'low', reasons: low };
  const med: string[] = [];
  if (!q.methods.every((m) => m === 'equilibrium' || m === 'horner')) med.push('BHTs with an empirical or user correction');
  if (q.nPoints < R.highMinPoints) med.push(`${q.nPoints} measured points (high needs ${R.highMinPoints})`);
  if (q.conductivitySource !== 'column') med.push(`conductivity from ${q.conductivitySource === 'lithology' ? 'a lithology map' : 'the thermal model'}`);
  if (q.conductivityCoverage < R.highMinCoverage) med.push(`conductivity covers ${(q.conductivityCoverage * 100).toFixed(0)} % of the interval`);
  if (q.outliers) med.push('outliers flagged');
  if (!(q.relativeUncertainty <= R.highMaxRelativeUncertainty)) med.push(`relative uncertainty ${(q.relativeUncertainty * 100).toFixed(0)} %`);
  return med.length > 0 ? { quality: 'medium', reasons: med } : { quality: 'high', reasons: [] };
}
