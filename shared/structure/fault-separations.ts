/**
 * The separations of a fault report (the rules are stated in fault-report.ts): each isograd's meetings on the two
 * sides paired, each pair's end by compass direction, its 10–90 % range, lateral sense, and, with the fault's and the
 * isograds' dips, the dip-slip component d = s·tan r with its sense; isograds that do not reach a side.
 */
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, type IndicatorField } from './indicator.ts';
import { pointAlongTrace, type Trace } from './trace.ts';
import { OPEN_BEYOND_SUPPORT, type FaultInfo, type FaultReport, type Meeting, type Range, type Separation, type Side } from './fault-types.ts';

const COMPASS = ['N', 'NNE', 'NE', 'ENE', 'E', 'ESE', 'SE', 'SSE', 'S', 'SSW', 'SW', 'WSW', 'W', 'WNW', 'NW', 'NNW'];

/** 16-point compass name of an azimuth (degrees clockwise from north). */
export function compassName(azimuthDeg: number): string {
  const a = ((azimuthDeg % 360) + 360) % 360;
  return COMPASS[Math.round(a / 22.5) % 16];
}

const DEG = Math.PI / 180;

/** A range from its value and bounds; an infinite upper bound (a band open beyond its support) becomes an open one. */
export function openRange(value: number, low: number, high: number): Range {
  return Number.isFinite(high) ? { value, low, high } : { value, low, high: null, openReason: OPEN_BEYOND_SUPPORT };
}

/**
 * The 10–90 % interval (km) of the separation |s_a − s_b| of two meetings. Each meeting's band is its statistical
 * half-widths (below, above) about the span between its 0.5 crossing and its fitted point. The difference
 * d = s_a − s_b extends below by √(a↓² + b↑²) and above by √(a↑² + b↓²) (the statistical halves in quadrature:
 * exact for independent Gaussian errors, Taylor 1997 §3.6 [from memory]), plus, linearly, the method offsets (the
 * distance from each fitted point to its own profile crossing, on the side where that crossing lies). The interval
 * of |d| follows (0 when it spans 0). A band open at one end (±∞: beyond its sampled support) makes the extent it
 * enters infinite, so the upper bound of |d| is then Infinity (reported open) while the lower bound stays finite.
 */
export function separationInterval(
  a: Pick<Meeting, 'alongKm' | 'profileAlongKm' | 'bandAlongKm'>,
  b: Pick<Meeting, 'alongKm' | 'profileAlongKm' | 'bandAlongKm'>,
): [number, number] {
  const parts = (m: typeof a) => {
    const lo = Math.min(m.alongKm, m.profileAlongKm),
      hi = Math.max(m.alongKm, m.profileAlongKm);
    // Statistical halves, and the method offsets below and above the reported point.
    return { below: lo - m.bandAlongKm[0], above: m.bandAlongKm[1] - hi, mBelow: m.alongKm - lo, mAbove: hi - m.alongKm };
  };
  const pa = parts(a),
    pb = parts(b);
  const d = a.alongKm - b.alongKm;
  const dLo = d - Math.hypot(pa.below, pb.above) - (pa.mBelow + pb.mAbove);
  const dHi = d + Math.hypot(pa.above, pb.below) + (pa.mAbove + pb.mBelow);
  const low = dLo <= 0 && dHi >= 0 ? 0 : Math.min(Math.abs(dLo), Math.abs(dHi));
  return [low, Math.max(Math.abs(dLo), Math.abs(dHi))];
}

/** Unit normal of a plane of dip dipDeg towards azimuth dipDirDeg, in (x east, y north, z down). */
function planeNormal(dipDeg: number, dipDirDeg: number): [number, number, number] {
  const d = dipDeg * DEG,
    a = dipDirDeg * DEG;
  return [Math.sin(a) * Math.sin(d), Math.cos(a) * Math.sin(d), -Math.cos(d)];
}

/**
 * Map direction of increasing grade (unit [gx, gy]) of isograd j near its meeting points: the finite-difference
 * gradient of the indicator surface 1.5 km into each side (1 km steps), averaged over the sides; null when flat.
 */
