/**
 * Metamorphic facies in P–T. The fields below are this project's own simplified drawing, placed after the general
 * layout common to textbook diagrams (e.g. Spear 1993; Yardley 1989; Bucher & Grapes 2011), which differ in detail.
 * Facies boundaries are gradational by about ±50 °C and ±1–2 kbar: a point within that distance of a boundary is
 * marked `approximate`. Axes: temperature °C (0–1100), pressure kbar (0–25). The polygons tile the diagram with
 * shared vertices, so a point belongs to exactly one field (boundaries go to the first field listed).
 */

import { pointSegmentDistance2 } from '../grid/segment.ts';

export type FaciesName = 'zeolite' | 'prehnite-pumpellyite' | 'greenschist' | 'amphibolite' | 'granulite' | 'blueschist' | 'eclogite' | 'hornfels';

export interface FaciesField {
  name: FaciesName;
  /** Closed ring of [temperatureC, pressureKbar] vertices (first vertex not repeated). */
  polygon: [number, number][];
}

export const FACIES_DIAGRAM_LIMITS = { minTemperatureC: 0, maxTemperatureC: 1100, minPressureKbar: 0, maxPressureKbar: 25 } as const;

/** Gradational width of the boundaries used for `approximate`: ±50 °C and ±1.5 kbar. */
export const FACIES_BOUNDARY_WIDTH = { temperatureC: 50, pressureKbar: 1.5 } as const;

/** The fields, for the client to draw (the project's own simplified drawing; gradational boundaries). */
export const FACIES_FIELDS: readonly FaciesField[] = Object.freeze([
  {
    name: 'zeolite',
    polygon: [
      [0, 0],
      [200, 0],
      [170, 3.5],
      [0, 3.5],
    ],
  },
  {
    name: 'prehnite-pumpellyite',
    polygon: [
      [200, 0],
      [300, 0],
      [300, 2],
      [300, 6.5],
      [150, 5.5],
      [0, 5],
      [0, 3.5],
      [170, 3.5],
    ],
  },
  {
    name: 'hornfels',
    polygon: [
      [300, 0],
      [1100, 0],
      [1100, 2],
      [700, 2],
      [500, 2],
      [300, 2],
    ],
  },
  {
    name: 'greenschist',
    polygon: [
      [300, 2],
      [500, 2],
      [500, 10],
      [450, 9],
      [300, 6.5],
    ],
  },
  {
    name: 'amphibolite',
    polygon: [
      [500, 2],
      [700, 2],
      [750, 12.5],
      [500, 10],
    ],
  },
  {
    name: 'granulite',
    polygon: [
      [700, 2],
      [1100, 2],
      [1100, 15],
      [750, 12.5],
    ],
  },
  {
    name: 'blueschist',
    polygon: [
      [0, 5],
      [150, 5.5],
      [300, 6.5],
      [450, 9],
      [500, 10],
      [550, 25],
      [0, 25],
    ],
  },
  {
    name: 'eclogite',
    polygon: [
      [500, 10],
      [750, 12.5],
      [1100, 15],
      [1100, 25],
      [550, 25],
    ],
  },
] as FaciesField[]);

export interface FaciesResult {
  /** The field containing the point, or null outside the diagram. */
  facies: FaciesName | null;
  /** True within the gradational width of a boundary with another field. */
  approximate: boolean;
  /** Distance to the nearest boundary with another field, in boundary widths (√((ΔT/50)² + (ΔP/1.5)²)). */
  boundaryDistance: number;
  /** The field across that nearest boundary (null if none). */
  nearestOther: FaciesName | null;
}

export const FACIES_NAMES: readonly FaciesName[] = FACIES_FIELDS.map((f) => f.name);

const L = FACIES_DIAGRAM_LIMITS;

