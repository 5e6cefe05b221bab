/**
 * The indicator data and variograms of indicator kriging (indicator.ts): per zone boundary the samples that decide it
 * with their indicator (1 at or above the boundary, 0 below), each boundary's semivariogram (fitted, the
 * median-indicator one, or a default), and the order-relation correction of the estimates.
 */
import { MAX_RANK } from './grade.ts';
import { ZONE_NAMES } from '../petrology/index.ts';
import { empiricalVariogram, fitVariogram, type VariogramModel } from '../interp/variogram.ts';
import { pointEnvelope } from '../interp/envelope.ts';

/** Fewest decided samples, and fewest of the rarer class, for a boundary's own indicator variogram fit. */
export const MIN_FIT_SAMPLES = 40;
export const MIN_FIT_MINORITY = 8;

/** A boundary's indicator variogram and where it came from. */
export interface IndicatorVariogram {
  isograd: number;
  model: VariogramModel;
  /** 'given': the caller's variogram for every boundary; else fitted to this boundary, the median-indicator one, or the default. */
  source: 'given' | 'fitted' | 'median-indicator' | 'default';
  samples: number;
  proportionAbove: number;
}

/** One boundary's decided samples: coordinates, indicator, and map from the caller's sample index (−1: undecided). */
export interface IndicatorSet {
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  map: Int32Array;
}

/** Per boundary j = 1 … boundaries, the samples whose rank interval lo–hi decides it, with their indicators. */
export function indicatorSets(x: ArrayLike<number>, y: ArrayLike<number>, lo: ArrayLike<number>, hi: ArrayLike<number>, boundaries: number): IndicatorSet[] {
  const n = x.length;
  const sets: IndicatorSet[] = [];
  for (let j = 1; j <= boundaries; j++) {
    const map = new Int32Array(n).fill(-1);
    const xs: number[] = [],
      ys: number[] = [],
      zs: number[] = [];
    for (let i = 0; i < n; i++) {
      let v: number;
      if (lo[i] >= j) v = 1;
      else if (hi[i] < j) v = 0;
      else continue;
      map[i] = xs.length;
      xs.push(x[i]);
      ys.push(y[i]);
      zs.push(v);
    }
    sets.push({ x: Float64Array.from(xs), y: Float64Array.from(ys), z: Float64Array.from(zs), map });
  }
  return sets;
}

/** Spherical indicator variogram fitted to one set (lags to a third of the diagonal diag), null when it cannot be. */
function fitIndicator(set: IndicatorSet, diag: number): VariogramModel | null {
  if (!(diag > 0) || set.z.length < 10) return null;
  try {
    const e = empiricalVariogram(set.x, set.y, set.z, { maxLagKm: diag / 3 });
    if (e.lags.length < 3) return null;
    const m = fitVariogram('spherical', e.lags, { maxRangeKm: diag });
    return m.partialSill > 0 && Number.isFinite(m.rangeKm) ? { model: m.model, nugget: m.nugget, partialSill: m.partialSill, rangeKm: m.rangeKm } : null;
  } catch {
    return null;
  }
}

/**
 * Each boundary's variogram (null for a boundary no sample decides): the given one for all (source 'given'); else fitted where there
 * are MIN_FIT_SAMPLES decided samples with MIN_FIT_MINORITY of the rarer class; else the median-indicator one (fitted
 * to the boundary whose proportion of ones is nearest 0.5); else a default spherical model (sill 0.25, range a third
 * of the samples' diagonal).
 */
export function chooseIndicatorVariograms(
  sets: IndicatorSet[],
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  given: VariogramModel | null,
): (IndicatorVariogram | null)[] {
  const { x0, x1, y0, y1 } = pointEnvelope(x, y);
  const diag = Math.hypot(x1 - x0, y1 - y0);
  const stats = sets.map((q) => {
    let ones = 0;
    for (const v of q.z) ones += v;
    return { count: q.z.length, ones, p: q.z.length > 0 ? ones / q.z.length : NaN };
  });
  let median = -1;
  for (let j = 0; j < sets.length; j++) {
    if (!(stats[j].count >= 10)) continue;
    if (median < 0 || Math.abs(stats[j].p - 0.5) < Math.abs(stats[median].p - 0.5)) median = j;
  }
  const medianModel = given ?? (median >= 0 ? fitIndicator(sets[median], diag) : null);
  const fallback: VariogramModel = { model: 'spherical', nugget: 0, partialSill: 0.25, rangeKm: Math.max(diag / 3, 1e-3) };
  return sets.map((set, j) => {
    const st = stats[j];
    if (st.count === 0) return null;
    let model: VariogramModel | null = null,
      source: IndicatorVariogram['source'] = 'fitted';
    if (given !== null) {
      model = given;
      source = 'given';
    } else if (st.count >= MIN_FIT_SAMPLES && Math.min(st.ones, st.count - st.ones) >= MIN_FIT_MINORITY) model = fitIndicator(set, diag);
    if (model === null) {
      model = medianModel;
      source = 'median-indicator';
    }
    if (model === null) {
      model = fallback;
      source = 'default';
    }
    return { isograd: j + 1, model, source, samples: st.count, proportionAbove: st.p };
  });
}

const round3 = (v: number) => Math.round(v * 1e3) / 1e3;

/** The indicator variograms used, in words: the given one for every isograd, or which isograds took which kind. */
export function variogramsText(vs: readonly (IndicatorVariogram | null)[]): string {
  const used = vs.filter((v): v is IndicatorVariogram => v !== null);
  const given = used.find((v) => v.source === 'given');
  if (given !== undefined) {
    const m = given.model;
    return `the given ${m.model} variogram for every isograd (nugget ${round3(m.nugget)}, partial sill ${round3(m.partialSill)}, range ${round3(m.rangeKm)} km)`;
  }
  const kinds: [IndicatorVariogram['source'], string][] = [
    ['fitted', 'its own fitted spherical indicator variogram'],
    ['median-indicator', 'the median-indicator variogram'],
    ['default', "a default spherical variogram (sill 0.25, range a third of the samples' extent)"],
  ];
  return kinds
    .map(([source, words]) => [words, used.filter((v) => v.source === source).map((v) => `${ZONE_NAMES[v.isograd]}-in`)] as const)
    .filter(([, names]) => names.length > 0)
    .map(([words, names]) => `${words} for ${names.join(', ')}`)
    .join('; ');
}

/**
 * Order-relation correction of non-increasing exceedance probabilities p[0] ≥ … ≥ p[4] in [0, 1] (NaN entries kept
 * and skipped): clip, then the mean of the upward pass (running minimum) and the downward pass (running maximum)
 * (Deutsch & Journel 1998, §IV.1.9).
 */
export function correctOrderRelations(p: Float64Array | number[], n = MAX_RANK): void {
  const up = new Float64Array(n),
    down = new Float64Array(n);
  let run = Infinity;
  for (let j = 0; j < n; j++) {
    if (Number.isNaN(p[j])) continue;
    p[j] = Math.min(1, Math.max(0, p[j]));
    run = Math.min(run, p[j]);
    up[j] = run;
  }
  run = -Infinity;
  for (let j = n - 1; j >= 0; j--) {
    if (Number.isNaN(p[j])) continue;
    run = Math.max(run, p[j]);
    down[j] = run;
  }
  for (let j = 0; j < n; j++) if (!Number.isNaN(p[j])) p[j] = (up[j] + down[j]) / 2;
}
