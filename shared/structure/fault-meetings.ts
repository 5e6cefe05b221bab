/**
 * Where each isograd meets a fault trace on each side: the indicator profiles at stations along the trace (just off
 * it on each side), their 0.5 crossings refined by a local logistic fit, and each meeting's 10–90 % band (the rules
 * are stated in fault-report.ts).
 */
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, type IndicatorField } from './indicator.ts';
import { pointAlongTrace, type Trace } from './trace.ts';
import type { DroppedExcursion, Meeting, NearSample, Side } from './fault-types.ts';

/** Indicator profiles at stations along a trace: per side, BOUNDARY_COUNT values a station, and whether it is supported. */
export interface Stations {
  along: Float64Array;
  ok: { left: Uint8Array; right: Uint8Array };
  P: { left: Float64Array; right: Float64Array };
}

/**
 * Stations every `step` km along the trace, each side's indicators evaluated `delta` km off it; a station counts on a
 * side when a visible sample lies within `support` km of its point.
 */
export function stationProfiles(t: Trace, field: IndicatorField, step: number, delta: number, support: number): Stations {
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
      const d = field.predict(q.x + delta * sg * q.ty, q.y - delta * sg * q.tx, buf);
      if (d <= support) {
        ok[side][k] = 1;
        P[side].set(buf, k * BOUNDARY_COUNT);
      }
    }
  }
  return { along, ok, P };
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

/**
 * A meeting band's bounds with each bound that lies beyond the sampled support made open (−∞ below, +∞ above). The
 * samples that constrain a bound are those of this side (within the fault distance D of the trace, beside it) that
 * decide the isograd's indicator the way that end of the band does: on the low-grade end samples below the isograd
 * (rank interval wholly under j), on the high-grade end samples at or above it (wholly from j up). A bound is
 * supported when it lies no farther along the trace than D beyond the last such sample: D is the footprint within
 * which a sample counts for the fault at all, across the trace as here along it. Farther out the kriged profile no
 * longer follows data but drifts back to the indicator's mean, so where it crosses 0.1 or 0.9 there (or where the
 * Gaussian-shape half-width reaches) says nothing about the isograd: the bound is reported open, not as a number.
 */
export function openBeyondSupport(
  band: [number, number],
  pool: readonly { s: number; lo: number; hi: number }[],
  j: number,
  sense: 1 | -1,
  D: number,
): [number, number] {
  // Indicator of a sample deciding isograd j: 1 at or above it, 0 below it, null when its interval straddles j.
  const ind = (q: { lo: number; hi: number }) => (q.lo >= j ? 1 : q.hi < j ? 0 : null);
  // Grade rises along the trace (sense +1): the low end of the band lies on the low-grade side (indicator 0).
  const belowClass = sense > 0 ? 0 : 1;
  const lowSupported = pool.some((q) => ind(q) === belowClass && q.s - D <= band[0]);
  const highSupported = pool.some((q) => ind(q) === 1 - belowClass && q.s + D >= band[1]);
  return [lowSupported ? band[0] : -Infinity, highSupported ? band[1] : Infinity];
}

/**
 * The 0.5 crossings of isograd j's profile on one side between supported stations, each refined by the local logistic
 * fit, with its 10–90 % band, in order along the trace.
 */
