// Petrology: index-mineral zones, facies, aluminosilicates, solidus curves, peak P–T (re-exports only).
export {
  INDEX_MINERAL_ZONES,
  ZONE_NAMES,
  zoneRank,
  zoneByName,
  compareZones,
  suggestZoneName,
  isogradTemperatureC,
  LOW_PRESSURE_ZONES,
  LOW_PRESSURE_ZONE_NAMES,
  lowPressureZoneRank,
  zoneNameProblem,
  ALL_ZONE_NAMES,
  type GradeZone,
  type IndexMineralZone,
  type LowPressureZone,
} from './zones.ts';
export { editDistance, nearestName, normalizeName } from './edit-distance.ts';
export {
  FACIES_FIELDS,
  FACIES_NAMES,
  FACIES_DIAGRAM_LIMITS,
  FACIES_BOUNDARY_WIDTH,
  classifyFacies,
  faciesIndexAt,
  faciesBoundaryDistance,
  type FaciesName,
  type FaciesField,
  type FaciesResult,
} from './facies.ts';
export {
  ALUMINOSILICATE_TRIPLE_POINTS,
  ALUMINOSILICATE_SLOPES_KBAR_PER_C,
  aluminosilicateLines,
  stableAluminosilicate,
  type Aluminosilicate,
  type AluminosilicateCalibration,
  type AluminosilicateResult,
} from './aluminosilicate.ts';
export {
  dryPeridotiteSolidusC,
  wetGraniteSolidusC,
  isWetGraniteSolidusApproximate,
  WET_GRANITE_SOLIDUS_NODES,
  ROCK_SOLIDUS,
  WET_GRANITE,
  FLUID_ABSENT_FELSIC,
  WET_BASALT,
  DRY_BASALT,
  WET_PERIDOTITE,
  DRY_PERIDOTITE,
  type SolidusCurve,
} from './solidus.ts';
export { depthFromPressureKbar, peakConditions, type PeakConditions, type PeakConditionsOptions } from './peak.ts';
