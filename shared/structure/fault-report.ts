/**
 * Fault report: how the metamorphic zones meet each fault. Per fault, from its trace (sides LEFT/RIGHT of the
 * vertex order, each also named by compass direction; the hanging wall is the side the dip direction points to):
 * - the samples within `faultDistanceKm` on each side (beside the trace, not beyond its ends) and their zones;
 * - the grade jump across the fault: the difference in median rank between the two sides' samples over the stretch
 *   of trace where both sides have samples;
 * - zone statements from the decided samples in windows along that stretch (each carries its samples):
 *   · MISSING zone Z: in a window, one side has only zones below Z, the other only zones above Z, and Z is on
 *     neither (at least two samples a side);
 *   · REPEATED zone Z: in a window, both sides show the grade changing the same way across the fault (a least-squares
 *     plane of rank on along- and across-trace position per side, the across slope at least half a rank over the
 *     band), the grade jumps back against that change at the trace, and Z is found on both sides: walking across,
 *     the same zone sequence occurs twice in map order (as a thrust sheet stacks higher-grade rock on lower). Any
 *     fault may repeat; a repeat on a normal fault is flagged as a conflict with its kind;
 *   · NOT REACHED: an isograd that meets the trace on one side only (the top or bottom zone simply does not reach
 *     the other side), or on neither (with samples near the trace);
 *   · OFFSET ONLY: no zone missing or repeated, the isograds simply offset.
 * - where one isograd meets the trace on both sides, the apparent (strike) separation between the two meeting
 *   points, at each end where it does (named by the compass direction of that end). A meeting point is where the
 *   side's indicator profile along the trace (evaluated just off the trace) crosses 0.5, refined by a local logistic
 *   regression (Cox 1958) of that side's sample indicators on position. The profile is read as the cumulative
 *   probability of the meeting point's position, so its 10–90 % interval runs from where the profile crosses 0.1 to
 *   where it crosses 0.9. Each way from the 0.5 crossing, the walked crossing is used where the profile reaches that
 *   level along the supported stretch; where it does not (support ends first, or the profile turns back), the
 *   half-width is that of a Gaussian-shaped (probit) profile with the profile's slope at its 0.5 crossing:
 *   z₀.₉·φ(0)/slope = 1.2816 × 0.39894/slope = 0.5113/slope (σ = φ(0)/slope; z₀.₉ = 1.2816, Abramowitz & Stegun
 *   1964, 26.2) — an assumption on the profile's shape, stated as such. The two sides' position errors are
 *   independent, so the 10–90 % interval of their difference extends each way by the root sum of squares of the
 *   two sides' half-widths on that side (propagation of independent errors, Taylor 1997, "An Introduction to Error
 *   Analysis", §3.6 [from memory]); this is exact for independent Gaussian errors and an approximation where a
 *   band is lopsided. The distance between the profile's 0.5 crossing and the logistic-fit point is a difference
 *   between two methods, not a random error: it is added linearly to the side's half-width (the interval covers
 *   both methods' points), not in quadrature. The separation's range is the least and greatest |difference| over
 *   that interval. Sense: apparent dextral or sinistral, and which side shows the isograd displaced towards higher
 *   grade.
 * - with the fault's dip and dip direction and an isograd dip (given, the surface dipping towards lower grade), the
 *   dip-slip component for pure dip slip, d = s·tan r, r the pitch of the isograd's cutoff line on the fault plane
 *   (the cutoff line is the intersection of the two planes; the strike separation s of a planar marker under pure
 *   dip slip d follows from the right triangle in the fault plane: Ragan 2009, "Structural Geology: An Introduction
 *   to Geometrical Techniques", 4th ed., ch. on fault separation and slip [from memory]), and its sense (normal or
 *   reverse) from which way the hanging-wall cutoff moved. Its range is the separation's range times tan r: the
 *   uncertainty in the pitch r itself (from the given isograd dip and the fitted grade direction) is not included,
 *   so the dip-slip range is narrower than the whole uncertainty.
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
  /** Sample ids by the caller's index (IndicatorField.source); default "#i". */
  sampleIds?: readonly string[];
  /** Dip of the isograd surfaces, degrees (0–90), dipping towards lower grade: enables the dip-slip component. */
  isogradDipDeg?: number;
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
  /**
   * The 10–90 % interval of the meeting point, km along the trace: from the lesser of alongKm and profileAlongKm less
   * the half-width below, to the greater plus the half-width above (walked 0.1/0.9 crossings, else 0.5113/slope).
   */
  bandAlongKm: [number, number];
  /** Where the side's indicator profile crosses 0.5, km along the trace (alongKm is the logistic-fit point when basis is 'fit'). */
  profileAlongKm: number;
  /** 'fit': refined by the local logistic fit; 'profile': the 0.5 crossing of the indicator profile. */
  basis: 'fit' | 'profile';
  /** +1 when the grade rises with distance along the trace there, −1 when it falls. */
  sense: 1 | -1;
}