function sideCrossings(st: Stations, side: Side, j: number, pool: readonly NearSample[], windowKm: number, D: number): Meeting[] {
  const { along } = st,
    P = st.P[side],
    ok = st.ok[side];
  const found: Meeting[] = [];
  for (let k = 1; k < along.length; k++) {
    if (ok[k - 1] === 0 || ok[k] === 0) continue;
    const a = P[(k - 1) * BOUNDARY_COUNT + j - 1],
      b = P[k * BOUNDARY_COUNT + j - 1];
    if (Number.isNaN(a) || Number.isNaN(b)) continue;
    if (a < 0.5 === b < 0.5) continue;
    const u = (0.5 - a) / (b - a);
    const s0 = along[k - 1] + u * (along[k] - along[k - 1]);
    const sense: 1 | -1 = b > a ? 1 : -1;
    const fit = fitMeeting(pool, j, s0, sense, windowKm, D);
    const at = fit ?? s0;
    // The 10–90 % band of the meeting: each way, the walked 0.1/0.9 crossing where the profile reaches it along the
    // supported stretch, else the Gaussian-shape half-width 0.5113/slope; measured from the 0.5 crossing and laid
    // outside the span between the crossing and the fitted point (the method offset, added linearly).
    const [cBelow, cAbove] = walkedCrossings(P, ok, along, j, k, sense, BOUNDARY_COUNT);
    const gauss = gaussianHalfWidthKm(profileSlopePerKm(P, ok, along, j, k, BOUNDARY_COUNT));
    const below = cBelow === null ? gauss : s0 - cBelow,
      above = cAbove === null ? gauss : cAbove - s0;
    const band = openBeyondSupport([Math.min(at, s0) - below, Math.max(at, s0) + above], pool, j, sense, D);
    found.push({ isograd: `${ZONE_NAMES[j]}-in`, side, alongKm: at, bandAlongKm: band, profileAlongKm: s0, basis: fit === null ? 'profile' : 'fit', sense });
  }
  return found;
}

/**
 * Drops each pair of successive crossings of opposite sense (the profile crosses 0.5 and comes back) between which
 * the only samples of the side deciding isograd j the excursion's way (at or above it for a rise then a fall, below it
 * for a fall then a rise) are one or two that their neighbours contradict (leave-one-out): the excursion is the
 * exact interpolator honouring those samples, as the closed loops around them that the map does not draw
 * (isograd-lines.ts isolatedLoopSamples), not the isograd meeting the trace.
 */
export function dropExcursions(
  crossings: readonly Meeting[],
  pool: readonly NearSample[],
  j: number,
  contradicts: (index: number, j: number) => boolean,
): { kept: Meeting[]; dropped: DroppedExcursion[] } {
  const kept: Meeting[] = [],
    dropped: DroppedExcursion[] = [];
  for (let i = 0; i < crossings.length; i++) {
    const a = crossings[i],
      b = crossings[i + 1];
    if (b !== undefined && a.sense !== b.sense) {
      const cls = a.sense > 0 ? 1 : 0;
      const inside = pool.filter((q) => q.s >= a.profileAlongKm && q.s <= b.profileAlongKm && (cls === 1 ? q.lo >= j : q.hi < j));
      if (inside.length >= 1 && inside.length <= 2 && inside.every((q) => contradicts(q.index, j))) {
        dropped.push({ isograd: a.isograd, side: a.side, fromKm: a.profileAlongKm, toKm: b.profileAlongKm, sampleIds: inside.map((q) => q.id) });
        i++;
        continue;
      }
    }
    kept.push(a);
  }
  return { kept, dropped };
}

/** Crossings of one isograd a few km apart with the same sense are one meeting (noise in the profile), their bands joined. */
function mergeNear(crossings: readonly Meeting[]): Meeting[] {
  const found: Meeting[] = [];
  for (const m of crossings) {
    const dup = found.find((q) => q.sense === m.sense && Math.abs(q.alongKm - m.alongKm) < 2);
    if (dup === undefined) found.push({ ...m });
    else dup.bandAlongKm = [Math.min(dup.bandAlongKm[0], m.bandAlongKm[0]), Math.max(dup.bandAlongKm[1], m.bandAlongKm[1])];
  }
  return found;
}

/**
 * Every isograd's meetings with the trace, left side first (L, R: the samples beside the trace on each side), and
 * the excursions of the profiles not counted as meetings (dropExcursions; `contradicts` is the leave-one-out test).
 */
export function findMeetings(
  st: Stations,
  L: readonly NearSample[],
  R: readonly NearSample[],
  windowKm: number,
  D: number,
  contradicts: (index: number, j: number) => boolean,
): { meetings: Meeting[]; dropped: DroppedExcursion[] } {
  const meetings: Meeting[] = [],
    dropped: DroppedExcursion[] = [];
  for (const side of ['left', 'right'] as const)
    for (let j = 1; j <= BOUNDARY_COUNT; j++) {
      const pool = side === 'left' ? L : R;
      const d = dropExcursions(sideCrossings(st, side, j, pool, windowKm, D), pool, j, contradicts);
      meetings.push(...mergeNear(d.kept));
      dropped.push(...d.dropped);
    }
  return { meetings, dropped };
}
