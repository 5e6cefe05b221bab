/**
 * The zone statements of a fault report (the rules are stated in fault-report.ts): the samples beside the trace and
 * each side's statistics, zones missing in windows along the shared stretch, zones repeated along transects at right
 * angles to the trace, and the grade jump across it.
 */
import { MAX_RANK } from './grade.ts';
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, rankFromIndicators, type IndicatorField } from './indicator.ts';
import { locateOnTrace, pointAlongTrace, type Trace } from './trace.ts';
import type { FaultReport, NearSample, Side, SideStats, ZoneStatement } from './fault-types.ts';
import type { Stations } from './fault-meetings.ts';

function median(v: number[]): number | null {
  if (v.length === 0) return null;
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Counts, zone counts and median of one side's samples (rank intervals lo–hi; lo = hi is a decided sample). */
export function sideStats(samples: readonly NearSample[]): SideStats {
  const zoneCounts: Record<string, number> = Object.fromEntries(ZONE_NAMES.map((z) => [z, 0]));
  const ranks: number[] = [];
  let partial = 0;
  for (const q of samples) {
    if (q.lo === q.hi) {
      ranks.push(q.lo);
      zoneCounts[ZONE_NAMES[q.lo]]++;
    } else partial++;
  }
  const med = median(ranks);
  return {
    samples: samples.length,
    decided: ranks.length,
    partial,
    zoneCounts,
    medianRank: med,
    medianZone: med === null ? null : (ZONE_NAMES[Math.round(med)] ?? null),
    minZone: ranks.length > 0 ? ZONE_NAMES[Math.min(...ranks)] : null,
    maxZone: ranks.length > 0 ? ZONE_NAMES[Math.max(...ranks)] : null,
  };
}

/**
 * The samples within D km beside the trace (not beyond its ends, not on it), split by side, and the stretch of trace
 * where both sides have samples (null when they do not overlap).
 */
export function samplesBeside(
  t: Trace,
  field: IndicatorField,
  D: number,
  idOf: (i: number) => string,
): { L: NearSample[]; R: NearSample[]; overlap: [number, number] | null } {
  const near: NearSample[] = [];
  for (let i = 0; i < field.count; i++) {
    const p = locateOnTrace(t, field.x[i], field.y[i]);
    if (p.beyondEnd || !(Math.abs(p.offsetKm) <= D) || p.offsetKm === 0) continue;
    near.push({ s: p.alongKm, u: p.offsetKm, side: p.offsetKm > 0 ? 'right' : 'left', lo: field.lo[i], hi: field.hi[i], id: idOf(i), index: i });
  }
  const L = near.filter((q) => q.side === 'left'),
    R = near.filter((q) => q.side === 'right');
  let overlap: [number, number] | null = null;
  if (L.length > 0 && R.length > 0) {
    const a = Math.max(Math.min(...L.map((q) => q.s)), Math.min(...R.map((q) => q.s)));
    const b = Math.min(Math.max(...L.map((q) => q.s)), Math.max(...R.map((q) => q.s)));
    if (a <= b) overlap = [a, b];
  }
  return { L, R, overlap };
}

interface MissingEntry {
  ids: Set<string>;
  between: [number, number];
  low: Side;
}

/** Records zone z as missing in one window (lw, rw: the decided samples of each side in it). */
function noteMissing(
  missing: Map<number, MissingEntry>,
  z: number,
  lw: NearSample[],
  rw: NearSample[],
  { lmin, lmax, rmin, rmax }: { lmin: number; lmax: number; rmin: number; rmax: number },
): void {
  const m = missing.get(z) ?? {
    ids: new Set<string>(),
    between: [lmax < z ? lmax : rmax, lmax < z ? rmin : lmin] as [number, number],
    low: lmax < z ? 'left' : 'right',
  };
  // Supporting samples: those of each side nearest in grade to Z.
  const lowSide = lmax < z ? lw : rw,
    highSide = lmax < z ? rw : lw;
  const lowTop = Math.max(...lowSide.map((q) => q.lo)),
    highBottom = Math.min(...highSide.map((q) => q.lo));
  for (const q of lowSide) if (q.lo === lowTop) m.ids.add(q.id);
  for (const q of highSide) if (q.lo === highBottom) m.ids.add(q.id);
  missing.set(z, m);
}

/**
 * Zones missing across the fault: in windows of max(2D, 4·step) km every half window along the shared stretch, with
 * at least two decided samples a side, one side wholly below Z, the other wholly above, Z on neither.
 */
export function missingZones(
  L: NearSample[],
  R: NearSample[],
  overlap: [number, number] | null,
  D: number,
  step: number,
  sideNames: { left: string; right: string },
): FaultReport['missingZones'] {
  const missing = new Map<number, MissingEntry>();
  if (overlap !== null) {
    const W = Math.max(2 * D, 4 * step);
    const decided = (q: NearSample) => q.lo === q.hi;
    for (let w0 = overlap[0] - W / 2; w0 < overlap[1]; w0 += W / 2) {
      const inW = (q: NearSample) => q.s >= w0 && q.s <= w0 + W && decided(q);
      const lw = L.filter(inW),
        rw = R.filter(inW);
      if (lw.length < 2 || rw.length < 2) continue;
      const lr = lw.map((q) => q.lo),
        rr = rw.map((q) => q.lo);
      const lmin = Math.min(...lr),
        lmax = Math.max(...lr),
        rmin = Math.min(...rr),
        rmax = Math.max(...rr);
      for (let z = 1; z < MAX_RANK; z++) if ((lmax < z && rmin > z) || (rmax < z && lmin > z)) noteMissing(missing, z, lw, rw, { lmin, lmax, rmin, rmax });
    }
  }
  return [...missing.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([z, m]) => ({
      zone: ZONE_NAMES[z],
      side: sideNames[m.low],
      higherSide: sideNames[m.low === 'left' ? 'right' : 'left'],
      between: [ZONE_NAMES[m.between[0]], ZONE_NAMES[m.between[1]]],
      sampleIds: [...m.ids].sort(),
    }));
}

/**
 * Zones repeated along transects at right angles to the trace, from the barrier-honouring surfaces (so each side
 * sees only its own samples and a grade change along the trace does not enter): at a station, one side (A) falls in
 * grade away from the trace (rank just off it above the rank at D), the other (B) rises away from it, and A's rank
 * at the trace is above B's. Walking from A to B the grade then rises, drops back at the trace and rises again: the
 * zones from B's rank at the trace up to A's are met twice. A zone counts when it is so at two stations or more and
 * decided samples of it lie on both sides within D of the trace (they are its support).
 */
export function repeatedZones(
  t: Trace,
  field: IndicatorField,
  st: Stations,
  L: NearSample[],
  R: NearSample[],
  o: { D: number; step: number; delta: number; supportKm: number },
): ZoneStatement[] {
  const repeatVotes = new Map<number, number>();
  const buf = new Float64Array(BOUNDARY_COUNT);
  const every = Math.max(1, Math.round(1 / o.step)); // a transect about every km
  for (let k = 0; k < st.along.length; k += every) {
    if (st.ok.left[k] === 0 || st.ok.right[k] === 0) continue;
    const q = pointAlongTrace(t, st.along[k]);
    if (q === null) continue;
    const rankAt = (sg: number, u: number) => {
      const d = field.predict(q.x + sg * u * q.ty, q.y - sg * u * q.tx, buf);
      return d <= o.supportKm ? rankFromIndicators(buf) : -1;
    };
    const nearL = rankAt(-1, Math.max(o.delta, 0.5)),
      farL = rankAt(-1, o.D),
      nearR = rankAt(1, Math.max(o.delta, 0.5)),
      farR = rankAt(1, o.D);
    if (nearL < 0 || farL < 0 || nearR < 0 || farR < 0) continue;
    for (const [an, af, bn, bf] of [
      [nearL, farL, nearR, farR],
      [nearR, farR, nearL, farL],
    ]) {
      if (!(af < an && bn < bf && an > bn)) continue;
      // Zones between B's rank at the trace and A's: both sequences hold them.
      for (let z = Math.max(af, bn); z <= Math.min(an, bf); z++) repeatVotes.set(z, (repeatVotes.get(z) ?? 0) + 1);
    }
  }
  const repeated = new Map<number, string[]>();
  for (const [z, votes] of repeatVotes) {
    if (votes < 2) continue;
    const a = L.filter((p) => p.lo === p.hi && p.lo === z),
      b = R.filter((p) => p.lo === p.hi && p.lo === z);
    if (a.length === 0 || b.length === 0) continue;
    repeated.set(
      z,
      [...a, ...b].map((p) => p.id),
    );
  }
  return [...repeated.entries()].sort((a, b) => a[0] - b[0]).map(([z, ids]) => ({ zone: ZONE_NAMES[z], sampleIds: [...ids].sort() }));
}

/**
 * The grade jump across the fault (difference of the two sides' median ranks over the shared stretch) and the higher
 * side; with equal medians, the side higher at the trace on average (rank from the station profiles) when clearly so.
 */
export function gradeJump(lov: SideStats, rov: SideStats, st: Stations): { gradeJump: number | null; higherSide: Side | null } {
  if (lov.medianRank === null || rov.medianRank === null) return { gradeJump: null, higherSide: null };
  const d = rov.medianRank - lov.medianRank;
  if (d !== 0) return { gradeJump: Math.abs(d), higherSide: d > 0 ? 'right' : 'left' };
  let sum = 0,
    n = 0;
  for (let k = 0; k < st.along.length; k++) {
    if (st.ok.left[k] === 0 || st.ok.right[k] === 0) continue;
    const rl = rankFromIndicators(st.P.left, k * BOUNDARY_COUNT),
      rr = rankFromIndicators(st.P.right, k * BOUNDARY_COUNT);
    if (rl < 0 || rr < 0) continue;
    sum += rr - rl;
    n++;
  }
  const mean = n > 0 ? sum / n : 0;
  return { gradeJump: 0, higherSide: mean >= 0.1 ? 'right' : mean <= -0.1 ? 'left' : null };
}
