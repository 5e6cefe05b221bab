// Structure: isograds from graded samples, misfits, fault offsets and paleo-gradients (re-exports only).
export {
  sampleGrades,
  faciesRankInterval,
  peakRankInterval,
  peakGrade,
  MAX_RANK,
  OFF_SCALE_FACIES,
  type SampleGrade,
  type GradeInput,
  type GradeSource,
  type GradeSeries,
  type PeakGrade,
} from './grade.ts';
export {
  IndicatorField,
  rankFromIndicators,
  correctOrderRelations,
  pointSegmentDistance2,
  BOUNDARY_COUNT,
  MIN_FIT_SAMPLES,
  MIN_FIT_MINORITY,
  type IndicatorVariogram,
  type LocalGrid,
  type IndicatorOptions,
} from './indicator.ts';
export { traceIsolines, type Isoline } from './isolines.ts';
export {
  computeIsogradsKm,
  isogradName,
  defaultSupportKm,
  medianSpacingKm,
  type IsogradGridOptions,
  type IsogradLineKm,
  type IsogradResultKm,
} from './isograds.ts';
export { leaveOneOut, findMisfits, distanceToPolyline, type LeaveOneOut, type Misfit } from './misfits.ts';
export { buildTrace, locateOnTrace, pointAlongTrace, selfIntersects, traceAzimuthDeg, tracePieces, type Trace, type TracePoint } from './trace.ts';
export {
  faultReport,
  compassName,
  openBeyondSupport,
  OPEN_BEYOND_SUPPORT,
  type FaultReport,
  type FaultInfo,
  type FaultReportOptions,
  type Meeting,
  type Separation,
  type SideStats,
  type Side,
  type Range,
  type ZoneStatement,
} from './fault-report.ts';
export { paleoGradients, DEFAULT_PALEO_DENSITY_KG_M3, type PaleoGradient, type PaleoOptions } from './paleo.ts';
export {
  isogradLayer,
  faultTraces,
  faultSummary,
  type FaultSummary,
  type IsogradLayer,
  type IsogradLayerOptions,
  type IsogradReport,
  type IsogradSummary,
} from './layer.ts';
export { zoneNameProblem } from '../petrology/zones.ts';
