import { bullardFit, type BullardFit } from './bullard.ts';
import type { WellInput } from './checks.ts';
import { columnFromLithology, harmonicMeanConductivity, sortColumn } from './conductivity.ts';
import { correctMeasurements, type HornerGroup } from './correction.ts';
import { fitGradient, type GradientFit } from './gradient.ts';
import { modelGeotherm, modelResiduals, type ModelResiduals, type ModelTemperature } from './model-check.ts';
import { heatFlowQuality, type ConductivitySource } from './quality.ts';
import { columnHeatAboveMWm2, fitSurfaceHeatFlow, type ModelGeotherm, type SurfaceFit } from './surface-heat-flow.ts';
import type { BhtCorrection, ConductivityInterval, CorrectedPoint, WellFlag } from './types.ts';
import type { HeatFlowCorrectionOptions, IntervalCorrection } from '../heatflow/corrections.ts';
import { wellHeatFlowCorrections } from './heat-flow-corrections.ts';

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

const nullIfNaN = (v: number) => (Number.isFinite(v) ? v : null);

/**
 * Depth (m) whose gradient a weighted straight-line fit measures: for a profile T = a + b·z + c·z² (constant heat
 * production, Turcotte & Schubert 2002 §4-6) the weighted least-squares slope is b + c·cov_w(z, z²)/var_w(z), which
 * is the derivative 2c·z_ref + b at z_ref = cov_w(z, z²)/(2·var_w(z)) (the interval's middle for points symmetric
 * about it). The surface anchor counts as a point at z = 0 with σ = anchorSdC. Falls back to `fallbackM`.
 */
export function effectiveDepthM(points: { depthM: number; sdC: number; used: boolean }[], anchorSdC: number | undefined, fallbackM: number): number {
  let sw = 0,
    sz = 0,
    sz2 = 0,
    sz3 = 0;
  const add = (z: number, w: number) => {
    sw += w;
    sz += w * z;
    sz2 += w * z * z;
    sz3 += w * z * z * z;
  };
  for (const p of points) if (p.used && p.sdC > 0 && Number.isFinite(p.depthM)) add(p.depthM, 1 / (p.sdC * p.sdC));
  if (anchorSdC !== undefined && anchorSdC > 0) add(0, 1 / (anchorSdC * anchorSdC));
  if (!(sw > 0)) return fallbackM;
  const m1 = sz / sw,
    m2 = sz2 / sw,
    m3 = sz3 / sw;
  const varZ = m2 - m1 * m1,
    cov = m3 - m1 * m2;
  const z = varZ > 0 ? cov / (2 * varZ) : NaN;
  return Number.isFinite(z) && z >= 0 ? z : fallbackM;
}

/**
 * Analyses one well, from raw temperatures to a heat flow:
 * 1. corrections (correctMeasurements: equilibrium, Horner, or the user's BHT correction, each with a σ);
 * 2. the weighted temperature–depth fit, anchored at the surface temperature when known (fitGradient);
 * 3. conductivity, first source that exists: the well's own conductivityColumn, its lithologyColumn through the
 *    user's map, the one `conductivityWmK` given (an explicit choice overrides the model), or the thermal model's
 *    layers (harmonic mean over the interval with k(T) = k0/(1 + bT) evaluated on the fitted line); the interval
 *    is [0, deepest point] when anchored, else [shallowest, deepest];
 * 4. heat flow q = gradient × harmonic-mean k (°C/km × W/m/K = mW/m²), σ_q/q = √((σ_g/g)² + (σ_k/k)²); where the
 *    well has its own depth-resolved column (measured or lithology), also the Bullard slope, σ combined the same
 *    way, and the Bullard value becomes the interval heat flow; this is q at mid-interval, and the surface heat
 *    flow is q0 = q(z_mid) + ∫₀^z_mid A dz with A from the well's heatProductionColumn or the model
 *    (surface-heat-flow.ts); with a model, q0 is also fitted directly to the temperatures, and that fit is the
 *    site's value when the model also gives the conductivity;
 * 5. quality (heatFlowQuality) and, with a model, the model check at the check heat flow and at the well's own.
 * Never returns a heat flow from a non-positive gradient, a single point without anchor, or no conductivity.
 */
