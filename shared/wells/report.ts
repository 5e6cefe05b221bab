/**
 * What the analysis of one well reports (shared/wells/analyze.ts: analyzeWell): its options, the thermal model as the
 * wells path needs it, and the report with its heat flow, conductivity, plot data and table row.
 */
import type { BullardFit } from './bullard.ts';
import type { HornerGroup } from './correction.ts';
import type { GradientFit } from './gradient.ts';
import type { ModelResiduals, ModelTemperature } from './model-check.ts';
import type { ConductivitySource } from './quality.ts';
import type { ModelGeotherm, SurfaceFit } from './surface-heat-flow.ts';
import type { BhtCorrection, ConductivityInterval, CorrectedPoint, WellFlag } from './types.ts';
import type { HeatFlowCorrectionOptions, IntervalCorrection } from '../heatflow/corrections.ts';

/**
 * Default relative one-sigma uncertainty of a well's conductivity, by source (this project's choice, from the
 * usual spread of each: common practice, no single source): a measured column 10 %, a lithology map 20 %, the
 * thermal model's layers 15 %, one constant for the well 25 %.
 */
export const DEFAULT_CONDUCTIVITY_REL_SD: Record<ConductivitySource, number> = { column: 0.1, lithology: 0.2, model: 0.15, constant: 0.25 };

/** The thermal model as the wells path needs it. */
export interface WellModel {
  /** Model temperature at depths for a surface heat flow. */
  temperature: ModelTemperature;
  /** The model's layers as a conductivity column (m; k0 and b of k(T) = k0/(1 + bT)). */
  column: ConductivityInterval[];
  /** The model's own surface heat flow (mW/m²; NaN when it gives none). */
  surfaceHeatFlowMWm2: number;
  surfaceTemperatureC: number;
  /** The model geotherm at any surface heat flow and surface temperature (for the direct fit of q0). */
  geotherm: ModelGeotherm;
  /** Heat produced between the surface and zKm, ∫₀^z A dz (mW/m²), from the model's layers. */
  heatAboveMWm2: (zKm: number) => number;
}

export interface WellAnalysisOptions {
  /** Mean surface temperature (°C) for the anchor and the below-surface check; absent = no anchor. */
  surfaceTemperatureC?: number;
  /** Anchor the fits at the surface temperature (default true when one is known). */
  anchor?: boolean;
  anchorSdC?: number;
  /** Correction for BHTs that cannot be Horner-corrected (default none). */
  bht?: BhtCorrection;
  hornerToleranceM?: number;
  outliers?: 'flag' | 'exclude';
  /** User map { lithology: conductivityWmK } for lithology columns. */
  lithologyConductivity?: Record<string, number>;
  /** One conductivity (W/m/K) for wells with no column of their own; when given it is used instead of the model's layers. */
  conductivityWmK?: number;
  /** Override of DEFAULT_CONDUCTIVITY_REL_SD per source. */
  conductivityRelSd?: Partial<Record<ConductivitySource, number>>;
  model?: WellModel;
  /** Heat flow for the model check (mW/m²); default the model's surfaceHeatFlowMWm2. */
  checkHeatFlowMWm2?: number;
  /** Paleoclimatic and topographic corrections of the gradient (shared/heatflow), each optional. */
  heatFlowCorrections?: HeatFlowCorrectionOptions;
}

export type HeatFlowMethod = 'bullard' | 'gradient-conductivity';

