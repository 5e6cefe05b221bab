/**
 * Squared planar distance from (px, py) to the segment (ax, ay)–(bx, by), in the units of the coordinates squared:
 * the projection onto the segment's line, clamped to its ends. A zero-length segment is its end point.
 */
export function pointSegmentDistance2(px: number, py: number, ax: number, ay: number, bx: number, by: number): number {
  const dx = bx - ax,
    dy = by - ay;
  const l2 = dx * dx + dy * dy;
  let t = l2 > 0 ? ((px - ax) * dx + (py - ay) * dy) / l2 : 0;
  t = t < 0 ? 0 : t > 1 ? 1 : t;
  const ex = ax + t * dx - px,
    ey = ay + t * dy - py;
  return ex * ex + ey * ey;
}