function gradeDirection(field: IndicatorField, j: number, t: Trace, sl: number, sr: number, D: number): [number, number] | null {
  const buf = new Float64Array(BOUNDARY_COUNT);
  const at = (x: number, y: number) => {
    field.predict(x, y, buf);
    return buf[j - 1];
  };
  let gx = 0,
    gy = 0;
  for (const [s, sg] of [
    [sl, -1],
    [sr, 1],
  ] as const) {
    const q = pointAlongTrace(t, Math.min(t.lengthKm, Math.max(0, s)));
    if (q === null) continue;
    const nx = sg * q.ty,
      ny = -sg * q.tx;
    const off = Math.min(1.5, D / 2),
      h = 1;
    const cx = q.x + off * nx,
      cy = q.y + off * ny;
    const dx = (at(cx + h, cy) - at(cx - h, cy)) / (2 * h),
      dy = (at(cx, cy + h) - at(cx, cy - h)) / (2 * h);
    const len = Math.hypot(dx, dy);
    if (!(len > 0)) continue;
    gx += dx / len;
    gy += dy / len;
  }
  const len = Math.hypot(gx, gy);
  return len > 0 ? [gx / len, gy / len] : null;
}

/** What the separations need of the fault besides its meetings. */
export interface SeparationContext {
  f: FaultInfo;
  field: IndicatorField;
  hangingWall: Side | null;
  sideNames: { left: string; right: string };
  strikeDeg: number;
  /** Samples counted within this distance of the trace, km. */
  D: number;
  maxSeparationKm: number;
  isogradDipDeg?: number;
  /** Whether each side has a supported station. */
  supported: { left: boolean; right: boolean };
}

/** Pairs each left meeting with the nearest right one of the same sense when each is the other's nearest, within maxSep km. */
function pairMeetings(ml: Meeting[], mr: Meeting[], maxSep: number): [Meeting, Meeting][] {
  const nearestOf = (m: Meeting, pool: Meeting[]) => {
    let best: Meeting | null = null;
    for (const q of pool) if (q.sense === m.sense && (best === null || Math.abs(q.alongKm - m.alongKm) < Math.abs(best.alongKm - m.alongKm))) best = q;
    return best;
  };
  const pairs: [Meeting, Meeting][] = [];
  for (const a of ml) {
    const b = nearestOf(a, mr);
    if (b === null || nearestOf(b, ml) !== a) continue;
    if (Math.abs(a.alongKm - b.alongKm) > maxSep) continue;
    pairs.push([a, b]);
  }
  return pairs;
}

/**
 * The dip-slip component of a separation for pure dip slip, d = s·tan r (r the pitch of the isograd's cutoff line on
 * the fault plane; fn the fault plane's normal), and its sense from which way the hanging-wall cutoff moved; the
 * separation is left without it where the grade direction is flat or the pitch is 0 or 90°.
 */
function addDipSlip(sep: Separation, c: SeparationContext, fn: [number, number, number], j: number, q: { tx: number; ty: number }): void {
  const isoDip = c.isogradDipDeg as number;
  const sl = sep.leftAlongKm,
    sr = sep.rightAlongKm;
  const g = gradeDirection(c.field, j, c.f.trace, sl, sr, c.D);
  if (g === null) return;
  // The isograd surface dips towards lower grade (−g).
  const ni = planeNormal(isoDip, (Math.atan2(-g[0], -g[1]) / DEG + 360) % 360);
  const l: [number, number, number] = [fn[1] * ni[2] - fn[2] * ni[1], fn[2] * ni[0] - fn[0] * ni[2], fn[0] * ni[1] - fn[1] * ni[0]];
  const ln = Math.hypot(l[0], l[1], l[2]);
  if (!(ln > 1e-9)) return;
  if (l[2] < 0) {
    l[0] = -l[0];
    l[1] = -l[1];
    l[2] = -l[2];
  }
  const fdd = (c.f.dipDirectionDeg as number) * DEG;
  const strikeVec = [-Math.cos(fdd), Math.sin(fdd)];
  const cosR = Math.min(1, Math.abs(l[0] * strikeVec[0] + l[1] * strikeVec[1]) / ln);
  const r = Math.acos(cosR);
  if (!(r > 1e-6 && r < 89.9 * DEG)) return;
  const tanR = Math.tan(r);
  const s = sep.separationKm;
  sep.dipSlipKm = openRange(s.value * tanR, s.low * tanR, s.high === null ? Infinity : s.high * tanR);
  sep.cutoffPitchDeg = r / DEG;
  // Under normal slip the hanging-wall cutoff moves along the trace by −d·sinδ·(l·ŝ)/l_z (ŝ: trace direction).
  const ls = l[0] * q.tx + l[1] * q.ty;
  const dHW = c.hangingWall === 'left' ? sl - sr : sr - sl;
  sep.slipSense = Math.sign(dHW) === -Math.sign(ls) ? 'normal' : 'reverse';
}