// Flat copies of the rings (T, P interleaved) and, per field, its boundary segments with other fields (the
// diagram's outer edges left out) in boundary-width units — built once, so a classification allocates nothing.
const RINGS = FACIES_FIELDS.map((f) => Float64Array.from(f.polygon.flat()));
const BOUNDARY_SEGMENTS = FACIES_FIELDS.map((f) => {
  const out: number[] = [];
  const poly = f.polygon;
  const ts = FACIES_BOUNDARY_WIDTH.temperatureC,
    ps = FACIES_BOUNDARY_WIDTH.pressureKbar;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    if (onDiagramEdge(poly[j], poly[i])) continue;
    out.push(poly[j][0] / ts, poly[j][1] / ps, poly[i][0] / ts, poly[i][1] / ps);
  }
  return Float64Array.from(out);
});

function onDiagramEdge(a: [number, number], b: [number, number]): boolean {
  const same = (k: 0 | 1, v: number) => a[k] === v && b[k] === v;
  return same(0, L.minTemperatureC) || same(0, L.maxTemperatureC) || same(1, L.minPressureKbar) || same(1, L.maxPressureKbar);
}

/**
 * Index into FACIES_NAMES of the field containing (temperatureC °C, pressureKbar kbar), or −1 outside the diagram.
 * A point on a shared edge (within 1e-9 °C/kbar) belongs to the first field listed. No allocation: for grids.
 */
export function faciesIndexAt(temperatureC: number, pressureKbar: number): number {
  const t = temperatureC,
    p = pressureKbar;
  if (!(t >= L.minTemperatureC && t <= L.maxTemperatureC && p >= L.minPressureKbar && p <= L.maxPressureKbar)) return -1;
  for (let f = 0; f < RINGS.length; f++) {
    const r = RINGS[f];
    const n = r.length / 2;
    let inside = false;
    for (let i = 0, j = n - 1; i < n; j = i++) {
      const ti = r[2 * i],
        pi = r[2 * i + 1],
        tj = r[2 * j],
        pj = r[2 * j + 1];
      if (pointSegmentDistance2(t, p, tj, pj, ti, pi) < 1e-18) return f;
      if (pi > p !== pj > p && t < ((tj - ti) * (p - pi)) / (pj - pi) + ti) inside = !inside;
    }
    if (inside) return f;
  }
  return -1;
}

/**
 * Distance (in boundary widths, √((ΔT/50)² + (ΔP/1.5)²)) from a point to the nearest boundary of a field other than
 * `fieldIndex`, and that field's index. Writes [distance, index] into `out`.
 */
export function faciesBoundaryDistance(fieldIndex: number, temperatureC: number, pressureKbar: number, out: Float64Array | number[]): void {
  const x = temperatureC / FACIES_BOUNDARY_WIDTH.temperatureC,
    y = pressureKbar / FACIES_BOUNDARY_WIDTH.pressureKbar;
  let best = Infinity,
    other = -1;
  for (let f = 0; f < BOUNDARY_SEGMENTS.length; f++) {
    if (f === fieldIndex) continue;
    const s = BOUNDARY_SEGMENTS[f];
    for (let k = 0; k < s.length; k += 4) {
      const d = pointSegmentDistance2(x, y, s[k], s[k + 1], s[k + 2], s[k + 3]);
      if (d < best) {
        best = d;
        other = f;
      }
    }
  }
  out[0] = Math.sqrt(best);
  out[1] = other;
}

const scratch = new Float64Array(2);

/**
 * Classifies a point (temperatureC °C, pressureKbar kbar) into a metamorphic facies of FACIES_FIELDS, with the
 * distance to the nearest boundary with another field; `approximate` when closer than one boundary width.
 */
export function classifyFacies(temperatureC: number, pressureKbar: number): FaciesResult {
  const f = faciesIndexAt(temperatureC, pressureKbar);
  if (f < 0) return { facies: null, approximate: false, boundaryDistance: NaN, nearestOther: null };
  faciesBoundaryDistance(f, temperatureC, pressureKbar, scratch);
  const best = scratch[0];
  return { facies: FACIES_NAMES[f], approximate: best < 1, boundaryDistance: best, nearestOther: scratch[1] >= 0 ? FACIES_NAMES[scratch[1]] : null };
}
