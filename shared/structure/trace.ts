/**
 * Fault traces in the local km frame: vertex clean-up and checks, distance along the trace, the nearest point on
 * it, and the side of a point. Side convention: LEFT and RIGHT of the trace's vertex order (walking from the first
 * vertex to the last); a MultiLineString's parts are walked in order and the distance along the trace continues
 * from one part to the next (the gap between parts is not counted).
 */
import { segmentsCross } from '../interp/barriers.ts';

export interface Trace {
  id: string;
  /** Parts: flat [x0, y0, x1, y1, ...] local km, consecutive duplicate vertices removed. */
  parts: Float64Array[];
  /** Distance along the trace at each vertex, km (continuing across parts). */
  alongKm: Float64Array[];
  lengthKm: number;
}

export interface TracePoint {
  /** Distance along the trace of the nearest point, km. */
  alongKm: number;
  /** Signed distance, km: > 0 right of the trace, < 0 left, 0 on it. */
  offsetKm: number;
  /** True when the nearest point is an end of the trace and the point lies beyond it (not beside the trace). */
  beyondEnd: boolean;
}

/** Builds a trace from parts of local-km vertices; returns warnings about removed duplicate vertices. */
export function buildTrace(id: string, partsIn: number[][][]): { trace: Trace; problems: string[]; warnings: string[] } {
  const problems: string[] = [];
  const warnings: string[] = [];
  const parts: Float64Array[] = [];
  const along: Float64Array[] = [];
  let s = 0,
    dropped = 0;
  partsIn.forEach((part, k) => {
    const xy: number[] = [];
    for (const p of part) {
      if (!(Number.isFinite(p[0]) && Number.isFinite(p[1]))) {
        problems.push(`part ${k}: a vertex is not a finite coordinate`);
        return;
      }
      if (xy.length >= 2 && p[0] === xy[xy.length - 2] && p[1] === xy[xy.length - 1]) {
        dropped++;
        continue;
      }
      xy.push(p[0], p[1]);
    }
    if (xy.length < 4) {
      problems.push(
        partsIn.length > 1 ? `part ${k} has fewer than two distinct vertices (zero length)` : 'the trace has fewer than two distinct vertices (zero length)',
      );
      return;
    }
    const a = new Float64Array(xy.length / 2);
    a[0] = s;
    for (let i = 1; i < a.length; i++) {
      s += Math.hypot(xy[2 * i] - xy[2 * i - 2], xy[2 * i + 1] - xy[2 * i - 1]);
      a[i] = s;
    }
    parts.push(Float64Array.from(xy));
    along.push(a);
  });
  if (dropped > 0) warnings.push(`${dropped} repeated vertex/vertices removed`);
  const trace: Trace = { id, parts, alongKm: along, lengthKm: s };
  if (parts.length > 0 && selfIntersects(trace))
    warnings.push('the trace crosses itself: sides (left/right) are ambiguous near the crossing; check the digitizing');
  return { trace, problems, warnings };
}

/** True when two non-adjacent pieces of the trace cross (O(n²) over pieces; traces are short). */
export function selfIntersects(t: Trace): boolean {
  const segs: number[] = [];
  const partOf: number[] = [];
  t.parts.forEach((p, k) => {
    for (let i = 0; i + 3 < p.length; i += 2) {
      segs.push(p[i], p[i + 1], p[i + 2], p[i + 3]);
      partOf.push(k);
    }
  });
  const n = partOf.length;
  for (let a = 0; a < n; a++) {
    for (let b = a + 2; b < n; b++) {
      const A = 4 * a,
        B = 4 * b;
      const c1 = segmentsCross(segs[A], segs[A + 1], segs[A + 2], segs[A + 3], segs[B], segs[B + 1], segs[B + 2], segs[B + 3]);
      const c2 = segmentsCross(segs[B], segs[B + 1], segs[B + 2], segs[B + 3], segs[A], segs[A + 1], segs[A + 2], segs[A + 3]);
      if (c1 || c2) return true;
    }
  }
  return false;
}

/** Flat fault pieces x1, y1, x2, y2 (local km) of several traces, for the barrier. */
export function tracePieces(traces: readonly Trace[]): Float64Array {
  const out: number[] = [];
  for (const t of traces) for (const p of t.parts) for (let i = 0; i + 3 < p.length; i += 2) out.push(p[i], p[i + 1], p[i + 2], p[i + 3]);
  return Float64Array.from(out);
}

/** The nearest point of the trace to (x, y) km: distance along it, signed offset (right > 0), beyond an end. */
export function locateOnTrace(t: Trace, x: number, y: number): TracePoint {
  let best = Infinity,
    bestAlong = NaN,
    bestSide = 0,
    beyond = false;
  const nParts = t.parts.length;
  for (let k = 0; k < nParts; k++) {
    const p = t.parts[k],
      a = t.alongKm[k];
    for (let i = 0; i + 3 < p.length; i += 2) {
      const ax = p[i],
        ay = p[i + 1],
        bx = p[i + 2],
        by = p[i + 3];
      const dx = bx - ax,
        dy = by - ay;
      const l2 = dx * dx + dy * dy;
      const u = ((x - ax) * dx + (y - ay) * dy) / l2;
      const uc = u < 0 ? 0 : u > 1 ? 1 : u;
      const ex = x - (ax + uc * dx),
        ey = y - (ay + uc * dy);
      const d2 = ex * ex + ey * ey;
      if (d2 < best) {
        best = d2;
        const seg = i / 2;
        bestAlong = a[seg] + uc * (a[seg + 1] - a[seg]);
        // Side from the piece's direction (cross product > 0: left, x east / y north).
        const cr = dx * (y - ay) - dy * (x - ax);
        bestSide = cr > 0 ? -1 : cr < 0 ? 1 : 0;
        beyond = (k === 0 && i === 0 && u < 0) || (k === nParts - 1 && i + 4 >= p.length && u > 1);
      }
    }
  }
  return { alongKm: bestAlong, offsetKm: bestSide * Math.sqrt(best), beyondEnd: beyond };
}

/** Point at distance `s` km along the trace and the unit direction there; null outside [0, length]. */
export function pointAlongTrace(t: Trace, s: number): { x: number; y: number; tx: number; ty: number } | null {
  if (!(s >= 0 && s <= t.lengthKm)) return null;
  for (let k = 0; k < t.parts.length; k++) {
    const p = t.parts[k],
      a = t.alongKm[k];
    if (s > a[a.length - 1] && k < t.parts.length - 1) continue;
    for (let i = 1; i < a.length; i++) {
      if (s <= a[i] || i === a.length - 1) {
        const L = a[i] - a[i - 1];
        const u = L > 0 ? Math.min(1, Math.max(0, (s - a[i - 1]) / L)) : 0;
        const dx = p[2 * i] - p[2 * i - 2],
          dy = p[2 * i + 1] - p[2 * i - 1];
        const len = Math.hypot(dx, dy);
        return { x: p[2 * i - 2] + u * dx, y: p[2 * i - 1] + u * dy, tx: dx / len, ty: dy / len };
      }
    }
  }
  return null;
}

/** Mean strike azimuth of the trace, degrees clockwise from north (first vertex → last vertex). */
export function traceAzimuthDeg(t: Trace): number {
  const first = t.parts[0],
    last = t.parts[t.parts.length - 1];
  const dx = last[last.length - 2] - first[0],
    dy = last[last.length - 1] - first[1];
  const az = (Math.atan2(dx, dy) * 180) / Math.PI;
  return (az + 360) % 360;
}