export interface Range {
  value: number;
  low: number;
  high: number;
}

export interface Separation {
  isograd: string;
  /** Compass direction of the end of the trace where the isograd meets it (e.g. "NNE"). */
  end: string;
  separationKm: Range;
  /** Apparent lateral sense of the separation. */
  sense: 'dextral' | 'sinistral';
  /** The side whose isograd is displaced towards higher grade (along the trace), named by compass and wall. */
  displacedTowardHigherGrade: string;
  leftAlongKm: number;
  rightAlongKm: number;
  /** Dip-slip component for pure dip slip, d = s·tan r (fault dip and isograd dip given). */
  dipSlipKm?: Range;
  slipSense?: 'normal' | 'reverse';
  /** Pitch of the isograd's cutoff line on the fault plane, degrees. */
  cutoffPitchDeg?: number;
}

export interface ZoneStatement {
  zone: string;
  sampleIds: string[];
}

export interface FaultReport {
  id: string;
  name: string | null;
  kind: string | null;
  lengthKm: number;
  strikeDeg: number;
  hangingWall: Side | null;
  /** Compass names of the sides, e.g. { left: "WNW side (footwall)", right: "ESE side (hanging wall)" }. */
  sideNames: { left: string; right: string };
  sides: { left: SideStats; right: SideStats };
  /** Difference in median rank between the higher and the lower side (≥ 0; null without samples on both sides). */
  gradeJump: number | null;
  higherSide: Side | null;
  /** 'footwall' or 'hanging wall' for higherSide when the dip direction is known. */
  higherWall: 'footwall' | 'hanging wall' | null;
  repeatedZones: ZoneStatement[];
  /**
   * Zones cut out by the fault. `side` names (by compass, and wall when the dip direction is known) the side whose
   * zones lie below the missing zone, `higherSide` the side whose zones lie above it; `between` is [the highest
   * zone on the lower side, the lowest zone on the higher side] where they face each other.
   */
  missingZones: (ZoneStatement & { side: string; higherSide: string; between: [string, string] })[];
  notReached: { isograd: string; side: Side | 'both'; sideName: string }[];
  offsetOnly: boolean;
  meetings: Meeting[];
  separations: Separation[];
  /** The stretch of trace (km along it) where both sides have samples within faultDistanceKm. */
  overlapAlongKm: [number, number] | null;
  warnings: string[];
}

const COMPASS = ['N', 'NNE', 'NE', 'ENE', 'E', 'ESE', 'SE', 'SSE', 'S', 'SSW', 'SW', 'WSW', 'W', 'WNW', 'NW', 'NNW'];

