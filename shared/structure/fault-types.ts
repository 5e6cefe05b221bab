/**
 * The fault report's types: a fault and its options in, per side the samples and statistics, the meeting points of
 * the isograds with the trace, the separations with their ranges, and the zone statements out (fault-report.ts).
 */
import type { Trace } from './trace.ts';

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
  /** Leave-one-out test of the field's samples (LeaveOneOut.contradicts; default: computed for the samples asked about). */
  contradicts?: (index: number, j: number) => boolean;
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
   * the half-width below, to the greater plus the half-width above (walked 0.1/0.9 crossings, else 0.5113/slope);
   * −Infinity or +Infinity where that bound lies beyond the side's sampled support (fault-meetings.ts openBeyondSupport).
   */
  bandAlongKm: [number, number];
  /** Where the side's indicator profile crosses 0.5, km along the trace (alongKm is the logistic-fit point when basis is 'fit'). */
  profileAlongKm: number;
  /** 'fit': refined by the local logistic fit; 'profile': the 0.5 crossing of the indicator profile. */
  basis: 'fit' | 'profile';
  /** +1 when the grade rises with distance along the trace there, −1 when it falls. */
  sense: 1 | -1;
}

/** Why a range's upper bound is open: a side's band reaches beyond the samples that constrain it (fault-meetings.ts). */
export const OPEN_BEYOND_SUPPORT = 'beyond sampled support';

/**
 * A value with its 10–90 % range, km. The lower bound is always a number (0 when the interval spans zero); the upper
 * bound is null, with the reason in `openReason`, when either side's band is open beyond its sampled support.
 */
export interface Range {
  value: number;
  low: number;
  high: number | null;
  openReason?: typeof OPEN_BEYOND_SUPPORT;
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
  /** Profile excursions around contradicted samples, not counted as meetings (listed in the warnings too). */
  droppedExcursions: DroppedExcursion[];
  separations: Separation[];
  /** The stretch of trace (km along it) where both sides have samples within faultDistanceKm. */
  overlapAlongKm: [number, number] | null;
  warnings: string[];
}

/** A sample beside the trace: km along it (s) and off it (u, right positive), its side, rank interval and id. */
export interface NearSample {
  s: number;
  u: number;
  side: Side;
  lo: number;
  hi: number;
  id: string;
  /** Its index among the indicator field's informative samples. */
  index: number;
}

/**
 * An excursion of one side's indicator profile across 0.5 and back (two meetings of opposite sense) not counted as
 * meetings: between them the only samples of that side deciding the isograd the excursion's way are one or two that
 * their neighbours contradict (fault-meetings.ts dropExcursions).
 */
export interface DroppedExcursion {
  isograd: string;
  side: Side;
  /** The excursion's two 0.5 crossings, km along the trace. */
  fromKm: number;
  toKm: number;
  sampleIds: string[];
}

/** The opening of the fault warning that names a dropped excursion (fault-report.ts); the page lists these apart. */
export const excursionWarningLead = (isograd: string, sideName: string): string => `${isograd} on the ${sideName}: the excursion of its profile`;
