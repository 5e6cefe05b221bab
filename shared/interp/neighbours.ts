import KDBush from 'kdbush';

/** Decides whether data point `i` may inform the location (x, y) (e.g. no fault between them). */
export interface VisibilityTest {
  visible(x: number, y: number, i: number): boolean;
}

/**
 * k-nearest-neighbour search over a kdbush k-d tree of the data points (local km coordinates). The traversal is
 * a best-first pruned depth-first search over kdbush's kd-sorted arrays (Friedman, Bentley & Finkel 1977),
 * written here because kdbush 4 has range queries only; it allocates nothing per query: results go into
 * caller buffers, sorted by distance. An optional `VisibilityTest` is applied to candidates that would enter the
 * result, so the search returns the k nearest *visible* points.
 */
export class NeighbourIndex {
  readonly n: number;
  private readonly tree: KDBush;
  private readonly ids: Uint16Array | Uint32Array;
  private readonly coords: Float64Array;
  private readonly nodeSize: number;
  // Explicit traversal stack: (left, right, axis) ints and the squared lower bound of the node's distance.
  private stackI = new Int32Array(3 * 128);
  private stackD = new Float64Array(128);

  constructor(x: ArrayLike<number>, y: ArrayLike<number>, nodeSize = 16) {
    this.n = x.length;
    const tree = new KDBush(Math.max(1, this.n), nodeSize, Float64Array);
    for (let i = 0; i < this.n; i++) tree.add(x[i], y[i]);
    if (this.n === 0) tree.add(NaN, NaN);
    tree.finish();
    this.tree = tree;
    this.ids = tree.ids;
    this.coords = tree.coords as Float64Array;
    this.nodeSize = tree.nodeSize;
  }

  /**
   * The (up to) k nearest points to (qx, qy) within `maxDistKm` (inclusive), skipping `exclude` and points the
   * visibility test rejects. Writes ids and squared distances (km²) into `outIds`/`outD2` (length ≥ k), nearest
   * first, and returns how many were found.
   */
  nearest(
    qx: number,
    qy: number,
    k: number,
    maxDistKm: number,
    outIds: Int32Array,
    outD2: Float64Array,
    vis: VisibilityTest | null = null,
    exclude = -1,
  ): number {
    if (this.n === 0 || !(k >= 1)) return 0;
    const { ids, coords, nodeSize } = this;
    let worst = maxDistKm === Infinity ? Infinity : maxDistKm * maxDistKm;
    let count = 0;
    let si = this.stackI,
      sd = this.stackD;
    let sp: number;
    si[0] = 0;
    si[1] = ids.length - 1;
    si[2] = 0;
    sd[0] = 0;
    sp = 1;
    while (sp > 0) {
      sp--;
      const left = si[3 * sp],
        right = si[3 * sp + 1],
        axis = si[3 * sp + 2];
      if (sd[sp] > worst) continue;
      if (right - left <= nodeSize) {
        for (let i = left; i <= right; i++) {
          const dx = coords[2 * i] - qx,
            dy = coords[2 * i + 1] - qy;
          const d2 = dx * dx + dy * dy;
          if (d2 <= worst) {
            const id = ids[i];
            if (id === exclude || (vis !== null && !vis.visible(qx, qy, id))) continue;
            count = insertNearest(outIds, outD2, count, k, id, d2);
            if (count === k) worst = Math.min(worst, outD2[k - 1]);
          }
        }
        continue;
      }
      const m = (left + right) >> 1;
      const mx = coords[2 * m],
        my = coords[2 * m + 1];
      const dx = mx - qx,
        dy = my - qy;
      const d2 = dx * dx + dy * dy;
      if (d2 <= worst) {
        const id = ids[m];
        if (id !== exclude && (vis === null || vis.visible(qx, qy, id))) {
          count = insertNearest(outIds, outD2, count, k, id, d2);
          if (count === k) worst = Math.min(worst, outD2[k - 1]);
        }
      }
      const split = axis === 0 ? qx - mx : qy - my; // < 0: query on the left side
      const farBound = Math.max(sd[sp], split * split);
      const nearBound = sd[sp];
      if (sp + 2 >= sd.length) {
        const ni = new Int32Array(si.length * 2);
        ni.set(si);
        this.stackI = si = ni;
        const nd = new Float64Array(sd.length * 2);
        nd.set(sd);
        this.stackD = sd = nd;
      }
      // Push the far half first so the near half is searched first and tightens `worst`.
      if (split < 0) {
        push(si, sd, sp++, m + 1, right, 1 - axis, farBound);
        push(si, sd, sp++, left, m - 1, 1 - axis, nearBound);
      } else {
        push(si, sd, sp++, left, m - 1, 1 - axis, farBound);
        push(si, sd, sp++, m + 1, right, 1 - axis, nearBound);
      }
    }
    return count;
  }

  /** Distance (km) from (qx, qy) to the nearest point, or Infinity beyond `maxDistKm`. */
  nearestDistance(qx: number, qy: number, maxDistKm: number, idBuf: Int32Array, d2Buf: Float64Array): number {
    const n = this.nearest(qx, qy, 1, maxDistKm, idBuf, d2Buf);
    return n === 0 ? Infinity : Math.sqrt(d2Buf[0]);
  }

  /** Ids of the points within `rKm` of (qx, qy), into `out` (grows a plain array; used off the hot path). */
  within(qx: number, qy: number, rKm: number, out: number[] | Uint32Array): number {
    if (this.n === 0) return 0;
    return this.tree.withinInto(qx, qy, rKm, out);
  }
}

function push(si: Int32Array, sd: Float64Array, sp: number, left: number, right: number, axis: number, bound: number): void {
  if (left > right) return pushEmpty(si, sd, sp);
  si[3 * sp] = left;
  si[3 * sp + 1] = right;
  si[3 * sp + 2] = axis;
  sd[sp] = bound;
}

function pushEmpty(si: Int32Array, sd: Float64Array, sp: number): void {
  // An empty range (left > right) scans nothing.
  si[3 * sp] = 1;
  si[3 * sp + 1] = 0;
  si[3 * sp + 2] = 0;
  sd[sp] = 0;
}

/** Inserts (id, d2) into the sorted buffers of capacity k; returns the new count. Ties keep the smaller id first. */
export function insertNearest(ids: Int32Array, d2s: Float64Array, count: number, k: number, id: number, d2: number): number {
  let pos = count < k ? count : k - 1;
  if (count === k && (d2 > d2s[k - 1] || (d2 === d2s[k - 1] && id > ids[k - 1]))) return count;
  while (pos > 0 && (d2s[pos - 1] > d2 || (d2s[pos - 1] === d2 && ids[pos - 1] > id))) {
    ids[pos] = ids[pos - 1];
    d2s[pos] = d2s[pos - 1];
    pos--;
  }
  ids[pos] = id;
  d2s[pos] = d2;
  return count < k ? count + 1 : k;
}
