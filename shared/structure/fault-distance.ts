/** Distance from grid cells to the nearest fault piece (indicator.ts uses it to skip barrier tests far from faults). */
import { pointSegmentDistance2 } from '../grid/segment.ts';
import type { LocalGrid } from './indicator.ts';

/**
 * Distance (km) from each cell centre to the nearest fault piece, capped at `capKm` (cells farther away hold
 * capKm, a lower bound), into `out`. Brute force over each piece's neighbourhood of cells. Fault pieces are
 * x1, y1, x2, y2 in local km (null: none).
 */
export function faultDistanceGrid(f: Float64Array | null, g: LocalGrid, capKm: number, out: Float32Array): void {
  out.fill(capKm);
  if (f === null) return;
  const W = g.width,
    H = g.height,
    s = g.cellKm;
  const cap2 = capKm * capKm;
  for (let q = 0; q + 3 < f.length; q += 4) {
    const ax = f[q],
      ay = f[q + 1],
      bx = f[q + 2],
      by = f[q + 3];
    const c0 = Math.max(0, Math.floor((Math.min(ax, bx) - capKm - g.x0) / s));
    const c1 = Math.min(W - 1, Math.ceil((Math.max(ax, bx) + capKm - g.x0) / s));
    const r0 = Math.max(0, Math.floor((Math.min(ay, by) - capKm - g.y0) / s));
    const r1 = Math.min(H - 1, Math.ceil((Math.max(ay, by) + capKm - g.y0) / s));
    for (let r = r0; r <= r1; r++) {
      const py = g.y0 + r * s;
      for (let c = c0; c <= c1; c++) {
        const d2 = pointSegmentDistance2(g.x0 + c * s, py, ax, ay, bx, by);
        if (d2 < cap2) {
          const d = Math.sqrt(d2);
          if (d < out[r * W + c]) out[r * W + c] = d;
        }
      }
    }
  }
}
