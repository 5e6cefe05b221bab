/**
 * Per-line measures of traced isograds (isograds.ts): closed loops around contradicted samples, support counts
 * along each line, the band width along each 0.5 line, and the samples that disagree with their isograd.
 */
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, pointSegmentDistance2, type IndicatorField } from './indicator.ts';
import type { LeaveOneOut } from './misfits.ts';
import type { SampleGrade } from './grade.ts';
import type { IsogradLineKm, IsogradResultKm } from './isograds.ts';

/** Name of the isograd opening rank j ("garnet-in"). */
export function isogradName(rank: number): string {
  return `${ZONE_NAMES[rank]}-in`;
}

function pointInRing(c: Float64Array, x: number, y: number): boolean {
  let inside = false;
  const n = c.length / 2;
  for (let i = 0, j = n - 1; i < n; j = i++) {
    const xi = c[2 * i],
      yi = c[2 * i + 1],
      xj = c[2 * j],
      yj = c[2 * j + 1];
    if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}

export function lineLength(c: Float64Array): number {
  let s = 0;
  for (let i = 2; i < c.length; i += 2) s += Math.hypot(c[i] - c[i - 2], c[i + 1] - c[i - 1]);
  return s;
}

/** Point at half the length of a polyline. */
function midpoint(c: Float64Array): [number, number] {
  const half = lineLength(c) / 2;
  let s = 0;
  for (let i = 2; i < c.length; i += 2) {
    const l = Math.hypot(c[i] - c[i - 2], c[i + 1] - c[i - 1]);
    if (s + l >= half && l > 0) {
      const u = (half - s) / l;
      return [c[i - 2] + u * (c[i] - c[i - 2]), c[i - 1] + u * (c[i + 1] - c[i - 1])];
    }
    s += l;
  }
  return [c[0], c[1]];
}

/**
 * Samples inside a closed loop (bounding box first) when they are one or two and all contradicted by their
 * neighbours for isograd j (leave-one-out); null when the loop is to be kept.
 */
export function isolatedLoopSamples(coords: Float64Array, field: IndicatorField, loo: LeaveOneOut, j: number): number[] | null {
  let bx0 = Infinity,
    bx1 = -Infinity,
    by0 = Infinity,
    by1 = -Infinity;
  for (let t = 0; t < coords.length; t += 2) {
    bx0 = Math.min(bx0, coords[t]);
    bx1 = Math.max(bx1, coords[t]);
    by0 = Math.min(by0, coords[t + 1]);
    by1 = Math.max(by1, coords[t + 1]);
  }
  const inside: number[] = [];
  for (let i = 0; i < field.count && inside.length <= 2; i++) {
    const px = field.x[i],
      py = field.y[i];
    if (px >= bx0 && px <= bx1 && py >= by0 && py <= by1 && pointInRing(coords, px, py)) inside.push(i);
  }
  return inside.length >= 1 && inside.length <= 2 && inside.every((i) => loo.contradicts(i, j)) ? inside : null;
}

/** Samples within `radiusKm` of a line's midpoint and of its vertices taken about every 2 km. */
export function lineSupport(c: Float64Array, field: IndicatorField, radiusKm: number, cellKm: number): IsogradLineKm['support'] {
  const found: number[] = [];
  const countNear = (px: number, py: number) => {
    found.length = 0;
    return field.index.within(px, py, radiusKm, found);
  };
  const [mx, my] = midpoint(c);
  let sum = 0,
    min = Infinity,
    nv = 0;
  const step = Math.max(1, Math.round(2 / cellKm)); // a vertex about every 2 km
  for (let t = 0; t < c.length / 2; t += step) {
    const k = countNear(c[2 * t], c[2 * t + 1]);
    sum += k;
    min = Math.min(min, k);
    nv++;
  }
  return { radiusKm, samplesNearMidpoint: countNear(mx, my), meanSamplesPerVertex: nv > 0 ? sum / nv : 0, minSamplesPerVertex: nv > 0 ? min : 0 };
}

/** Distance (km) from a point to the nearest segment of a set of lines. */
function distanceToLines(px: number, py: number, set: IsogradLineKm[]): number {
  let best = Infinity;
  for (const q of set)
    for (let t = 2; t < q.coords.length; t += 2)
      best = Math.min(best, pointSegmentDistance2(px, py, q.coords[t - 2], q.coords[t - 1], q.coords[t], q.coords[t + 1]));
  return Math.sqrt(best);
}

/** Band width along each 0.5 line: distance to the nearest 0.1 line plus to the nearest 0.9 line of the isograd. */
export function addBandWidths(lines: IsogradLineKm[], supportKm: number): void {
  const reach = 3 * supportKm;
  for (const l of lines) {
    if (l.probability !== 0.5) continue;
    const edges = (p: number) => lines.filter((q) => q.rank === l.rank && q.probability === p);
    const lowEdge = edges(0.1),
      highEdge = edges(0.9);
    const alongKm: number[] = [],
      widthKm: (number | null)[] = [];
    const c = l.coords;
    let s0 = 0,
      next = 0;
    for (let t = 0; t < c.length; t += 2) {
      if (t > 0) s0 += Math.hypot(c[t] - c[t - 2], c[t + 1] - c[t - 1]);
      if (s0 < next && t + 2 < c.length) continue;
      next = s0 + 2;
      const a = distanceToLines(c[t], c[t + 1], lowEdge),
        b = distanceToLines(c[t], c[t + 1], highEdge);
      alongKm.push(Math.round(s0 * 100) / 100);
      widthKm.push(a <= reach && b <= reach ? Math.round((a + b) * 100) / 100 : null);
    }
    const w = widthKm.filter((v): v is number => v !== null).sort((x, y) => x - y);
    l.bandWidthKm = {
      alongKm,
      widthKm,
      median: w.length > 0 ? w[w.length >> 1] : null,
      min: w.length > 0 ? w[0] : null,
      max: w.length > 0 ? w[w.length - 1] : null,
    };
  }
}

/** Samples that disagree with their isograd: leave-one-out probability on the other side of 0.5 from what they say. */
export function disagreeingSamples(field: IndicatorField, loo: LeaveOneOut, grades: readonly SampleGrade[]): IsogradResultKm['disagreeing'] {
  const disagreeing: IsogradResultKm['disagreeing'] = [];
  for (let j = 1; j <= BOUNDARY_COUNT; j++) {
    const list: IsogradResultKm['disagreeing'][number]['samples'] = [];
    for (let i = 0; i < field.count; i++) {
      const v = loo.p[i * BOUNDARY_COUNT + j - 1];
      if (Number.isNaN(v)) continue;
      if (field.lo[i] >= j && v < 0.5)
        list.push({ id: grades[field.source[i]].id, index: field.source[i], says: 'at or above', probability: Math.round(v * 1000) / 1000 });
      else if (field.hi[i] < j && v >= 0.5)
        list.push({ id: grades[field.source[i]].id, index: field.source[i], says: 'below', probability: Math.round(v * 1000) / 1000 });
    }
    disagreeing.push({ isograd: isogradName(j), samples: list });
  }
  return disagreeing;
}
