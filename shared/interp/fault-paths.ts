import { segmentsCross } from './barriers.ts';
import { faultsToLocalKm } from './pointPrep.ts';
import { localProjectionFor, lonLatToLocalKm } from './projection.ts';

/** A fault's trace (lines of [lon, lat] degrees) under the name messages give it. */
export interface NamedTrace {
  name: string;
  lines: number[][][];
}

/** The faults on the straight paths from a place to its nearest data points. */
export interface FaultPaths {
  /** Paths tested: one to each of the nearest points (fewer when there are fewer points). */
  paths: number;
  /** Paths that cross at least one fault trace. */
  blocked: number;
  /** Each fault crossed by at least one path, with the number of paths it crosses; most crossings first. */
  faults: { name: string; crossings: number }[];
}

/**
 * Which fault traces stand between the place (lon, lat) and its `nearest` data points: the straight path to each
 * point, in the local transverse Mercator a run's interpolation uses (origin at the centre of the points' envelope,
 * projection.ts; traces projected vertex by vertex), tested against every piece of every trace with the barrier
 * crossing test (barriers.ts, docs/sources.md#fault-barriers). It explains a cell that no site informs: when every
 * path is blocked, the faults named here are the ones in the way.
 */
export function faultsOnPaths(
  lon: number,
  lat: number,
  points: { lon: ArrayLike<number>; lat: ArrayLike<number> },
  traces: NamedTrace[],
  nearest = 8,
): FaultPaths {
  const n = points.lon.length;
  if (n === 0) return { paths: 0, blocked: 0, faults: [] };
  const proj = localProjectionFor(points.lon, points.lat);
  const px = new Float64Array(n),
    py = new Float64Array(n);
  lonLatToLocalKm(proj, points.lon, points.lat, px, py);
  const hx = new Float64Array(1),
    hy = new Float64Array(1);
  lonLatToLocalKm(proj, [lon], [lat], hx, hy);
  const ax = hx[0],
    ay = hy[0];
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => Math.hypot(px[i] - ax, py[i] - ay) - Math.hypot(px[j] - ax, py[j] - ay));
  const chosen = order.slice(0, Math.max(1, nearest));
  const blockedPaths = new Set<number>();
  const faults: { name: string; crossings: number }[] = [];
  for (const t of traces) {
    const seg = faultsToLocalKm(t.lines, proj);
    if (seg === null) continue;
    let crossings = 0;
    for (const i of chosen) {
      let hit = false;
      for (let s = 0; s + 3 < seg.length && !hit; s += 4) hit = segmentsCross(ax, ay, px[i], py[i], seg[s], seg[s + 1], seg[s + 2], seg[s + 3]);
      if (hit) {
        crossings++;
        blockedPaths.add(i);
      }
    }
    if (crossings > 0) faults.push({ name: t.name, crossings });
  }
  faults.sort((a, b) => b.crossings - a.crossings || a.name.localeCompare(b.name));
  return { paths: chosen.length, blocked: blockedPaths.size, faults };
}
