// Heat in place (volumetric method) and its conversion to power (re-exports only).
export { gaussLegendre, type GaussLegendreRule } from './gauss-legendre.ts';
export {
  ColumnHeatScratch,
  DEFAULT_GL_ORDER,
  DEFAULT_WINDOW,
  KELVIN_OFFSET,
  checkWindow,
  columnHeat,
  columnHeatSolved,
  emptyColumnHeat,
  exergyIntegral,
  type ColumnHeat,
  type HeatWindow,
} from './column-heat.ts';
export { JULIAN_YEAR_S, ROUTES, availableWorkFraction, heatInPlaceJ, powerMWFromEnergyJ } from './exergy.ts';
export { buildHeatTable, lookupHeatTable, type HeatTable, type HeatTableOptions } from './heat-table.ts';
export { allocateResourceOutput, combineSums, resourceRange, type CellSummaryBuffers, type ResourceOutput, type SetSums } from './monte-carlo.ts';
export { prepareResource } from './prepare.ts';
export {
  DEFAULT_PARAMETERS,
  SUM_BLOCK,
  SUM_QUANTITIES,
  parameterProblem,
  type PreparedResource,
  type ResourceParameters,
  type ResourceSpec,
} from './resource-spec.ts';
export { cellNormal } from '../thermal/monte-carlo.ts';
export { areaTotals, setMembership, totalValue, type AreaTotals, type TotalValue } from './totals.ts';
export {
  gridCentresLonLat,
  lonLatGridCentres,
  lonLatGridPolygonMask,
  pointInPolygon,
  pointsPolygonMask,
  polygonsBbox,
  polygonsOf,
  type PolygonRings,
} from './polygon-mask.ts';
export { zonesFromClassGrid, zonesFromPolygons, type ZoneLabels } from './zones.ts';
export {
  heatInPlaceOptionsSchema,
  parseHeatInPlaceOptions,
  parseAreaPolygon,
  parseZonePolygons,
  checkHeatInPlaceOptions,
  type AreaGeometry,
  type HeatInPlaceOptions,
  type HeatInPlaceOptionsInput,
} from './schema.ts';
export {
  EXCEEDANCE_READING,
  NO_REALIZATIONS_NOTE,
  PERCENTILE_CONVENTION,
  assessHeatInPlace,
  type HeatInPlaceInput,
  type HeatInPlaceReport,
  type HeatInPlaceResult,
} from './assess.ts';
export { reportCsv, reportJson } from './report.ts';
export { percentilesBySelection, selectInPlace } from '../stats/quantile.ts';
