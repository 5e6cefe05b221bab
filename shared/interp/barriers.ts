import Flatbush from 'flatbush';
import type { VisibilityTest } from './neighbours.ts';

/**
 * Fault barriers: a data point does not inform a location when the straight segment between them (in the local
 * km projection) crosses a fault trace. Fault traces are polylines projected vertex by vertex, so each piece is
 * straight in the local projection (digitize long traces densely). Segments are indexed with flatbush. A location
 * from which every datum within reach lies behind a fault gets no value (docs/sources.md#fault-barriers): the grid
 * kernel counts such cells apart and runs draw them as "no data visible across faults".
 *
 * Crossing test (orientation predicates, as in O'Rourke, Computational Geometry in C, 2nd ed., §1.5), with this
 * epsilon policy — no tolerance, exact zeros decided by rule:
 * - path a→b, fault piece c→d; o(p, q, r) = (q − p) × (r − p) in floating point.
 * - The path is blocked only if a and b lie strictly on opposite sides of the piece's line (o(c,d,a)·o(c,d,b) < 0):
 *   a point exactly on a trace informs both sides.
 * - The piece's endpoints are tested against the path's line with a zero counted as positive (a symbolic
 *   perturbation): a path through a shared vertex of a trace meets exactly one of the two pieces when it passes
 *   through the trace there, and none or both when it only grazes the vertex (both: blocked, the cautious side).
 * Floating-point error can flip a decision only for points within about 1e-13 km of a trace line.
 */
export class FaultBarrier implements VisibilityTest {
  /** Number of straight fault pieces. */
  readonly count: number;
  private readonly seg: Float64Array;
  private readonly index: Flatbush;
  private readonly px: ArrayLike<number>;
  private readonly py: ArrayLike<number>;
  private ax = 0;
  private ay = 0;
  private bx = 0;
  private by = 0;
  private hit = false;
  private readonly test: (i: number) => boolean;
  /** Number of visibility tests made (for diagnostics). */
  tests = 0;

  /**
   * @param segments flat [x1, y1, x2, y2, ...] fault pieces in local km
   * @param px, py data point coordinates (local km) that `visible(x, y, i)` refers to
   */
  constructor(segments: Float64Array, px: ArrayLike<number>, py: ArrayLike<number>) {
    if (segments.length % 4 !== 0) throw new RangeError('fault segments must be x1,y1,x2,y2 quadruples');
    this.count = segments.length / 4;
    this.seg = segments;
    this.px = px;
    this.py = py;
    const index = new Flatbush(Math.max(1, this.count));
    for (let s = 0; s < this.count; s++) {
      const x1 = segments[4 * s],
        y1 = segments[4 * s + 1],
        x2 = segments[4 * s + 2],
        y2 = segments[4 * s + 3];
      index.add(Math.min(x1, x2), Math.min(y1, y2), Math.max(x1, x2), Math.max(y1, y2));
    }
    if (this.count === 0) index.add(NaN, NaN, NaN, NaN);
    index.finish();
    this.index = index;
    // One closure for the object's life: the flatbush filter records a hit and keeps no results.
    this.test = (s: number) => {
      if (
        !this.hit &&
        s < this.count &&
        segmentsCross(this.ax, this.ay, this.bx, this.by, this.seg[4 * s], this.seg[4 * s + 1], this.seg[4 * s + 2], this.seg[4 * s + 3])
      )
        this.hit = true;
      return false;
    };
  }

  /** True when the straight path (ax, ay)–(bx, by) (km) crosses a fault piece. */
  blocks(ax: number, ay: number, bx: number, by: number): boolean {
    if (this.count === 0) return false;
    this.tests++;
    this.ax = ax;
    this.ay = ay;
    this.bx = bx;
    this.by = by;
    this.hit = false;
    this.index.search(Math.min(ax, bx), Math.min(ay, by), Math.max(ax, bx), Math.max(ay, by), this.test);
    return this.hit;
  }

  /** VisibilityTest: data point i informs (x, y) unless a fault lies between them. */
  visible(x: number, y: number, i: number): boolean {
    return !this.blocks(x, y, this.px[i], this.py[i]);
  }
}

/** Orientation (q − p) × (r − p): > 0 when r is left of p→q. */
export function orient(px: number, py: number, qx: number, qy: number, rx: number, ry: number): number {
  return (qx - px) * (ry - py) - (qy - py) * (rx - px);
}

/** The crossing test of `FaultBarrier` (see its policy) for path a→b and fault piece c→d. */
export function segmentsCross(ax: number, ay: number, bx: number, by: number, cx: number, cy: number, dx: number, dy: number): boolean {
  const o1 = orient(cx, cy, dx, dy, ax, ay);
  const o2 = orient(cx, cy, dx, dy, bx, by);
  if (!((o1 < 0 && o2 > 0) || (o1 > 0 && o2 < 0))) return false;
  const o3 = orient(ax, ay, bx, by, cx, cy) >= 0;
  const o4 = orient(ax, ay, bx, by, dx, dy) >= 0;
  return o3 !== o4;
}
