/**
 * Region masking by scanline (even–odd rule, as in the classic polygon fill of Foley et al., Computer Graphics,
 * §3.6): per grid row, the x-crossings of the row's centre line with every ring edge are sorted, and a cell
 * centre is inside when an odd number of crossings lie to its west. Rings (outer and holes, any number of
 * polygons) are in grid CRS coordinates. Cost per row O(E log E), E = edge count, instead of O(E) per cell.
 */
export class RegionMask {
  private readonly edges: Float64Array; // x1, y1, x2, y2 per edge
  private readonly xs: Float64Array;

  constructor(rings: number[][][]) {
    let m = 0;
    for (const r of rings) m += Math.max(0, r.length - 1);
    this.edges = new Float64Array(4 * m);
    let k = 0;
    for (const r of rings) {
      for (let i = 0; i + 1 < r.length; i++) {
        this.edges[k++] = r[i][0];
        this.edges[k++] = r[i][1];
        this.edges[k++] = r[i + 1][0];
        this.edges[k++] = r[i + 1][1];
      }
    }
    this.xs = new Float64Array(Math.max(1, m));
  }

  /**
   * Marks the cells of one row: `inside[c] = 1` when the centre (west + (c + ½)·dx, y) is inside the region.
   * An edge counts for y in [min(y1,y2), max(y1,y2)) (half-open, so a vertex on the line is counted once).
   */
  row(y: number, west: number, dx: number, width: number, inside: Uint8Array): void {
    const e = this.edges;
    let n = 0;
    for (let k = 0; k < e.length; k += 4) {
      const y1 = e[k + 1],
        y2 = e[k + 3];
      if ((y1 <= y && y < y2) || (y2 <= y && y < y1)) {
        this.xs[n++] = e[k] + ((y - y1) / (y2 - y1)) * (e[k + 2] - e[k]);
      }
    }
    const xs = this.xs.subarray(0, n).sort();
    let t = 0;
    let odd = false;
    for (let c = 0; c < width; c++) {
      const x = west + (c + 0.5) * dx;
      while (t < n && xs[t] <= x) {
        odd = !odd;
        t++;
      }
      inside[c] = odd ? 1 : 0;
    }
  }
}
