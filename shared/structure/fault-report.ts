/**
 * Fault report: how the metamorphic zones meet each fault. Per fault, from its trace (sides LEFT/RIGHT of the
 * vertex order; the hanging wall is the side the dip direction points to):
 * - the samples within `faultDistanceKm` on each side (beside the trace, not beyond its ends) and their zones;
 * - the grade jump across the fault: the difference in median rank between the two sides' samples, restricted to
 *   the stretch of trace where both sides have samples (so the comparison is of like with like); the higher side
 *   is the one with the higher median, or with equal medians the one higher at the trace on average;
 * - at stations along the trace, the zone just left and just right of it, from the barrier-honouring indicator
 *   surfaces (each side then sees only its own samples near the trace): the jump at the trace;
 * - zones missing across it: present among one side's samples (at least two) while all of the other side's samples
 *   (same stretch, at least three) lie above or all below that zone, or skipped at the trace (a jump of two or more ranks in the direction of the regional grade change);
 * - zones repeated across it: where the jump at the trace goes against the grade change on both sides (as a thrust
 *   sheet stacks higher-grade rock on lower), the zones above the lower side's zone up to the higher side's;
 * - where one isograd meets the trace on both sides, the distance along the trace between the two meeting points:
 *   the apparent (strike) separation, `separationKm`. A meeting point is first found where the side's indicator
 *   profile along the trace crosses 0.5, then refined by a local logistic regression (Cox 1958) of that side's
 *   sample indicators on position (along the trace and off it) within a window around it: the fitted 0.5 line is
 *   the side's local isograd, and its intersection with the trace is the meeting point. The fit accounts for an
 *   isograd that meets the trace obliquely, which smooth interpolation smears along the trace. A left and a right
 *   meeting point pair up when each is the other's nearest with the same
 *   sense (grade rising the same way along the trace) within `maxSeparationKm`.
 */
import { MAX_RANK } from './grade.ts';
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, rankFromIndicators, type IndicatorField } from './indicator.ts';
import { locateOnTrace, pointAlongTrace, traceAzimuthDeg, type Trace } from './trace.ts';

export type Side = 'left' | 'right';

export interface FaultInfo {
  trace: Trace;
  name?: string;
  kind?: string;
  dipDeg?: number;
  dipDirectionDeg?: number;
}

export interface FaultReportOptions {
  /** Samples within this distance of the trace count for the side statistics, km (default 10). */
  faultDistanceKm?: number;
  /** Station spacing along the trace, km (default 0.5). */
  stationKm?: number;
  /** Stations are evaluated this far off the trace on each side, km (default 0.02). */
  stationOffsetKm?: number;
  /** A side's station counts only with a visible sample within this distance, km. */
  supportKm: number;
  /** Support distance for the stations along the trace, km (default: the larger of supportKm and 1.5 × faultDistanceKm). */
  stationSupportKm?: number;
  /** Half-width along the trace of the window for the local logistic fit of a meeting point, km (default max(15, 1.5·faultDistanceKm)). */
  fitWindowKm?: number;
  /** Largest separation paired, km (default 40). */
  maxSeparationKm?: number;
}

export interface SideStats {
  samples: number;
  /** Samples with one zone (rank known exactly). */
  decided: number;
  /** Samples with a range of zones (facies or P–T only). */
  partial: number;
  zoneCounts: Record<string, number>;
  medianRank: number | null;
  medianZone: string | null;
  minZone: string | null;
  maxZone: string | null;
}

export interface Meeting {
  isograd: string;
  side: Side;
  alongKm: number;
  /** 'fit': refined by the local logistic fit; 'profile': the 0.5 crossing of the indicator profile. */
  basis: 'fit' | 'profile';
  /** +1 when the grade rises with distance along the trace there, −1 when it falls. */
  sense: 1 | -1;
}

export interface Separation {
  isograd: string;
  separationKm: number;
  leftAlongKm: number;
  rightAlongKm: number;
}