export interface WellHeatFlow {
  method: HeatFlowMethod;
  /** Surface heat flow q0 (the site's value), mW/m²: see surfaceMethod. */
  heatFlowMWm2: number;
  uncertaintyMWm2: number;
  /** Heat flow over the fitted interval (gradient × conductivity, or the Bullard slope): q at mid-interval, mW/m². */
  intervalHeatFlowMWm2: number;
  intervalUncertaintyMWm2: number;
  /** Depth whose heat flow the interval value is (the fit's effective depth, effectiveDepthM), m. */
  intervalMidDepthM: number;
  /** ∫₀^z_mid A dz, mW/m² (0 when no heat production is known). */
  heatProductionCorrectionMWm2: number;
  /** Where A(z) came from. */
  heatProductionSource: 'well-column' | 'model' | 'none';
  /** q(z_mid) + ∫₀^z_mid A dz, mW/m². */
  correctedIntervalMWm2: number;
  /** q0 fitted directly to the temperatures with the model's k(T) and A(z) (when a model is given). */
  modelFit?: SurfaceFit;
  /** How heatFlowMWm2 was obtained. */
  surfaceMethod: 'model-fit' | 'interval-plus-heat-production' | 'interval-uncorrected';
  /** Paleoclimatic and topographic corrections, when asked for: heatFlowMWm2 includes their total. */
  corrections?: IntervalCorrection;
  /** The surface heat flow before those corrections, mW/m². */
  uncorrectedHeatFlowMWm2: number;
  /** Gradient × harmonic-mean conductivity (always computed when a conductivity exists), mW/m². */
  gradientMethodMWm2: number;
  gradientMethodUncertaintyMWm2: number;
  /** Bullard slope (when a depth-resolved column of the well's own exists), mW/m². */
  bullardMWm2?: number;
  bullardUncertaintyMWm2?: number;
  quality: 'high' | 'medium' | 'low';
  qualityReasons: string[];
}

export interface WellConductivity {
  source: ConductivitySource;
  /** Harmonic mean over the fitted interval (W/m/K). */
  harmonicMeanWmK: number;
  relativeSd: number;
  /** Interval the mean is taken over (m): from the surface when anchored, else from the shallowest point. */
  topM: number;
  bottomM: number;
  coverage: number;
  /** True when k(T) was evaluated on the fitted line (model layers with a temperature coefficient). */
  temperatureDependent: boolean;
}

/** Everything a temperature–depth plot of one well needs (°C, m). */
export interface WellPlot {
  raw: { index: number; depthM: number; temperatureC: number; kind: string }[];
  corrected: { sources: number[]; depthM: number; temperatureC: number; sdC: number; method: string; used: boolean; flags: string[] }[];
  /** The fitted line at depth 0 and at the deepest point (two samples). */
  fitLine: { depthM: number; temperatureC: number }[];
  /** Model geotherms at the check heat flow and at the well's own heat flow (when a model is given). */
  modelRegional?: { heatFlowMWm2: number; samples: { depthM: number; temperatureC: number }[] };
  modelOwn?: { heatFlowMWm2: number; samples: { depthM: number; temperatureC: number }[] };
}

/** One row of the wells table. */
export interface WellRow {
  id: string;
  name?: string;
  status: WellStatus;
  /** "bullard" / "gradient-conductivity" plus the corrections used, e.g. "bullard; horner+equilibrium". */
  method: string;
  nPoints: number;
  gradientCPerKm?: number;
  gradientSeCPerKm?: number;
  conductivityWmK?: number;
  heatFlowMWm2?: number;
  uncertaintyMWm2?: number;
  quality?: 'high' | 'medium' | 'low';
  /** RMS of corrected − model at the check heat flow (°C). */
  residualRmsC?: number;
  flags: string[];
}

/** ok: a heat-flow site was made; gradient-only: a gradient but no conductivity; no-heat-flow: see `reason`. */
export type WellStatus = 'ok' | 'gradient-only' | 'no-heat-flow';

export interface WellReport {
  id: string;
  name?: string;
  lonLat: [number, number];
  elevationM?: number;
  status: WellStatus;
  /** Why there is no heat flow (status ≠ ok). */
  reason?: string;
  points: CorrectedPoint[];
  horner: HornerGroup[];
  gradient?: Omit<GradientFit, 'standardized' | 'flags'> & { standardized: number[] };
  conductivity?: WellConductivity;
  bullard?: Omit<BullardFit, 'resistanceM2KW'> & { resistanceM2KW: (number | null)[] };
  heatFlow?: WellHeatFlow;
  modelCheck?: { regional?: ModelResiduals; own?: ModelResiduals };
  flags: WellFlag[];
  plot: WellPlot;
  row: WellRow;
}