/** One separation from a pair of meetings (a left, b right); centre: km along the trace dividing its two ends. */
function separationOf(a: Meeting, b: Meeting, centre: number, c: SeparationContext, j: number, fn: [number, number, number] | null): Separation {
  const t = c.f.trace;
  const sl = a.alongKm,
    sr = b.alongKm;
  const mid = (sl + sr) / 2;
  const q = pointAlongTrace(t, Math.min(t.lengthKm, Math.max(0, mid)));
  const fwdAz = q === null ? c.strikeDeg : (Math.atan2(q.tx, q.ty) / DEG + 360) % 360;
  const value = Math.abs(sl - sr);
  const [lowKm, highKm] = separationInterval(a, b);
  // Grade rises with s (sense +1): the side whose isograd lies further along is lower at the trace between them,
  // i.e. its isograd is displaced towards higher grade.
  const upSide: Side = a.sense > 0 ? (sr > sl ? 'right' : 'left') : sr < sl ? 'right' : 'left';
  const sep: Separation = {
    isograd: a.isograd,
    end: compassName(mid >= centre ? fwdAz : fwdAz + 180),
    separationKm: openRange(value, Math.min(lowKm, value), Math.max(highKm, value)),
    sense: sr < sl ? 'dextral' : 'sinistral',
    displacedTowardHigherGrade: c.sideNames[upSide],
    leftAlongKm: sl,
    rightAlongKm: sr,
  };
  if (fn !== null && c.isogradDipDeg !== undefined && q !== null && c.hangingWall !== null) addDipSlip(sep, c, fn, j, q);
  return sep;
}

/**
 * The separations of every isograd meeting the trace on both sides, the isograds not reaching a side (or either),
 * and warnings on a dip-slip sense against the fault's kind or a missing isograd dip.
 */
export function faultSeparations(
  meetings: Meeting[],
  c: SeparationContext,
): { separations: Separation[]; notReached: FaultReport['notReached']; warnings: string[] } {
  const { f, sideNames, supported } = c;
  const separations: Separation[] = [];
  const notReached: FaultReport['notReached'] = [];
  const warnings: string[] = [];
  const fn =
    f.dipDeg !== undefined && f.dipDirectionDeg !== undefined && Number.isFinite(f.dipDeg) && Number.isFinite(f.dipDirectionDeg) && c.hangingWall !== null
      ? planeNormal(f.dipDeg, f.dipDirectionDeg)
      : null;
  for (let j = 1; j <= BOUNDARY_COUNT; j++) {
    const name = `${ZONE_NAMES[j]}-in`;
    const ml = meetings.filter((m) => m.isograd === name && m.side === 'left');
    const mr = meetings.filter((m) => m.isograd === name && m.side === 'right');
    if (ml.length === 0 && mr.length === 0) {
      if (supported.left && supported.right) notReached.push({ isograd: name, side: 'both', sideName: 'either side' });
      continue;
    }
    if (ml.length === 0 && supported.left) notReached.push({ isograd: name, side: 'left', sideName: sideNames.left });
    if (mr.length === 0 && supported.right) notReached.push({ isograd: name, side: 'right', sideName: sideNames.right });
    const pairs = pairMeetings(ml, mr, c.maxSeparationKm);
    const all = [...ml, ...mr];
    const centre = pairs.length >= 2 ? all.reduce((acc, m) => acc + m.alongKm, 0) / all.length : f.trace.lengthKm / 2;
    for (const [a, b] of pairs) separations.push(separationOf(a, b, centre, c, j, fn));
  }
  const kindSense = f.kind === 'normal' ? 'normal' : f.kind === 'thrust' || f.kind === 'reverse' ? 'reverse' : null;
  const conflicting = separations.filter((s) => s.slipSense !== undefined && kindSense !== null && s.slipSense !== kindSense);
  if (conflicting.length > 0)
    warnings.push(
      `the dip-slip sense of ${conflicting.map((s) => `${s.isograd} (${s.end})`).join(', ')} is ${conflicting[0].slipSense}, against the fault's kind (${f.kind})`,
    );
  if (fn !== null && c.isogradDipDeg === undefined && separations.length > 0) warnings.push('no isograd dip given: the dip-slip component is not computed');
  return { separations, notReached, warnings };
}
