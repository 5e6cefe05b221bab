/**
 * Misfits: samples whose zone disagrees with the zones their neighbours imply. Each informative sample is
 * predicted from the others (leave-one-out, as in cross-validation: Isaaks & Srivastava 1989, ch. 15) with the
 * same indicator surfaces and barriers; the sample is a misfit when the leave-one-out zone (rankFromIndicators)
 * lies outside its rank interval and the leave-one-out probability of its own zone(s), P̂_lo − P̂_(hi+1) (P̂₀ = 1,
 * P̂₆ = 0), is below `maxProbability` (default 0.3: a project choice that spares samples beside an isograd, whose
 * neighbours are split). The report gives the isograds that would have to move to honour it (those
 * between the predicted and the recorded zone) and the distance to the nearest of them as drawn.
 */
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, rankFromIndicators, type IndicatorField } from './indicator.ts';
import type { SampleGrade } from './grade.ts';
import { pointSegmentDistance2 } from './indicator.ts';

export interface LeaveOneOut {
  /** Leave-one-out P̂ⱼ per informative sample: p[i·5 + j − 1]. */
  p: Float64Array;
  /** Leave-one-out rank per informative sample (−1: no neighbour in reach). */
  rank: Int8Array;
  /** True when sample i's decided indicator for boundary j disagrees with its leave-one-out P̂ⱼ (≥ 0.5 or not). */
  contradicts(i: number, j: number): boolean;
}

/** Leave-one-out indicator predictions for every informative sample of the field. */
export function leaveOneOut(field: IndicatorField): LeaveOneOut {
  const n = field.count;
  const p = new Float64Array(n * BOUNDARY_COUNT);
  const rank = new Int8Array(n);
  const buf = new Float64Array(BOUNDARY_COUNT);
  for (let i = 0; i < n; i++) {
    field.predict(field.x[i], field.y[i], buf, i);
    p.set(buf, i * BOUNDARY_COUNT);
    rank[i] = rankFromIndicators(buf);
  }
  return { p, rank, contradicts: (i: number, j: number) => disagrees(field, i, j, p[i * BOUNDARY_COUNT + j - 1]) };
}

/** Whether sample i's decided indicator for boundary j disagrees with v, its leave-one-out P̂ⱼ (≥ 0.5 or not). */
function disagrees(field: IndicatorField, i: number, j: number, v: number): boolean {
  if (Number.isNaN(v)) return false;
  if (field.lo[i] >= j) return v < 0.5;
  if (field.hi[i] < j) return v >= 0.5;
  return false;
}

/** LeaveOneOut.contradicts computed on demand: one leave-one-out prediction for each sample asked about. */
export function contradictionTest(field: IndicatorField): (i: number, j: number) => boolean {
  const memo = new Map<number, Float64Array>();
  return (i, j) => {
    let p = memo.get(i);
    if (p === undefined) {
      p = new Float64Array(BOUNDARY_COUNT);
      field.predict(field.x[i], field.y[i], p, i);
      memo.set(i, p);
    }
    return disagrees(field, i, j, p[j - 1]);
  };
}

export interface Misfit {
  id: string;
  /** The sample's zone (or its range, e.g. "garnet–sillimanite", for partial information). */
  zone: string;
  /** The zone its neighbours imply (leave-one-out). */
  inferredZone: string;
  /** Recorded minus inferred rank (> 0: the sample is of higher grade than its surroundings). */
  rankDifference: number;
  /** Leave-one-out probability of the sample's own zone(s). */
  probability: number;
  /** Isograds that would have to move to honour the sample. */
  isograds: string[];
  /** Distance (km) to the nearest of those isograds as drawn; null when none of them is drawn. */
  distanceKm: number | null;
  nearestIsograd: string | null;
}

/** Distance (km) from (x, y) to a polyline (flat coords). */
export function distanceToPolyline(c: Float64Array, x: number, y: number): number {
  let best = Infinity;
  if (c.length === 2) return Math.hypot(c[0] - x, c[1] - y);
  for (let i = 2; i < c.length; i += 2) best = Math.min(best, pointSegmentDistance2(x, y, c[i - 2], c[i - 1], c[i], c[i + 1]));
  return Math.sqrt(best);
}

/** The misfits among the field's samples, with distances to the drawn isograds (lines in local km). */
export function findMisfits(
  field: IndicatorField,
  loo: LeaveOneOut,
  grades: readonly SampleGrade[],
  lines: readonly { rank: number; isograd: string; coords: Float64Array }[],
  maxProbability = 0.3,
): Misfit[] {
  const out: Misfit[] = [];
  for (let i = 0; i < field.count; i++) {
    const r = loo.rank[i];
    const lo = field.lo[i],
      hi = field.hi[i];
    if (r < 0 || (r >= lo && r <= hi)) continue;
    const pLo = lo === 0 ? 1 : loo.p[i * BOUNDARY_COUNT + lo - 1];
    const pHi = hi >= BOUNDARY_COUNT ? 0 : loo.p[i * BOUNDARY_COUNT + hi];
    const probability = (Number.isNaN(pLo) ? 1 : pLo) - (Number.isNaN(pHi) ? 0 : pHi);
    if (!(probability < maxProbability)) continue;
    const g = grades[field.source[i]];
    const ranks: number[] = [];
    if (r < lo) for (let j = r + 1; j <= lo; j++) ranks.push(j);
    else for (let j = hi + 1; j <= r; j++) ranks.push(j);
    let best = Infinity,
      which: string | null = null;
    for (const l of lines) {
      if (!ranks.includes(l.rank)) continue;
      const d = distanceToPolyline(l.coords, field.x[i], field.y[i]);
      if (d < best) {
        best = d;
        which = l.isograd;
      }
    }
    out.push({
      id: g.id,
      zone: lo === hi ? ZONE_NAMES[lo] : `${ZONE_NAMES[lo]}–${ZONE_NAMES[hi]}`,
      inferredZone: ZONE_NAMES[r],
      rankDifference: r < lo ? lo - r : hi - r,
      probability: Math.round(probability * 1000) / 1000,
      isograds: ranks.map((j) => `${ZONE_NAMES[j]}-in`),
      distanceKm: Number.isFinite(best) ? best : null,
      nearestIsograd: which,
    });
  }
  return out;
}
