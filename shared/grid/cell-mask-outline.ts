import type { GridSpec } from './grid.ts';

/**
 * The area of the flagged cells of a grid as GeoJSON geometry in lon/lat: the cells as rectangles (runs of flagged
 * cells along a row, stacked while the next row repeats the same run) and their outline (the cell edges between a
 * flagged and an unflagged cell, or the grid's edge, joined along straight runs). Corners go through `toLonLat`
 * (grid CRS → lon/lat); edges are straight between them, so a projected grid's rectangles are drawn as chords.
 */
export interface CellMaskGeometry {
  area: { type: 'MultiPolygon'; coordinates: number[][][][] };
  outline: { type: 'MultiLineString'; coordinates: number[][][] };
  cells: number;
}

export function cellMaskGeometry(mask: ArrayLike<number>, g: Omit<GridSpec, 'crs'>, toLonLat: (x: number, y: number) => [number, number]): CellMaskGeometry {
  const W = g.width,
    H = g.height;
  if (mask.length !== W * H) throw new RangeError(`mask has ${mask.length} cells, the grid ${W * H}`);
  const on = (r: number, c: number) => r >= 0 && r < H && c >= 0 && c < W && mask[r * W + c] !== 0;
  // Grid corner (column edge i, row edge j) in lon/lat, j counted down from the north edge.
  const corner = (i: number, j: number) => toLonLat(g.west + i * g.dx, g.north - j * g.dy);
  let cells = 0;
  const rects: number[][] = []; // [c0, c1, r0, r1): open rectangles, extended while the run repeats
  let open = new Map<string, number[]>();
  for (let r = 0; r < H; r++) {
    const next = new Map<string, number[]>();
    for (let c = 0; c < W; c++) {
      if (!on(r, c)) continue;
      let e = c;
      while (e + 1 < W && on(r, e + 1)) e++;
      cells += e - c + 1;
      const key = `${c}:${e + 1}`;
      const rect = open.get(key) ?? [c, e + 1, r, r];
      rect[3] = r + 1;
      if (!open.has(key)) rects.push(rect);
      next.set(key, rect);
      c = e;
    }
    open = next;
  }
  const area = rects.map(([c0, c1, r0, r1]) => [[corner(c0, r0), corner(c0, r1), corner(c1, r1), corner(c1, r0), corner(c0, r0)]]);
  const outline: number[][][] = [];
  // Horizontal edges: row edge j between rows j − 1 and j, runs of columns where exactly one side is flagged.
  for (let j = 0; j <= H; j++) {
    for (let c = 0; c < W; c++) {
      if (on(j - 1, c) === on(j, c)) continue;
      let e = c;
      while (e + 1 < W && on(j - 1, e + 1) !== on(j, e + 1)) e++;
      outline.push([corner(c, j), corner(e + 1, j)]);
      c = e;
    }
  }
  // Vertical edges: column edge i between columns i − 1 and i.
  for (let i = 0; i <= W; i++) {
    for (let r = 0; r < H; r++) {
      if (on(r, i - 1) === on(r, i)) continue;
      let e = r;
      while (e + 1 < H && on(e + 1, i - 1) !== on(e + 1, i)) e++;
      outline.push([corner(i, r), corner(i, e + 1)]);
      r = e;
    }
  }
  return { area: { type: 'MultiPolygon', coordinates: area }, outline: { type: 'MultiLineString', coordinates: outline }, cells };
}