export interface FaultReport {
  id: string;
  name: string | null;
  kind: string | null;
  lengthKm: number;
  strikeDeg: number;
  hangingWall: Side | null;
  sides: { left: SideStats; right: SideStats };
  /** Difference in median rank between the higher and the lower side (≥ 0; null without samples on both sides). */
  gradeJump: number | null;
  higherSide: Side | null;
  /** 'footwall' or 'hanging wall' for higherSide when the dip direction is known. */
  higherWall: 'footwall' | 'hanging wall' | null;
  /** Median over stations of (rank just right − rank just left) at the trace; stations with both sides supported. */
  traceJump: { median: number | null; mean: number | null; stations: number };
  missingZones: string[];
  missingZoneDetails: { zone: string; missingOn: Side | 'both'; basis: 'samples' | 'trace' }[];
  repeatedZones: string[];
  meetings: Meeting[];
  separations: Separation[];
  /** The stretch of trace (km along it) where both sides have samples within faultDistanceKm. */
  overlapAlongKm: [number, number] | null;
  warnings: string[];
}

function median(v: number[]): number | null {
  if (v.length === 0) return null;
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}

function sideStats(lo: number[], hi: number[]): SideStats {
  const zoneCounts: Record<string, number> = Object.fromEntries(ZONE_NAMES.map((z) => [z, 0]));
  const ranks: number[] = [];
  let partial = 0;
  for (let t = 0; t < lo.length; t++) {
    if (lo[t] === hi[t]) { ranks.push(lo[t]); zoneCounts[ZONE_NAMES[lo[t]]]++; } else partial++;
  }
  const med = median(ranks);
  return {
    samples: lo.length, decided: ranks.length, partial, zoneCounts,
    medianRank: med,
    medianZone: med === null ? null : ZONE_NAMES[Math.round(med)] ?? null,
    minZone: ranks.length > 0 ? ZONE_NAMES[Math.min(...ranks)] : null,
    maxZone: ranks.length > 0 ? ZONE_NAMES[Math.max(...ranks)] : null,
  };
}

/**
 * Local logistic regression (Cox 1958; fitted by Newton–Raphson / iteratively reweighted least squares with a small
 * ridge penalty so separable data give a finite fit) of the indicator "rank ≥ j" on (s − s0)/W and u/D for one
 * side's decided samples within the window |s − s0| ≤ W. Returns the along-trace position where the fitted 0.5
 * line meets the trace (u = 0), or null when the window holds fewer than two samples of each class, the fitted
 * sense disagrees with the profile's, or the point falls outside the window.
 */
export function fitMeeting(pool: readonly { s: number; u: number; lo: number; hi: number }[], j: number, s0: number, sense: 1 | -1, W: number, D: number): number | null {
  const X: number[] = [], Y: number[] = [], Z: number[] = [];
  let ones = 0, zeros = 0;
  for (const q of pool) {
    if (Math.abs(q.s - s0) > W) continue;
    let ind: number;
    if (q.lo >= j) ind = 1; else if (q.hi < j) ind = 0; else continue;
    X.push((q.s - s0) / W); Y.push(q.u / D); Z.push(ind);
    if (ind === 1) ones++; else zeros++;
  }
  if (ones < 2 || zeros < 2) return null;
  // β = (b0, b1, b2); ridge 0.1 on b1, b2 (scaled coordinates, so the penalty is unit-free).
  const b = [0, 0, 0];
  const ridge = 0.1;
  for (let it = 0; it < 50; it++) {
    const g = [0, ridge * b[1], ridge * b[2]];
    const Hm = [[1e-9, 0, 0], [0, ridge, 0], [0, 0, ridge]];
    for (let i = 0; i < Z.length; i++) {
      const f = [1, X[i], Y[i]];
      const eta = b[0] + b[1] * f[1] + b[2] * f[2];
      const p = 1 / (1 + Math.exp(-eta));
      const w = p * (1 - p);
      for (let a = 0; a < 3; a++) {
        g[a] -= (Z[i] - p) * f[a];
        for (let c = 0; c < 3; c++) Hm[a][c] += w * f[a] * f[c];
      }
    }
    const step = solve3(Hm, g);
    if (step === null) return null;
    let sz = 0;
    for (let a = 0; a < 3; a++) { b[a] -= step[a]; sz += Math.abs(step[a]); }
    if (sz < 1e-10) break;
  }
  if (!(Math.sign(b[1]) === sense) || !(Math.abs(b[1]) > 1e-9)) return null;
  const x = -b[0] / b[1];
  if (!(Math.abs(x) <= 1)) return null;
  return s0 + x * W;
}

