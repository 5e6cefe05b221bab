/**
 * Metamorphic facies in P–T. The fields below are this project's own simplified drawing, placed after the general
 * layout common to textbook diagrams (e.g. Spear 1993; Yardley 1989; Bucher & Grapes 2011), which differ in detail.
 * Facies boundaries are gradational by about ±50 °C and ±1–2 kbar: a point within that distance of a boundary is
 * marked `approximate`. Axes: temperature °C (0–1100), pressure kbar (0–25). The polygons tile the diagram with
 * shared vertices, so a point belongs to exactly one field (boundaries go to the first field listed).
 */

export type FaciesName =
  | 'zeolite'
  | 'prehnite-pumpellyite'
  | 'greenschist'
  | 'amphibolite'
  | 'granulite'
  | 'blueschist'
  | 'eclogite'
  | 'hornfels';

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
  { name: 'zeolite', polygon: [[0, 0], [200, 0], [170, 3.5], [0, 3.5]] },
  { name: 'prehnite-pumpellyite', polygon: [[200, 0], [300, 0], [300, 2], [300, 6.5], [150, 5.5], [0, 5], [0, 3.5], [170, 3.5]] },
  { name: 'hornfels', polygon: [[300, 0], [1100, 0], [1100, 2], [700, 2], [500, 2], [300, 2]] },
  { name: 'greenschist', polygon: [[300, 2], [500, 2], [500, 10], [450, 9], [300, 6.5]] },
  { name: 'amphibolite', polygon: [[500, 2], [700, 2], [750, 12.5], [500, 10]] },
  { name: 'granulite', polygon: [[700, 2], [1100, 2], [1100, 15], [750, 12.5]] },
  { name: 'blueschist', polygon: [[0, 5], [150, 5.5], [300, 6.5], [450, 9], [500, 10], [550, 25], [0, 25]] },
  { name: 'eclogite', polygon: [[500, 10], [750, 12.5], [1100, 15], [1100, 25], [550, 25]] },
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

function inside(poly: [number, number][], t: number, p: number): boolean {
  let c = false;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [ti, pi] = poly[i], [tj, pj] = poly[j];
    if (pi > p !== pj > p && t < ((tj - ti) * (p - pi)) / (pj - pi) + ti) c = !c;
  }
  return c;
}

function onEdge(poly: [number, number][], t: number, p: number): boolean {
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    if (segDist(poly[j], poly[i], t, p, 1, 1) < 1e-9) return true;
  }
  return false;
}

/** Distance from (t, p) to segment a–b in scaled units (T/ts, P/ps). */
function segDist(a: [number, number], b: [number, number], t: number, p: number, ts: number, ps: number): number {
  const ax = a[0] / ts, ay = a[1] / ps, bx = b[0] / ts, by = b[1] / ps, x = t / ts, y = p / ps;
  const dx = bx - ax, dy = by - ay;
  const l2 = dx * dx + dy * dy;
  let u = l2 > 0 ? ((x - ax) * dx + (y - ay) * dy) / l2 : 0;
  u = u < 0 ? 0 : u > 1 ? 1 : u;
  const ex = ax + u * dx - x, ey = ay + u * dy - y;
  return Math.sqrt(ex * ex + ey * ey);
}

const L = FACIES_DIAGRAM_LIMITS;

function onDiagramEdge(a: [number, number], b: [number, number]): boolean {
  const same = (k: 0 | 1, v: number) => a[k] === v && b[k] === v;
  return same(0, L.minTemperatureC) || same(0, L.maxTemperatureC) || same(1, L.minPressureKbar) || same(1, L.maxPressureKbar);
}

/**
 * Classifies a point (temperatureC °C, pressureKbar kbar) into a metamorphic facies of FACIES_FIELDS, with the
 * distance to the nearest boundary with another field; `approximate` when closer than one boundary width.
 */
export function classifyFacies(temperatureC: number, pressureKbar: number): FaciesResult {
  const t = temperatureC, p = pressureKbar;
  if (!(t >= L.minTemperatureC && t <= L.maxTemperatureC && p >= L.minPressureKbar && p <= L.maxPressureKbar)) {
    return { facies: null, approximate: false, boundaryDistance: NaN, nearestOther: null };
  }
  let found: FaciesField | null = null;
  for (const f of FACIES_FIELDS) if (onEdge(f.polygon, t, p) || inside(f.polygon, t, p)) { found = f; break; }
  if (found === null) return { facies: null, approximate: false, boundaryDistance: NaN, nearestOther: null };
  let best = Infinity, other: FaciesName | null = null;
  for (const f of FACIES_FIELDS) {
    if (f === found) continue;
    const poly = f.polygon;
    for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
      if (onDiagramEdge(poly[j], poly[i])) continue;
      const d = segDist(poly[j], poly[i], t, p, FACIES_BOUNDARY_WIDTH.temperatureC, FACIES_BOUNDARY_WIDTH.pressureKbar);
      if (d < best) {
        best = d;
        other = f.name;
      }
    }
  }
  return { facies: found.name, approximate: best < 1, boundaryDistance: best, nearestOther: other };
}

export const FACIES_NAMES: readonly FaciesName[] = FACIES_FIELDS.map((f) => f.name);
