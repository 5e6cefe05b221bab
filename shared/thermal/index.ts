// The thermal engine's public API (re-exports only). See each file for the method and its source.
export { compileModel, layerI1, layerI2, type CompiledModel, type CompileOptions } from './compile.ts';
export {
  DEFAULT_DENSITY_KG_M3,
  DEFAULT_GRAVITY_MS2,
  DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C,
  DEFAULT_ROCK,
  type ThermalModel,
  type ThermalLayer,
} from './model.ts';
export { heatProductionFromRadioelements } from './heat-production.ts';
export {
  ColumnState,
  solveColumn,
  columnTemperature,
  columnHeatFlow,
  columnIsothermDepth,
  layerAt,
  kirchhoffFromTemperature,
  temperatureFromKirchhoff,
  COLUMN_FLOW_EXHAUSTED,
  COLUMN_CONDUCTIVITY_UNDEFINED,
  COLUMN_BAD_INPUT,
} from './column.ts';
export {
  solveModelColumn,
  temperatureAtDepth,
  heatFlowAtDepth,
  isothermDepth,
  reducedHeatFlow,
  basalHeatFlow,
  columnWarnings,
  type ColumnOptions,
} from './geotherm.ts';
export { columnProfile, limitWarnings, type ColumnProfile, type ProfileOptions } from './profile.ts';
export { geothermGrid, COLUMN_MELT_ONSET, type GeothermGridQuery, type GeothermGridOutput, type GeothermGridOptions } from './grid.ts';
export {
  lithostaticPressureMPa,
  uniformLithostaticPressureMPa,
  depthFromLithostaticPressure,
  hydrostaticPressureMPa,
  poreFluidFactor,
  effectivePressureMPa,
  assessPoreFluidFactor,
  kbarFromMPa,
  mpaFromKbar,
  STANDARD_GRAVITY_MS2,
  FRESH_WATER_DENSITY_KG_M3,
  PORE_FLUID_FACTOR_WARNING,
  type HydrostaticOptions,
  type PoreFluidAssessment,
} from './pressure.ts';
export { realizeModel, nominalModel, isUncertainModel, realizationProblem } from './realize.ts';
export { quantileSorted, summarizeSorted, summarize, summaryToJson, stderrMedianSorted, STDERR_P50_METHOD, type Summary } from './quantiles.ts';
export {
  monteCarloColumn,
  prepareGridMonteCarlo,
  monteCarloGridRange,
  allocateGridMonteCarloOutput,
  type ColumnMonteCarloOptions,
  type ColumnMonteCarloResult,
  type GridMonteCarloSpec,
  type GridMonteCarloOutput,
  type GridSummaryBuffers,
  type PreparedGridMonteCarlo,
} from './monte-carlo.ts';
export { adiabatTemperatureC, adiabatDepthKm, adiabaticGradientKPerKm, MANTLE_EXPANSIVITY_PER_K, MANTLE_HEAT_CAPACITY_J_KG_K } from './adiabat.ts';
export { columnLimits, limitedTemperature, limitedIsothermDepth, isAdiabatic, layerRock, layerSolidus, type ColumnLimits } from './limits.ts';
export { limitsToJson, sampleFlag, parsePorePressureMode, porePressureAt, describePorePressure, type PorePressureMode } from './readout.ts';