/** Solves a 3 × 3 system by Cramer's rule; null when singular. */
function solve3(A: number[][], r: number[]): number[] | null {
  const det = (m: number[][]) => m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
  const d = det(A);
  if (!(Math.abs(d) > 1e-300)) return null;
  const out: number[] = [];
  for (let c = 0; c < 3; c++) {
    const m = A.map((row, i) => row.map((v, k) => (k === c ? r[i] : v)));
    out.push(det(m) / d);
  }
  return out;
}

/** The report of one fault against the (barrier-honouring) indicator field of all samples. */
export function faultReport(f: FaultInfo, field: IndicatorField, o: FaultReportOptions): FaultReport {
  const t = f.trace;
  const D = o.faultDistanceKm ?? 10;
  const step = o.stationKm ?? 0.5;
  const delta = o.stationOffsetKm ?? 0.02;
  const maxSep = o.maxSeparationKm ?? 40;
  const stSupport = o.stationSupportKm ?? Math.max(o.supportKm, 1.5 * D);
  const warnings: string[] = [];
  const strikeDeg = traceAzimuthDeg(t);
  let hangingWall: Side | null = null;
  if (f.dipDirectionDeg !== undefined && Number.isFinite(f.dipDirectionDeg)) {
    const rightAz = (strikeDeg + 90) % 360;
    let diff = Math.abs(((f.dipDirectionDeg - rightAz + 540) % 360) - 180);
    diff = Math.min(diff, 360 - diff);
    hangingWall = diff < 90 ? 'right' : diff > 90 ? 'left' : null;
    if (diff === 90) warnings.push('the dip direction is parallel to the trace: hanging wall undetermined');
  }

  // Samples beside the trace.
  const near: { s: number; u: number; side: Side; lo: number; hi: number }[] = [];
  for (let i = 0; i < field.count; i++) {
    const p = locateOnTrace(t, field.x[i], field.y[i]);
    if (p.beyondEnd || !(Math.abs(p.offsetKm) <= D) || p.offsetKm === 0) continue;
    near.push({ s: p.alongKm, u: p.offsetKm, side: p.offsetKm > 0 ? 'right' : 'left', lo: field.lo[i], hi: field.hi[i] });
  }
  const L = near.filter((q) => q.side === 'left'), R = near.filter((q) => q.side === 'right');
  let overlap: [number, number] | null = null;
  if (L.length > 0 && R.length > 0) {
    const a = Math.max(Math.min(...L.map((q) => q.s)), Math.min(...R.map((q) => q.s)));
    const b = Math.min(Math.max(...L.map((q) => q.s)), Math.max(...R.map((q) => q.s)));
    if (a <= b) overlap = [a, b];
  }
  const inOverlap = (q: { s: number }) => overlap !== null && q.s >= overlap[0] && q.s <= overlap[1];
  const left = sideStats(L.map((q) => q.lo), L.map((q) => q.hi));
  const right = sideStats(R.map((q) => q.lo), R.map((q) => q.hi));
  const Lo = L.filter(inOverlap), Ro = R.filter(inOverlap);
  const lov = sideStats(Lo.map((q) => q.lo), Lo.map((q) => q.hi));
  const rov = sideStats(Ro.map((q) => q.lo), Ro.map((q) => q.hi));
  if (L.length === 0 || R.length === 0) warnings.push(`no samples within ${D} km on the ${L.length === 0 ? 'left' : 'right'} side of the trace`);

  // Stations along the trace: zones just off it on each side and half-way across the band.
  const nSt = Math.floor(t.lengthKm / step) + 1;
  const P = { left: new Float64Array(nSt * BOUNDARY_COUNT), right: new Float64Array(nSt * BOUNDARY_COUNT) };
  const ok = { left: new Uint8Array(nSt), right: new Uint8Array(nSt) };
  const nearRank = { left: new Int8Array(nSt).fill(-1), right: new Int8Array(nSt).fill(-1) };
  const bandRank = { left: new Int8Array(nSt).fill(-1), right: new Int8Array(nSt).fill(-1) };
  const buf = new Float64Array(BOUNDARY_COUNT);
  const along = new Float64Array(nSt);
  for (let k = 0; k < nSt; k++) {
    const s = Math.min(t.lengthKm, k * step);
    along[k] = s;
    const q = pointAlongTrace(t, s);
    if (q === null) continue;
    for (const side of ['left', 'right'] as const) {
      const sg = side === 'right' ? 1 : -1;
      // Right normal of the direction (tx, ty) is (ty, −tx).
      const nx = sg * q.ty, ny = -sg * q.tx;
      const d = field.predict(q.x + delta * nx, q.y + delta * ny, buf);
      if (d <= stSupport) {
        ok[side][k] = 1;
        P[side].set(buf, k * BOUNDARY_COUNT);
        nearRank[side][k] = rankFromIndicators(buf);
      }
      const d2 = field.predict(q.x + (D / 2) * nx, q.y + (D / 2) * ny, buf);
      if (d2 <= stSupport) bandRank[side][k] = rankFromIndicators(buf);
    }
  }

  // Jump at the trace; repeated and skipped zones.
  const jumps: number[] = [];
  const repeatVotes = new Int32Array(MAX_RANK + 1), skipVotes = new Int32Array(MAX_RANK + 1);
  let both = 0, trended = 0;
  for (let k = 0; k < nSt; k++) {
    const rl = nearRank.left[k], rr = nearRank.right[k];
    if (rl < 0 || rr < 0) continue;
    both++;
    jumps.push(rr - rl);
    const bl = bandRank.left[k], br = bandRank.right[k];
    if (bl < 0 || br < 0) continue;
    // Grade change walking from left to right: across the left band, then the right band.
    const gl = Math.sign(rl - bl), gr = Math.sign(br - rr);
    if (gl === 0 || gl !== gr) continue;
    trended++;
    const J = rr - rl;
    if (Math.sign(J) === -gl) {
      // Against the trend: zones above the lower near-trace zone up to the higher one are met twice.
      for (let z = Math.min(rl, rr) + 1; z <= Math.max(rl, rr); z++) repeatVotes[z]++;
    } else if (Math.abs(J) >= 2) {
      for (let z = Math.min(rl, rr) + 1; z < Math.max(rl, rr); z++) skipVotes[z]++;
    }
  }
  const voteMin = Math.max(2, Math.ceil(0.2 * trended));
  const repeatedZones = ZONE_NAMES.filter((_, z) => repeatVotes[z] >= voteMin);
  const traceMedian = median(jumps);

  // Missing zones by presence (same stretch of trace), then by skipping at the trace.
  const details: FaultReport['missingZoneDetails'] = [];
  // A zone is missing on side B when side A holds at least two samples of it and B's (at least three) decided
  // samples all lie above it or all below it: the zone is beyond the grades B shows, not a gap in B's sampling.
  const missingOn = (a: SideStats, bSide: typeof Lo, z: number): boolean => {
    if (a.zoneCounts[ZONE_NAMES[z]] < 2) return false;
    const ranks = bSide.filter((q) => q.lo === q.hi).map((q) => q.lo);
    if (ranks.length < 3) return false;
    if (bSide.some((q) => q.lo !== q.hi && q.lo <= z && q.hi >= z)) return false;
    return ranks.every((r) => r < z) || ranks.every((r) => r > z);
  };
  if (Lo.length > 0 && Ro.length > 0) {
    ZONE_NAMES.forEach((z, r) => {
      if (missingOn(lov, Ro, r)) details.push({ zone: z, missingOn: 'right', basis: 'samples' });
      if (missingOn(rov, Lo, r)) details.push({ zone: z, missingOn: 'left', basis: 'samples' });
    });
  }
  ZONE_NAMES.forEach((z, r) => { if (skipVotes[r] >= voteMin && !details.some((d) => d.zone === z)) details.push({ zone: z, missingOn: 'both', basis: 'trace' }); });

  // Grade jump (median ranks over the shared stretch) and the higher side.
  let gradeJump: number | null = null, higherSide: Side | null = null;
  if (lov.medianRank !== null && rov.medianRank !== null) {
    const d = rov.medianRank - lov.medianRank;
    gradeJump = Math.abs(d);
    higherSide = d > 0 ? 'right' : d < 0 ? 'left' : null;
    // Equal medians: the side that is higher at the trace on average, when it is clearly so (mean jump ≥ 0.1 rank).
    if (higherSide === null && jumps.length > 0) {
      const mean = jumps.reduce((a, b) => a + b, 0) / jumps.length;
      higherSide = mean >= 0.1 ? 'right' : mean <= -0.1 ? 'left' : null;
    }
  }
  const higherWall = higherSide === null || hangingWall === null ? null : higherSide === hangingWall ? 'hanging wall' : 'footwall';

  // Meeting points and separations.
  const meetings: Meeting[] = [];
  const windowKm = o.fitWindowKm ?? Math.max(15, 1.5 * D);
  for (const side of ['left', 'right'] as const) {
    const pool = side === 'left' ? L : R;
    for (let j = 1; j <= BOUNDARY_COUNT; j++) {
      const found: Meeting[] = [];
      for (let k = 1; k < nSt; k++) {
        if (ok[side][k - 1] === 0 || ok[side][k] === 0) continue;
        const a = P[side][(k - 1) * BOUNDARY_COUNT + j - 1], b = P[side][k * BOUNDARY_COUNT + j - 1];
        if (Number.isNaN(a) || Number.isNaN(b)) continue;
        if ((a < 0.5) === (b < 0.5)) continue;
        const u = (0.5 - a) / (b - a);
        const s0 = along[k - 1] + u * (along[k] - along[k - 1]);
        const sense: 1 | -1 = b > a ? 1 : -1;
        const fit = fitMeeting(pool, j, s0, sense, windowKm, D);
        const m: Meeting = { isograd: `${ZONE_NAMES[j]}-in`, side, alongKm: fit ?? s0, basis: fit === null ? 'profile' : 'fit', sense };
        // Crossings of one isograd a few km apart with the same sense are one meeting (noise in the profile).
        const dup = found.find((q) => q.sense === m.sense && Math.abs(q.alongKm - m.alongKm) < 2);
        if (dup === undefined) found.push(m);
      }
      meetings.push(...found);
    }
  }
  const separations: Separation[] = [];
  for (let j = 1; j <= BOUNDARY_COUNT; j++) {
    const name = `${ZONE_NAMES[j]}-in`;
    const ml = meetings.filter((m) => m.isograd === name && m.side === 'left');
    const mr = meetings.filter((m) => m.isograd === name && m.side === 'right');
    const nearestOf = (m: Meeting, pool: Meeting[]) => {
      let best: Meeting | null = null;
      for (const q of pool) if (q.sense === m.sense && (best === null || Math.abs(q.alongKm - m.alongKm) < Math.abs(best.alongKm - m.alongKm))) best = q;
      return best;
    };
    for (const a of ml) {
      const b = nearestOf(a, mr);
      if (b === null || nearestOf(b, ml) !== a) continue;
      const sep = Math.abs(a.alongKm - b.alongKm);
      if (sep > maxSep) continue;
      separations.push({ isograd: name, separationKm: sep, leftAlongKm: a.alongKm, rightAlongKm: b.alongKm });
    }
  }

  return {
    id: t.id, name: f.name ?? null, kind: f.kind ?? null, lengthKm: t.lengthKm, strikeDeg, hangingWall,
    sides: { left, right },
    gradeJump, higherSide, higherWall,
    traceJump: { median: traceMedian, mean: jumps.length > 0 ? jumps.reduce((a, b) => a + b, 0) / jumps.length : null, stations: both },
    missingZones: [...new Set(details.map((d) => d.zone))],
    missingZoneDetails: details,
    repeatedZones,
    meetings, separations, overlapAlongKm: overlap, warnings,
  };
}
