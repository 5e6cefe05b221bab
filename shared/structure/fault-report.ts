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
 *   regression (Cox 1958) of that side's sample indicators on position. Two successive crossings of opposite sense
 *   around only one or two samples that their neighbours contradict (leave-one-out) are the interpolator honouring
 *   those samples, not the isograd: they are not meetings (listed in the warnings), as the closed loops around such
 *   samples are not drawn on the map. The profile is read as the cumulative
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
import type { IndicatorField } from './indicator.ts';
import { traceAzimuthDeg } from './trace.ts';
import { excursionWarningLead, type FaultInfo, type FaultReport, type FaultReportOptions, type Side } from './fault-types.ts';
import { gradeJump, missingZones, repeatedZones, samplesBeside, sideStats } from './fault-zones.ts';
import { findMeetings, stationProfiles } from './fault-meetings.ts';
import { contradictionTest } from './misfits.ts';
import { compassName, faultSeparations } from './fault-separations.ts';

export type * from './fault-types.ts';
export { OPEN_BEYOND_SUPPORT } from './fault-types.ts';
export { dropExcursions, fitMeeting, gaussianHalfWidthKm, openBeyondSupport } from './fault-meetings.ts';
export { compassName, separationInterval } from './fault-separations.ts';

/** The hanging wall (the side the dip direction points to) and the sides' compass names, with the wall when known. */
function sidesOf(f: FaultInfo, strikeDeg: number, warnings: string[]): { hangingWall: Side | null; sideNames: { left: string; right: string } } {
  let hangingWall: Side | null = null;
  if (f.dipDirectionDeg !== undefined && Number.isFinite(f.dipDirectionDeg)) {
    const rightAz = (strikeDeg + 90) % 360;
    let diff = Math.abs(((f.dipDirectionDeg - rightAz + 540) % 360) - 180);
    diff = Math.min(diff, 360 - diff);
    hangingWall = diff < 90 ? 'right' : diff > 90 ? 'left' : null;
    if (diff === 90) warnings.push('the dip direction is parallel to the trace: hanging wall undetermined');
  }
  const wallOf = (side: Side) => (hangingWall === null ? '' : side === hangingWall ? ' (hanging wall)' : ' (footwall)');
  return {
    hangingWall,
    sideNames: { left: `${compassName(strikeDeg - 90)} side${wallOf('left')}`, right: `${compassName(strikeDeg + 90)} side${wallOf('right')}` },
  };
}

/** The report of one fault against the (barrier-honouring) indicator field of all samples. */
export function faultReport(f: FaultInfo, field: IndicatorField, o: FaultReportOptions): FaultReport {
  const t = f.trace;
  const D = o.faultDistanceKm ?? 10;
  const step = o.stationKm ?? 0.5;
  const delta = o.stationOffsetKm ?? 0.02;
  const warnings: string[] = [];
  const strikeDeg = traceAzimuthDeg(t);
  const { hangingWall, sideNames } = sidesOf(f, strikeDeg, warnings);
  const idOf = (i: number) => o.sampleIds?.[field.source[i]] ?? `#${field.source[i]}`;

  const { L, R, overlap } = samplesBeside(t, field, D, idOf);
  const inOverlap = (q: { s: number }) => overlap !== null && q.s >= overlap[0] && q.s <= overlap[1];
  if (L.length === 0 || R.length === 0) warnings.push(`no samples within ${D} km on the ${L.length === 0 ? sideNames.left : sideNames.right} of the trace`);

  const missing = missingZones(L, R, overlap, D, step, sideNames);
  if (missing.length > 0 && (f.kind === 'thrust' || f.kind === 'reverse'))
    warnings.push(
      `zones missing across a fault recorded as ${f.kind} (${missing.map((z) => z.zone).join(', ')}): a ${f.kind} fault usually repeats section; check the fault's kind or the samples`,
    );
  const st = stationProfiles(t, field, step, delta, o.stationSupportKm ?? Math.max(o.supportKm, 1.5 * D));
  const repeated = repeatedZones(t, field, st, L, R, { D, step, delta, supportKm: o.supportKm });
  if (repeated.length > 0 && f.kind === 'normal')
    warnings.push(
      `zones repeated across a fault recorded as normal (${repeated.map((z) => z.zone).join(', ')}): a normal fault omits section; check the fault's kind or the samples`,
    );
  const jump = gradeJump(sideStats(L.filter(inOverlap)), sideStats(R.filter(inOverlap)), st);
  const { meetings, dropped } = findMeetings(st, L, R, o.fitWindowKm ?? Math.max(15, 1.5 * D), D, o.contradicts ?? contradictionTest(field));
  for (const e of dropped)
    warnings.push(
      `${excursionWarningLead(e.isograd, sideNames[e.side])} at ${e.fromKm.toFixed(1)}–${e.toKm.toFixed(1)} km along the trace around ${e.sampleIds.join(', ')} (contradicted by ${e.sampleIds.length === 1 ? 'its' : 'their'} neighbours: see misfits) is not counted as a meeting`,
    );
  const sep = faultSeparations(meetings, {
    f,
    field,
    hangingWall,
    sideNames,
    strikeDeg,
    D,
    maxSeparationKm: o.maxSeparationKm ?? 40,
    isogradDipDeg: o.isogradDipDeg,
    supported: { left: st.ok.left.some((v) => v === 1), right: st.ok.right.some((v) => v === 1) },
  });
  warnings.push(...sep.warnings);
  const higherWall = jump.higherSide === null || hangingWall === null ? null : jump.higherSide === hangingWall ? 'hanging wall' : 'footwall';
  return {
    id: t.id,
    name: f.name ?? null,
    kind: f.kind ?? null,
    lengthKm: t.lengthKm,
    strikeDeg,
    hangingWall,
    sideNames,
    sides: { left: sideStats(L), right: sideStats(R) },
    gradeJump: jump.gradeJump,
    higherSide: jump.higherSide,
    higherWall,
    repeatedZones: repeated,
    missingZones: missing,
    notReached: sep.notReached,
    offsetOnly: repeated.length === 0 && missing.length === 0 && sep.separations.length > 0,
    meetings,
    droppedExcursions: dropped,
    separations: sep.separations,
    overlapAlongKm: overlap,
    warnings,
  };
}