export function analyzeWell(well: WellInput, opts: WellAnalysisOptions = {}): WellReport {
  const flags: WellFlag[] = [...well.flags];
  const bht = opts.bht ?? { method: 'none' as const };
  const corr = correctMeasurements(well.measurements, { bht, hornerToleranceM: opts.hornerToleranceM, surfaceTemperatureC: opts.surfaceTemperatureC });
  flags.push(...corr.flags);
  const points = corr.points;
  const ts = opts.surfaceTemperatureC;
  const anchor = opts.anchor ?? true;
  const grad = fitGradient(points, { surfaceTemperatureC: ts, anchor, anchorSdC: opts.anchorSdC, outliers: opts.outliers });
  const raw = well.measurements.map((m, index) => ({ index, depthM: m.depthM, temperatureC: m.temperatureC, kind: m.kind }));
  const base = { id: well.id, name: well.name, lonLat: well.lonLat, elevationM: well.elevationM, points, horner: corr.horner, flags };
  const plotBase = (): WellPlot => ({
    raw,
    corrected: points.map((p) => ({
      sources: p.sources,
      depthM: p.depthM,
      temperatureC: p.temperatureC,
      sdC: p.sdC,
      method: p.method,
      used: p.used,
      flags: p.flags,
    })),
    fitLine: [],
  });
  const methods = [...new Set(points.filter((p) => p.used).map((p) => p.method))].sort();
  const usedCount = points.filter((p) => p.used).length;
  const noGradient = (reason: string): WellReport => {
    const status: WellStatus = 'no-heat-flow';
    return {
      ...base,
      status,
      reason,
      plot: plotBase(),
      row: { id: well.id, name: well.name, status, method: methods.join('+'), nPoints: usedCount, flags: flags.map((f) => f.code) },
    };
  };
  if (grad === null) {
    const distinct = new Set(points.filter((p) => p.used).map((p) => p.depthM)).size;
    const why =
      usedCount === 0
        ? 'no usable measurement'
        : distinct <= 1 && !(anchor && ts !== undefined)
          ? `all ${usedCount} usable point${usedCount === 1 ? ' is' : 's are'} at one depth and no surface temperature anchors the line (give --surface-temp-c or a model)`
          : 'the points do not span two depths';
    flags.push({ code: 'no-gradient', message: why });
    return noGradient(why);
  }
  flags.push(...grad.flags);
  // The report keeps the fit without its flags (already in `flags`) and with plain arrays (for JSON).
  const gradient: NonNullable<WellReport['gradient']> = {
    gradientCPerKm: grad.gradientCPerKm,
    seGradientCPerKm: grad.seGradientCPerKm,
    interceptC: grad.interceptC,
    seInterceptC: grad.seInterceptC,
    anchored: grad.anchored,
    anchorTemperatureC: grad.anchorTemperatureC,
    anchorSdC: grad.anchorSdC,
    nPoints: grad.nPoints,
    dof: grad.dof,
    reducedChi2: grad.reducedChi2,
    topM: grad.topM,
    bottomM: grad.bottomM,
    standardized: Array.from(grad.standardized),
    anchorStandardized: grad.anchorStandardized,
  };
  const bottom = grad.bottomM;
  const top = grad.anchored ? 0 : grad.topM;
  const line = { t0C: grad.interceptC, gradientCPerKm: grad.gradientCPerKm };
  const plot = plotBase();
  plot.fitLine = [
    { depthM: 0, temperatureC: grad.interceptC },
    { depthM: bottom, temperatureC: grad.interceptC + (grad.gradientCPerKm * bottom) / 1000 },
  ];

  // Conductivity source.
  const relSd = { ...DEFAULT_CONDUCTIVITY_REL_SD, ...(opts.conductivityRelSd ?? {}) };
  let source: ConductivitySource | undefined;
  let column: ConductivityInterval[] | undefined;
  if (well.conductivityColumn && well.conductivityColumn.length > 0) {
    source = 'column';
    column = sortColumn(well.conductivityColumn);
  } else if (well.lithologyColumn && well.lithologyColumn.length > 0) {
    if (!opts.lithologyConductivity) {
      flags.push({ code: 'no-lithology-map', message: 'the well has a lithologyColumn but no lithology → conductivity map was given' });
    } else {
      const r = columnFromLithology(well.lithologyColumn, opts.lithologyConductivity);
      if (r.missing.length > 0)
        flags.push({
          code: 'lithology-unmapped',
          message: `lithologies not in the conductivity map: ${r.missing.join(', ')} (those intervals have no conductivity)`,
        });
      if (r.column.length > 0) {
        source = 'lithology';
        column = sortColumn(r.column);
      }
    }
  }
  if (source === undefined && opts.conductivityWmK !== undefined) {
    if (!(opts.conductivityWmK > 0)) throw new RangeError('conductivityWmK must be > 0 W/m/K');
    source = 'constant';
    column = [{ topM: 0, bottomM: Number.POSITIVE_INFINITY, conductivityWmK: opts.conductivityWmK }];
  }
  if (source === undefined && opts.model) {
    source = 'model';
    column = sortColumn(opts.model.column);
  }

  const modelCheck = (ownQ?: number): WellReport['modelCheck'] => {
    const m = opts.model;
    if (!m) return undefined;
    const q = opts.checkHeatFlowMWm2 ?? m.surfaceHeatFlowMWm2;
    const out: NonNullable<WellReport['modelCheck']> = {};
    const sampleBottom = Math.max(bottom * 1.1, 100);
    if (Number.isFinite(q) && q > 0) {
      out.regional = modelResiduals(points, m.temperature, q);
      plot.modelRegional = { heatFlowMWm2: q, samples: modelGeotherm(m.temperature, q, sampleBottom) };
    }
    if (ownQ !== undefined && Number.isFinite(ownQ) && ownQ > 0) {
      out.own = modelResiduals(points, m.temperature, ownQ);
      plot.modelOwn = { heatFlowMWm2: ownQ, samples: modelGeotherm(m.temperature, ownQ, sampleBottom) };
    }
    return out;
  };

  const rowOf = (status: WellStatus, hf?: WellHeatFlow, k?: WellConductivity, check?: WellReport['modelCheck']): WellRow => ({
    id: well.id,
    name: well.name,
    status,
    method: [hf?.method, methods.join('+')].filter(Boolean).join('; '),
    nPoints: grad.nPoints,
    gradientCPerKm: grad.gradientCPerKm,
    gradientSeCPerKm: grad.seGradientCPerKm,
    conductivityWmK: k?.harmonicMeanWmK,
    heatFlowMWm2: hf?.heatFlowMWm2,
    uncertaintyMWm2: hf?.uncertaintyMWm2,
    quality: hf?.quality,
    residualRmsC: check?.regional?.rmsC,
    flags: flags.map((f) => f.code),
  });

  if (source === undefined || column === undefined) {
    const reason = 'no conductivity: the well has no column and neither a thermal model nor a conductivity (conductivityWmK) was given';
    flags.push({ code: 'no-conductivity', message: reason });
    const check = modelCheck();
    return { ...base, status: 'gradient-only', reason, gradient, plot, modelCheck: check, row: rowOf('gradient-only', undefined, undefined, check) };
  }
  const tempDependent = column.some((c) => (c.tempCoeffPerK ?? 0) !== 0);
  const hm = harmonicMeanConductivity(column, top, bottom, tempDependent ? line : undefined);
  if (!Number.isFinite(hm.conductivityWmK)) {
    const reason = `the ${source === 'column' ? 'conductivityColumn' : 'lithology column'} does not reach the measured interval ${top}–${bottom} m`;
    flags.push({ code: 'conductivity-no-overlap', message: reason });
    const check = modelCheck();
    return { ...base, status: 'gradient-only', reason, gradient, plot, modelCheck: check, row: rowOf('gradient-only', undefined, undefined, check) };
  }
  if (hm.coverage < 1 - 1e-9)
    flags.push({
      code: 'conductivity-partial',
      message: `the conductivity covers ${(hm.coverage * 100).toFixed(0)} % of ${top}–${bottom} m; the harmonic mean is over the covered part`,
    });
  const conductivity: WellConductivity = {
    source,
    harmonicMeanWmK: hm.conductivityWmK,
    relativeSd: relSd[source],
    topM: top,
    bottomM: bottom,
    coverage: hm.coverage,
    temperatureDependent: tempDependent,
  };

  if (!(grad.gradientCPerKm > 0)) {
    const reason = `non-positive gradient (${grad.gradientCPerKm.toFixed(2)} °C/km)`;
    const check = modelCheck();
    return {
      ...base,
      status: 'no-heat-flow',
      reason,
      gradient,
      conductivity,
      plot,
      modelCheck: check,
      row: rowOf('no-heat-flow', undefined, conductivity, check),
    };
  }
  // °C/km × W/m/K = 10⁻³ K/m · W/m/K = mW/m².
  const qg = grad.gradientCPerKm * hm.conductivityWmK;
  const sqg = qg * Math.hypot(grad.seGradientCPerKm / grad.gradientCPerKm, conductivity.relativeSd);
  let bull: BullardFit | null = null;
  if (source === 'column' || source === 'lithology') {
    bull = bullardFit(points, column, { surfaceTemperatureC: ts, anchor, anchorSdC: opts.anchorSdC });
    // A Bullard line needs redundancy: three points, or two plus the surface anchor.
    if (bull !== null && !(bull.nPoints >= 3 || (bull.nPoints >= 2 && bull.anchored))) bull = null;
  }
  let method: HeatFlowMethod = 'gradient-conductivity';
  let q = qg;
  let sq = sqg;
  let bullardOut: WellReport['bullard'];
  let bq: number | undefined;
  let sbq: number | undefined;
  if (bull !== null) {
    bq = bull.heatFlowMWm2;
    sbq = Math.hypot(bull.seHeatFlowMWm2, bq * conductivity.relativeSd);
    bullardOut = { ...bull, resistanceM2KW: Array.from(bull.resistanceM2KW, nullIfNaN) };
    if (bq > 0) {
      method = 'bullard';
      q = bq;
      sq = sbq;
    } else flags.push({ code: 'bullard-non-positive', message: `the Bullard slope is ${bq.toFixed(1)} mW/m²; the gradient method is used` });
  }
  if (!(q >= 0.01 && q < 2000)) {
    const reason = `heat flow ${q.toFixed(0)} mW/m² is not a conductive value`;
    flags.push({ code: 'implausible-heat-flow', message: reason });
    const check = modelCheck();
    return {
      ...base,
      status: 'no-heat-flow',
      reason,
      gradient,
      conductivity,
      bullard: bullardOut,
      plot,
      modelCheck: check,
      row: rowOf('no-heat-flow', undefined, conductivity, check),
    };
  }
  const outliers = points.some((p) => p.flags.includes('outlier') || p.flags.includes('outlier-excluded'));
  const qual = heatFlowQuality({
    methods: methods,
    nPoints: grad.nPoints,
    conductivitySource: source,
    conductivityCoverage: hm.coverage,
    relativeUncertainty: sq / q,
    outliers,
  });
  // Surface heat flow: the interval value is q at the fit's effective depth; add the heat produced above it
  // (q0 = q(z) + ∫₀^z A dz).
  const zMidM = effectiveDepthM(points, grad.anchored ? grad.anchorSdC : undefined, (top + bottom) / 2);
  let aSource: WellHeatFlow['heatProductionSource'] = 'none';
  let correction = 0;
  if (well.heatProductionColumn && well.heatProductionColumn.length > 0) {
    const r = columnHeatAboveMWm2(well.heatProductionColumn, zMidM);
    aSource = 'well-column';
    correction = r.heatMWm2;
    if (r.coveredM < zMidM - 1e-6)
      flags.push({
        code: 'heat-production-partial',
        message: `the heatProductionColumn covers ${r.coveredM.toFixed(0)} of the ${zMidM.toFixed(0)} m above mid-interval; uncovered depths count as producing no heat`,
      });
  } else if (opts.model) {
    aSource = 'model';
    correction = opts.model.heatAboveMWm2(zMidM / 1000);
  } else {
    flags.push({
      code: 'no-heat-production',
      message: 'no thermal model or heatProductionColumn: the surface heat flow is the interval value, not corrected for the heat produced above the interval',
    });
  }
  const corrected = q + correction;
  let fit: SurfaceFit | null = null;
  if (opts.model) {
    fit = fitSurfaceHeatFlow(points, opts.model.geotherm, { q0: corrected, t0: grad.interceptC }, grad.anchored ? grad.anchorTemperatureC : undefined);
    if (fit === null) flags.push({ code: 'model-fit-failed', message: 'the direct fit of q0 with the model geotherm did not converge or had too few points' });
  }
  // The direct fit is the site's value where the model also gives the conductivity (one consistent k(T) and A(z)).
  const useFit = fit !== null && source === 'model' && fit.heatFlowMWm2 > 0;
  const q0Raw = useFit ? fit!.heatFlowMWm2 : corrected;
  const sq0 = useFit ? Math.hypot(fit!.seMWm2, q0Raw * conductivity.relativeSd) : sq;
  const hfc = wellHeatFlowCorrections(well.lonLat, top, bottom, grad.gradientCPerKm, q, opts.heatFlowCorrections, flags);
  const q0 = q0Raw + (hfc?.totalHeatFlowChangeMWm2 ?? 0);
  const heatFlow: WellHeatFlow = {
    method,
    heatFlowMWm2: q0,
    uncertaintyMWm2: sq0,
    intervalHeatFlowMWm2: q,
    intervalUncertaintyMWm2: sq,
    intervalMidDepthM: zMidM,
    heatProductionCorrectionMWm2: correction,
    heatProductionSource: aSource,
    correctedIntervalMWm2: corrected,
    ...(fit === null ? {} : { modelFit: fit }),
    ...(hfc === undefined ? {} : { corrections: hfc }),
    uncorrectedHeatFlowMWm2: q0Raw,
    surfaceMethod: useFit ? 'model-fit' : aSource === 'none' ? 'interval-uncorrected' : 'interval-plus-heat-production',
    gradientMethodMWm2: qg,
    gradientMethodUncertaintyMWm2: sqg,
    bullardMWm2: bq,
    bullardUncertaintyMWm2: sbq,
    quality: qual.quality,
    qualityReasons: qual.reasons,
  };
  const check = modelCheck(q0);
  return {
    ...base,
    status: 'ok',
    gradient,
    conductivity,
    bullard: bullardOut,
    heatFlow,
    plot,
    modelCheck: check,
    row: rowOf('ok', heatFlow, conductivity, check),
  };
}
