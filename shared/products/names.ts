/**
 * File and layer names of the grid products: `depth-300C`, `temperature-5km`, `facies-10km`, `base-heat-flow`,
 * `solidus-depth`, `melt-onset`, `inconsistent`, and for a Monte Carlo `depth-300C.p10` (`.p50`, `.p90`), the mean
 * over the realizations `depth-300C.mean` and its difference from the deterministic grid `depth-300C.mean-diff`
 * (the same suffixes on `temperature-5km`), and per isotherm the share of the realizations reaching it above the
 * maximum depth `depth-300C.reached`. Numbers are written in plain decimal
 * without trailing zeros (2.5 → "2.5", 300 → "300"); a minus sign stays ("-10C").
 */

function num(v: number): string {
  if (!Number.isFinite(v)) throw new RangeError(`a product name needs a finite number, got ${v}`);
  return String(+v.toPrecision(12));
}

export const depthProductName = (isothermC: number) => `depth-${num(isothermC)}C`;
export const temperatureProductName = (depthKm: number) => `temperature-${num(depthKm)}km`;
export const faciesProductName = (depthKm: number) => `facies-${num(depthKm)}km`;
/** The summaries of a Monte Carlo product: percentiles, the mean, the mean minus the deterministic value, the share reaching an isotherm. */
export type SummaryStat = 'p10' | 'p50' | 'p90' | 'mean' | 'mean-diff' | 'reached';
export const summaryProductName = (product: string, stat: SummaryStat) => `${product}.${stat}`;
export const percentileProductName = (isothermC: number, p: SummaryStat) => summaryProductName(depthProductName(isothermC), p);
export const BASE_HEAT_FLOW = 'base-heat-flow';
export const SOLIDUS_DEPTH = 'solidus-depth';
export const INCONSISTENT = 'inconsistent';
export const MELT_ONSET = 'melt-onset';