/** 16-point compass name of an azimuth (degrees clockwise from north). */
export function compassName(azimuthDeg: number): string {
  const a = ((azimuthDeg % 360) + 360) % 360;
  return COMPASS[Math.round(a / 22.5) % 16];
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
    if (lo[t] === hi[t]) {
      ranks.push(lo[t]);
      zoneCounts[ZONE_NAMES[lo[t]]]++;
    } else partial++;
  }
  const med = median(ranks);
  return {
    samples: lo.length,
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
 * Local logistic regression (Cox 1958; fitted by Newton–Raphson / iteratively reweighted least squares with a small
 * ridge penalty so separable data give a finite fit) of the indicator "rank ≥ j" on (s − s0)/W and u/D for one
 * side's decided samples within the window |s − s0| ≤ W. Returns the along-trace position where the fitted 0.5
 * line meets the trace (u = 0), or null when the window holds fewer than two samples of each class, the fitted
 * sense disagrees with the profile's, or the point falls outside the window.
 */
export function fitMeeting(
  pool: readonly { s: number; u: number; lo: number; hi: number }[],
  j: number,
  s0: number,
  sense: 1 | -1,
  W: number,
  D: number,
): number | null {
  const X: number[] = [],
    Y: number[] = [],
    Z: number[] = [];
  let ones = 0,
    zeros = 0;
  for (const q of pool) {
    if (Math.abs(q.s - s0) > W) continue;
    let ind: number;
    if (q.lo >= j) ind = 1;
    else if (q.hi < j) ind = 0;
    else continue;
    X.push((q.s - s0) / W);
    Y.push(q.u / D);
    Z.push(ind);
    if (ind === 1) ones++;
    else zeros++;
  }
  if (ones < 2 || zeros < 2) return null;
  // β = (b0, b1, b2); ridge 0.1 on b1, b2 (scaled coordinates, so the penalty is unit-free).
  const b = [0, 0, 0];
  const ridge = 0.1;
  for (let it = 0; it < 50; it++) {
    const g = [0, ridge * b[1], ridge * b[2]];
    const Hm = [
      [1e-9, 0, 0],
      [0, ridge, 0],
      [0, 0, ridge],
    ];
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
    for (let a = 0; a < 3; a++) {
      b[a] -= step[a];
      sz += Math.abs(step[a]);
    }
    if (sz < 1e-10) break;
  }
  if (!(Math.sign(b[1]) === sense) || !(Math.abs(b[1]) > 1e-9)) return null;
  const x = -b[0] / b[1];
  if (!(Math.abs(x) <= 1)) return null;
  return s0 + x * W;
}

/** Solves a 3 × 3 system by Cramer's rule; null when singular. */
function solve3(A: number[][], r: number[]): number[] | null {
  const det = (m: number[][]) =>
    m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
  const d = det(A);
  if (!(Math.abs(d) > 1e-300)) return null;
  const out: number[] = [];
  for (let c = 0; c < 3; c++) {
    const m = A.map((row, i) => row.map((v, k) => (k === c ? r[i] : v)));
    out.push(det(m) / d);
  }
  return out;
}

interface NearSample {
  s: number;
  u: number;
  side: Side;
  lo: number;
  hi: number;
  id: string;
}

/**
 * Where the profile first leaves the 0.1–0.9 band walking each way from its 0.5 crossing between stations k0 − 1 and
 * k0 (s0 km along), while the stations stay supported: [below, above] in km along, each the linear interpolation of
 * the crossing of the level expected on that side (below: 0.1 when the grade rises along the trace, sense +1, else
 * 0.9; above the other), or null where support ends first or the profile leaves the band through the other level.
 */
function walkedCrossings(
  prof: Float64Array,
  ok: Uint8Array,
  along: Float64Array,
  j: number,
  k0: number,
  sense: 1 | -1,
  stride: number,
): [number | null, number | null] {
  const v = (k: number) => prof[k * stride + j - 1];
  const walk = (dir: 1 | -1): number | null => {
    const expected = dir * sense > 0 ? 0.9 : 0.1;
    let k = dir > 0 ? k0 : k0 - 1;
    while (k >= 0 && k < along.length && ok[k] === 1 && !Number.isNaN(v(k))) {
      const x = v(k);
      if (x < 0.1 || x > 0.9) {
        const lev = x < 0.1 ? 0.1 : 0.9;
        if (lev !== expected) return null;
        const prevK = k - dir;
        const px = prevK >= 0 && prevK < along.length && ok[prevK] === 1 ? v(prevK) : NaN;
        if (!Number.isFinite(px)) return along[k];
        const u = (lev - px) / (x - px);
        return along[prevK] + u * (along[k] - along[prevK]);
      }
      k += dir;
    }
    return null;
  };
  return [walk(-1), walk(1)];
}

/**
 * Slope |dp/ds| (1/km) of the profile at its 0.5 crossing between stations k − 1 and k, taken over the supported
 * stations within 1 km each way of the crossing.
 */
function profileSlopePerKm(prof: Float64Array, ok: Uint8Array, along: Float64Array, j: number, k: number, stride: number): number {
  const v = (i: number) => prof[i * stride + j - 1];
  const s0 = (along[k - 1] + along[k]) / 2;
  let i0 = k - 1,
    i1 = k;
  while (i0 - 1 >= 0 && ok[i0 - 1] === 1 && !Number.isNaN(v(i0 - 1)) && s0 - along[i0 - 1] <= 1) i0--;
  while (i1 + 1 < along.length && ok[i1 + 1] === 1 && !Number.isNaN(v(i1 + 1)) && along[i1 + 1] - s0 <= 1) i1++;
  return Math.abs((v(i1) - v(i0)) / (along[i1] - along[i0]));
}

/** Standard normal 0.9 quantile z₀.₉ (Abramowitz & Stegun 1964, table 26.2). */
const Z90 = 1.2815516;
/** φ(0) = 1/√(2π), the standard normal density at 0. */
const NORMAL_PDF_0 = 1 / Math.sqrt(2 * Math.PI);

/**
 * Half-width (km) of the 10–90 % interval of a Gaussian-shaped (probit) profile p(s) = Φ((s − s0)/σ) with slope
 * slopePerKm (1/km) at its 0.5 crossing: σ = φ(0)/slope, half-width z₀.₉·σ = 0.5113/slope; Infinity for a flat profile.
 */
export function gaussianHalfWidthKm(slopePerKm: number): number {
  return slopePerKm > 0 ? (Z90 * NORMAL_PDF_0) / slopePerKm : Infinity;
}

const DEG = Math.PI / 180;

/**
 * The 10–90 % interval (km) of the separation |s_a − s_b| of two meetings. Each meeting's band is its statistical
 * half-widths (below, above) about the span between its 0.5 crossing and its fitted point. The difference
 * d = s_a − s_b extends below by √(a↓² + b↑²) and above by √(a↑² + b↓²) (the statistical halves in quadrature:
 * exact for independent Gaussian errors, Taylor 1997 §3.6 [from memory]), plus, linearly, the method offsets (the
 * distance from each fitted point to its own profile crossing, on the side where that crossing lies). The interval
 * of |d| follows (0 when it spans 0).
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
  const wallOf = (side: Side) => (hangingWall === null ? null : side === hangingWall ? 'hanging wall' : 'footwall');
  const sideNames = {
    left: `${compassName(strikeDeg - 90)} side${wallOf('left') !== null ? ` (${wallOf('left')})` : ''}`,
    right: `${compassName(strikeDeg + 90)} side${wallOf('right') !== null ? ` (${wallOf('right')})` : ''}`,
  };
  const idOf = (i: number) => o.sampleIds?.[field.source[i]] ?? `#${field.source[i]}`;

  // Samples beside the trace.
  const near: NearSample[] = [];
  for (let i = 0; i < field.count; i++) {
    const p = locateOnTrace(t, field.x[i], field.y[i]);
    if (p.beyondEnd || !(Math.abs(p.offsetKm) <= D) || p.offsetKm === 0) continue;
    near.push({ s: p.alongKm, u: p.offsetKm, side: p.offsetKm > 0 ? 'right' : 'left', lo: field.lo[i], hi: field.hi[i], id: idOf(i) });
  }
  const L = near.filter((q) => q.side === 'left'),
    R = near.filter((q) => q.side === 'right');
  let overlap: [number, number] | null = null;
  if (L.length > 0 && R.length > 0) {
    const a = Math.max(Math.min(...L.map((q) => q.s)), Math.min(...R.map((q) => q.s)));
    const b = Math.min(Math.max(...L.map((q) => q.s)), Math.max(...R.map((q) => q.s)));
    if (a <= b) overlap = [a, b];
  }
  const inOverlap = (q: { s: number }) => overlap !== null && q.s >= overlap[0] && q.s <= overlap[1];
  const left = sideStats(
    L.map((q) => q.lo),
    L.map((q) => q.hi),
  );
  const right = sideStats(
    R.map((q) => q.lo),
    R.map((q) => q.hi),
  );
  const Lo = L.filter(inOverlap),
    Ro = R.filter(inOverlap);
  const lov = sideStats(
    Lo.map((q) => q.lo),
    Lo.map((q) => q.hi),
  );
  const rov = sideStats(
    Ro.map((q) => q.lo),
    Ro.map((q) => q.hi),
  );
  if (L.length === 0 || R.length === 0) warnings.push(`no samples within ${D} km on the ${L.length === 0 ? sideNames.left : sideNames.right} of the trace`);

  // Windows along the shared stretch: missing and repeated zones from the decided samples.
  const missing = new Map<number, { ids: Set<string>; between: [number, number]; low: Side }>();
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
      // Missing: one side wholly below Z, the other wholly above, Z on neither.
      for (let z = 1; z < MAX_RANK; z++) {
        const gap = (lmax < z && rmin > z) || (rmax < z && lmin > z);
        if (!gap) continue;
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
    }
  }
  const missingZones: FaultReport['missingZones'] = [...missing.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([z, m]) => ({
      zone: ZONE_NAMES[z],
      side: sideNames[m.low],
      higherSide: sideNames[m.low === 'left' ? 'right' : 'left'],
      between: [ZONE_NAMES[m.between[0]], ZONE_NAMES[m.between[1]]],
      sampleIds: [...m.ids].sort(),
    }));
  if (missingZones.length > 0 && (f.kind === 'thrust' || f.kind === 'reverse'))
    warnings.push(
      `zones missing across a fault recorded as ${f.kind} (${missingZones.map((z) => z.zone).join(', ')}): a ${f.kind} fault usually repeats section; check the fault's kind or the samples`,
    );

  // Stations along the trace: indicator profiles just off it on each side.
  const nSt = Math.floor(t.lengthKm / step) + 1;
  const P = { left: new Float64Array(nSt * BOUNDARY_COUNT), right: new Float64Array(nSt * BOUNDARY_COUNT) };
  const ok = { left: new Uint8Array(nSt), right: new Uint8Array(nSt) };
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
      const nx = sg * q.ty,
        ny = -sg * q.tx;
      const d = field.predict(q.x + delta * nx, q.y + delta * ny, buf);
      if (d <= stSupport) {
        ok[side][k] = 1;
        P[side].set(buf, k * BOUNDARY_COUNT);
      }
    }
  }

  // Repeated zones along transects at right angles to the trace, from the barrier-honouring surfaces (so each side
  // sees only its own samples and a grade change along the trace does not enter): at a station, one side (A) falls in
  // grade away from the trace (rank just off it above the rank at D), the other (B) rises away from it, and A's rank
  // at the trace is above B's. Walking from A to B the grade then rises, drops back at the trace and rises again:
  // the zones from B's rank at the trace up to A's are met twice. A zone counts when it is so at two stations or more
  // and decided samples of it lie on both sides within D of the trace and D along it (they are its support).
  const repeatVotes = new Map<number, number>();
  const every = Math.max(1, Math.round(1 / step)); // a transect about every km
  for (let k = 0; k < nSt; k += every) {
    if (ok.left[k] === 0 || ok.right[k] === 0) continue;
    const q = pointAlongTrace(t, along[k]);
    if (q === null) continue;
    const rankAt = (sg: number, u: number) => {
      const d = field.predict(q.x + sg * u * q.ty, q.y - sg * u * q.tx, buf);
      return d <= o.supportKm ? rankFromIndicators(buf) : -1;
    };
    const nearL = rankAt(-1, Math.max(delta, 0.5)),
      farL = rankAt(-1, D),
      nearR = rankAt(1, Math.max(delta, 0.5)),
      farR = rankAt(1, D);
    if (nearL < 0 || farL < 0 || nearR < 0 || farR < 0) continue;
    for (const [an, af, bn, bf] of [
      [nearL, farL, nearR, farR],
      [nearR, farR, nearL, farL],
    ]) {
      if (!(af < an && bn < bf && an > bn)) continue;
      for (let z = Math.max(af, bn); z <= Math.min(an, bf); z++) repeatVotes.set(z, (repeatVotes.get(z) ?? 0) + 1);
      // Zones between B's rank at the trace and A's: both sequences hold them.
    }
  }
  const repeated = new Map<number, string[]>();
  for (const [z, votes] of repeatVotes) {
    if (votes < 2) continue;
    const stationsWith = (side: NearSample[]) => side.filter((p) => p.lo === p.hi && p.lo === z);
    const a = stationsWith(L),
      b = stationsWith(R);
    if (a.length === 0 || b.length === 0) continue;
    repeated.set(
      z,
      [...a, ...b].map((p) => p.id),
    );
  }
  const repeatedZones: ZoneStatement[] = [...repeated.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([z, ids]) => ({ zone: ZONE_NAMES[z], sampleIds: [...ids].sort() }));
  if (repeatedZones.length > 0 && f.kind === 'normal')
    warnings.push(
      `zones repeated across a fault recorded as normal (${repeatedZones.map((z) => z.zone).join(', ')}): a normal fault omits section; check the fault's kind or the samples`,
    );

  // Grade jump (median ranks over the shared stretch) and the higher side.
  let gradeJump: number | null = null,
    higherSide: Side | null = null;
  if (lov.medianRank !== null && rov.medianRank !== null) {
    const d = rov.medianRank - lov.medianRank;
    gradeJump = Math.abs(d);
    higherSide = d > 0 ? 'right' : d < 0 ? 'left' : null;
    if (higherSide === null) {
      // Equal medians: the side that is higher at the trace on average (rank from the profiles), when clearly so.
      let sum = 0,
        n = 0;
      for (let k = 0; k < nSt; k++) {
        if (ok.left[k] === 0 || ok.right[k] === 0) continue;
        const rl = rankFromIndicators(P.left, k * BOUNDARY_COUNT),
          rr = rankFromIndicators(P.right, k * BOUNDARY_COUNT);
        if (rl < 0 || rr < 0) continue;
        sum += rr - rl;
        n++;
      }
      const mean = n > 0 ? sum / n : 0;
      higherSide = mean >= 0.1 ? 'right' : mean <= -0.1 ? 'left' : null;
    }
  }
  const higherWall = higherSide === null ? null : wallOf(higherSide);

  // Meeting points with their probability bands.
  const meetings: Meeting[] = [];
  const windowKm = o.fitWindowKm ?? Math.max(15, 1.5 * D);
  for (const side of ['left', 'right'] as const) {
    const pool = side === 'left' ? L : R;
    for (let j = 1; j <= BOUNDARY_COUNT; j++) {
      const found: Meeting[] = [];
      for (let k = 1; k < nSt; k++) {
        if (ok[side][k - 1] === 0 || ok[side][k] === 0) continue;
        const a = P[side][(k - 1) * BOUNDARY_COUNT + j - 1],
          b = P[side][k * BOUNDARY_COUNT + j - 1];
        if (Number.isNaN(a) || Number.isNaN(b)) continue;
        if (a < 0.5 === b < 0.5) continue;
        const u = (0.5 - a) / (b - a);
        const s0 = along[k - 1] + u * (along[k] - along[k - 1]);
        const sense: 1 | -1 = b > a ? 1 : -1;
        const fit = fitMeeting(pool, j, s0, sense, windowKm, D);
        const at = fit ?? s0;
        // The 10–90 % band of the meeting: each way, the walked 0.1/0.9 crossing where the profile reaches it along
        // the supported stretch, else the Gaussian-shape half-width 0.5113/slope; measured from the 0.5 crossing and
        // laid outside the span between the crossing and the fitted point (the method offset, added linearly).
        const [cBelow, cAbove] = walkedCrossings(P[side], ok[side], along, j, k, sense, BOUNDARY_COUNT);
        const gauss = gaussianHalfWidthKm(profileSlopePerKm(P[side], ok[side], along, j, k, BOUNDARY_COUNT));
        const below = cBelow === null ? gauss : s0 - cBelow,
          above = cAbove === null ? gauss : cAbove - s0;
        const band: [number, number] = [Math.min(at, s0) - below, Math.max(at, s0) + above];
        const m: Meeting = {
          isograd: `${ZONE_NAMES[j]}-in`,
          side,
          alongKm: at,
          bandAlongKm: band,
          profileAlongKm: s0,
          basis: fit === null ? 'profile' : 'fit',
          sense,
        };
        // Crossings of one isograd a few km apart with the same sense are one meeting (noise in the profile).
        const dup = found.find((q) => q.sense === m.sense && Math.abs(q.alongKm - m.alongKm) < 2);
        if (dup === undefined) found.push(m);
        else {
          dup.bandAlongKm = [Math.min(dup.bandAlongKm[0], m.bandAlongKm[0]), Math.max(dup.bandAlongKm[1], m.bandAlongKm[1])];
        }
      }
      meetings.push(...found);
    }
  }

  // Separations: pair the two sides' meetings, name the end, range, sense and dip slip.
  const separations: Separation[] = [];
  const notReached: FaultReport['notReached'] = [];
  const supported = { left: ok.left.some((v) => v === 1), right: ok.right.some((v) => v === 1) };
  const fn =
    f.dipDeg !== undefined && f.dipDirectionDeg !== undefined && Number.isFinite(f.dipDeg) && Number.isFinite(f.dipDirectionDeg) && hangingWall !== null
      ? planeNormal(f.dipDeg, f.dipDirectionDeg)
      : null;
  const isoDip = o.isogradDipDeg;
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
    const all = [...ml, ...mr];
    const centre = pairs.length >= 2 ? all.reduce((acc, m) => acc + m.alongKm, 0) / all.length : t.lengthKm / 2;
    for (const [a, b] of pairs) {
      const sl = a.alongKm,
        sr = b.alongKm;
      const mid = (sl + sr) / 2;
      const q = pointAlongTrace(t, Math.min(t.lengthKm, Math.max(0, mid)));
      const fwdAz = q === null ? strikeDeg : (Math.atan2(q.tx, q.ty) / DEG + 360) % 360;
      const end = compassName(mid >= centre ? fwdAz : fwdAz + 180);
      const value = Math.abs(sl - sr);
      const [lowKm, highKm] = separationInterval(a, b);
      // Grade rises with s (sense +1): the side whose isograd lies further along is lower at the trace between them,
      // i.e. its isograd is displaced towards higher grade.
      const upSide: Side = a.sense > 0 ? (sr > sl ? 'right' : 'left') : sr < sl ? 'right' : 'left';
      const sep: Separation = {
        isograd: name,
        end,
        separationKm: { value, low: Math.min(lowKm, value), high: Math.max(highKm, value) },
        sense: sr < sl ? 'dextral' : 'sinistral',
        displacedTowardHigherGrade: sideNames[upSide],
        leftAlongKm: sl,
        rightAlongKm: sr,
      };
      if (fn !== null && isoDip !== undefined && q !== null && hangingWall !== null) {
        const g = gradeDirection(field, j, t, sl, sr, D);
        if (g !== null) {
          // The isograd surface dips towards lower grade (−g).
          const ni = planeNormal(isoDip, (Math.atan2(-g[0], -g[1]) / DEG + 360) % 360);
          const l: [number, number, number] = [fn[1] * ni[2] - fn[2] * ni[1], fn[2] * ni[0] - fn[0] * ni[2], fn[0] * ni[1] - fn[1] * ni[0]];
          const ln = Math.hypot(l[0], l[1], l[2]);
          if (ln > 1e-9) {
            if (l[2] < 0) {
              l[0] = -l[0];
              l[1] = -l[1];
              l[2] = -l[2];
            }
            const fdd = (f.dipDirectionDeg as number) * DEG;
            const strikeVec = [-Math.cos(fdd), Math.sin(fdd)];
            const cosR = Math.min(1, Math.abs(l[0] * strikeVec[0] + l[1] * strikeVec[1]) / ln);
            const r = Math.acos(cosR);
            if (r > 1e-6 && r < 89.9 * DEG) {
              const tanR = Math.tan(r);
              sep.dipSlipKm = { value: value * tanR, low: sep.separationKm.low * tanR, high: sep.separationKm.high * tanR };
              sep.cutoffPitchDeg = r / DEG;
              // Under normal slip the hanging-wall cutoff moves along the trace by −d·sinδ·(l·ŝ)/l_z (ŝ: trace direction).
              const ls = l[0] * q.tx + l[1] * q.ty;
              const dHW = hangingWall === 'left' ? sl - sr : sr - sl;
              sep.slipSense = Math.sign(dHW) === -Math.sign(ls) ? 'normal' : 'reverse';
            }
          }
        }
      }
      separations.push(sep);
    }
  }
  const kindSense = f.kind === 'normal' ? 'normal' : f.kind === 'thrust' || f.kind === 'reverse' ? 'reverse' : null;
  const conflicting = separations.filter((s) => s.slipSense !== undefined && kindSense !== null && s.slipSense !== kindSense);
  if (conflicting.length > 0)
    warnings.push(
      `the dip-slip sense of ${conflicting.map((s) => `${s.isograd} (${s.end})`).join(', ')} is ${conflicting[0].slipSense}, against the fault's kind (${f.kind})`,
    );
  if (fn !== null && isoDip === undefined && separations.length > 0) warnings.push('no isograd dip given: the dip-slip component is not computed');

  return {
    id: t.id,
    name: f.name ?? null,
    kind: f.kind ?? null,
    lengthKm: t.lengthKm,
    strikeDeg,
    hangingWall,
    sideNames,
    sides: { left, right },
    gradeJump,
    higherSide,
    higherWall,
    repeatedZones,
    missingZones,
    notReached,
    offsetOnly: repeatedZones.length === 0 && missingZones.length === 0 && separations.length > 0,
    meetings,
    separations,
    overlapAlongKm: overlap,
    warnings,
  };
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
