/**
 * Isolines of a grid by marching squares (the two-dimensional form of Lorensen & Cline 1987; a saddle is resolved by
 * the mean of its four corners), traced into oriented
 * polylines: every line keeps the higher values on its RIGHT (x east, y north), so a map can mark the high side.
 * The corners are cell centres of a LocalGrid (row 0 at the south). A square with a NaN corner produces nothing,
 * so lines end at no-data; an edge marked blocked (e.g. it crosses a fault trace, so interpolating along it would
 * mix two blocks) produces no crossing point, so lines stop short of it instead of running along the fault.
 *
 * Orientation rule: walking a square's boundary counter-clockwise (SW → SE → NE → NW), a segment starts on an edge
 * where the values go from low to high and ends on one where they go from high to low; that puts the high corners
 * on the right. In a saddle the entering edge pairs with the preceding crossed edge when the centre is high, with
 * the following one when it is low.
 */
import type { LocalGrid } from './indicator.ts';

export interface Isoline {
  /** Flat [x0, y0, x1, y1, ...] vertices, local km. */
  coords: Float64Array;
  /** True for a closed ring (first vertex repeated at the end). */
  closed: boolean;
}

/**
 * Marching squares over the cells: links each cell's entering edge to its leaving edge (next[entering] = leaving,
 * hasPrev[leaving] = 1), edges numbered 2·(r·W + c) (horizontal, from node (c, r)) and + 1 (vertical); saddles are
 * resolved by the cell's centre value; cells with a NaN corner or a blocked edge are skipped.
 */
function linkCellEdges(
  v: (c: number, r: number) => number,
  W: number,
  H: number,
  level: number,
  blocked: Uint8Array | null,
  next: Int32Array,
  hasPrev: Uint8Array,
): void {
  const ids = [0, 0, 0, 0];
  const hi = [false, false, false, false];
  const cv = [0, 0, 0, 0];
  for (let r = 0; r + 1 < H; r++) {
    for (let c = 0; c + 1 < W; c++) {
      cv[0] = v(c, r);
      cv[1] = v(c + 1, r);
      cv[2] = v(c + 1, r + 1);
      cv[3] = v(c, r + 1);
      if (Number.isNaN(cv[0]) || Number.isNaN(cv[1]) || Number.isNaN(cv[2]) || Number.isNaN(cv[3])) continue;
      let nh = 0;
      for (let k = 0; k < 4; k++) {
        hi[k] = cv[k] >= level;
        if (hi[k]) nh++;
      }
      if (nh === 0 || nh === 4) continue;
      ids[0] = 2 * (r * W + c);
      ids[1] = 2 * (r * W + c + 1) + 1;
      ids[2] = 2 * ((r + 1) * W + c);
      ids[3] = 2 * (r * W + c) + 1;
      const saddle = nh === 2 && hi[0] === hi[2];
      const centreHigh = saddle && (cv[0] + cv[1] + cv[2] + cv[3]) / 4 >= level;
      for (let k = 0; k < 4; k++) {
        if (!(!hi[k] && hi[(k + 1) & 3])) continue; // entering edge k
        // Partner: the leaving edge after k (centre low or no saddle), or before k (centre high).
        let m = -1;
        for (let s = 1; s < 4; s++) {
          const q = centreHigh ? (k - s + 4) & 3 : (k + s) & 3;
          if (hi[q] && !hi[(q + 1) & 3]) {
            m = q;
            break;
          }
        }
        if (m < 0) continue;
        const a = ids[k],
          b = ids[m];
        if (blocked !== null && (blocked[a] !== 0 || blocked[b] !== 0)) continue;
        next[a] = b;
        hasPrev[b] = 1;
      }
    }
  }
}

/**
 * Isolines of `values` (length width·height, index r·width + c) at `level`; "high" means value ≥ level.
 * @param blocked optional per-edge flags: edge id 2·(r·W + c) is the edge (c, r)–(c + 1, r), 2·(r·W + c) + 1 the
 *   edge (c, r)–(c, r + 1); a non-zero flag suppresses any crossing on it
 */
export function traceIsolines(values: ArrayLike<number>, g: LocalGrid, level: number, blocked: Uint8Array | null = null, offset = 0): Isoline[] {
  const W = g.width,
    H = g.height;
  if (W < 2 || H < 2) return [];
  const E = 2 * W * H;
  const next = new Int32Array(E).fill(-1);
  const hasPrev = new Uint8Array(E);
  const px = new Float64Array(E),
    py = new Float64Array(E);
  const v = (c: number, r: number) => values[offset + r * W + c];
  const point = (e: number) => {
    const cell = e >> 1,
      c = cell % W,
      r = (cell - c) / W;
    const a = v(c, r);
    if (e & 1) {
      const b = v(c, r + 1);
      px[e] = c;
      py[e] = r + (level - a) / (b - a);
    } else {
      const b = v(c + 1, r);
      px[e] = c + (level - a) / (b - a);
      py[e] = r;
    }
  };
  linkCellEdges(v, W, H, level, blocked, next, hasPrev);
  const lines: Isoline[] = [];
  const seen = new Uint8Array(E);
  const toKm = (list: number[], closed: boolean): Isoline => {
    const out = new Float64Array(2 * list.length);
    for (let t = 0; t < list.length; t++) {
      const e = list[t];
      out[2 * t] = g.x0 + px[e] * g.cellKm;
      out[2 * t + 1] = g.y0 + py[e] * g.cellKm;
    }
    return { coords: out, closed };
  };
  const follow = (start: number): number[] => {
    const list: number[] = [];
    let e = start;
    while (e >= 0 && seen[e] === 0) {
      seen[e] = 1;
      point(e);
      list.push(e);
      e = next[e];
    }
    if (e === start) {
      point(e);
      list.push(e);
    }
    return list;
  };
  for (let e = 0; e < E; e++) if (next[e] >= 0 && hasPrev[e] === 0 && seen[e] === 0) lines.push(toKm(follow(e), false));
  for (let e = 0; e < E; e++) {
    if (next[e] >= 0 && seen[e] === 0) {
      const list = follow(e);
      lines.push(toKm(list, list.length > 2 && list[0] === list[list.length - 1]));
    }
  }
  return lines.filter((l) => l.coords.length >= 4);
}
