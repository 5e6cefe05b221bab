import { bullardFit } from './bullard.ts';
import type { WellInput } from './checks.ts';
import { columnFromLithology, harmonicMeanConductivity, sortColumn } from './conductivity.ts';
import { correctMeasurements } from './correction.ts';
import { fitGradient, type GradientFit } from './gradient.ts';
import { wellHeatFlowCorrections } from './heat-flow-corrections.ts';
import { modelGeotherm, modelResiduals } from './model-check.ts';
import { heatFlowQuality, type ConductivitySource } from './quality.ts';
import {
  DEFAULT_CONDUCTIVITY_REL_SD,
  type HeatFlowMethod,
  type WellAnalysisOptions,
  type WellConductivity,
  type WellHeatFlow,
  type WellPlot,
  type WellReport,
  type WellRow,
  type WellStatus,
} from './report.ts';
import { columnHeatAboveMWm2, effectiveDepthM, fitSurfaceHeatFlow, type SurfaceFit } from './surface-heat-flow.ts';
import type { ConductivityInterval, CorrectedPoint, WellFlag } from './types.ts';

export { DEFAULT_CONDUCTIVITY_REL_SD } from './report.ts';
export type { HeatFlowMethod, WellAnalysisOptions, WellConductivity, WellHeatFlow, WellModel, WellPlot, WellReport, WellRow, WellStatus } from './report.ts';
export { effectiveDepthM } from './surface-heat-flow.ts';

const nullIfNaN = (v: number) => (Number.isFinite(v) ? v : null);

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
  const anchor = opts.anchor ?? true;
  const grad = fitGradient(points, { surfaceTemperatureC: opts.surfaceTemperatureC, anchor, anchorSdC: opts.anchorSdC, outliers: opts.outliers });
  const base = { id: well.id, name: well.name, lonLat: well.lonLat, elevationM: well.elevationM, points, horner: corr.horner, flags };
  const methods = [...new Set(points.filter((p) => p.used).map((p) => p.method))].sort();
  if (grad === null) return noGradient(well, opts, base, methods);
  flags.push(...grad.flags);
  const bottom = grad.bottomM;
  const top = grad.anchored ? 0 : grad.topM;
  const plot = plotOf(well, points);
  plot.fitLine = [
    { depthM: 0, temperatureC: grad.interceptC },
    { depthM: bottom, temperatureC: grad.interceptC + (grad.gradientCPerKm * bottom) / 1000 },
  ];
  const w: Fitted = { well, opts, base, grad, gradient: gradientReport(grad), methods, plot, topM: top, bottomM: bottom };
  const col = conductivityColumn(well, opts, flags);
  if (col === undefined) {
    const reason = 'no conductivity: the well has no column and neither a thermal model nor a conductivity (conductivityWmK) was given';
    flags.push({ code: 'no-conductivity', message: reason });
    return partial(w, 'gradient-only', reason, {});
  }
  const tempDependent = col.column.some((c) => (c.tempCoeffPerK ?? 0) !== 0);
  const line = { t0C: grad.interceptC, gradientCPerKm: grad.gradientCPerKm };
  const hm = harmonicMeanConductivity(col.column, top, bottom, tempDependent ? line : undefined);
  if (!Number.isFinite(hm.conductivityWmK)) {
    const reason = `the ${col.source === 'column' ? 'conductivityColumn' : 'lithology column'} does not reach the measured interval ${top}–${bottom} m`;
    flags.push({ code: 'conductivity-no-overlap', message: reason });
    return partial(w, 'gradient-only', reason, {});
  }
  if (hm.coverage < 1 - 1e-9)
    flags.push({
      code: 'conductivity-partial',
      message: `the conductivity covers ${(hm.coverage * 100).toFixed(0)} % of ${top}–${bottom} m; the harmonic mean is over the covered part`,
    });
  const relSd = { ...DEFAULT_CONDUCTIVITY_REL_SD, ...(opts.conductivityRelSd ?? {}) };
  const conductivity: WellConductivity = {
    source: col.source,
    harmonicMeanWmK: hm.conductivityWmK,
    relativeSd: relSd[col.source],
    topM: top,
    bottomM: bottom,
    coverage: hm.coverage,
    temperatureDependent: tempDependent,
  };
  if (!(grad.gradientCPerKm > 0)) return partial(w, 'no-heat-flow', `non-positive gradient (${grad.gradientCPerKm.toFixed(2)} °C/km)`, { conductivity });
  const interval = intervalHeatFlow(w, col.column, conductivity);
  if (!(interval.q >= 0.01 && interval.q < 2000)) {
    const reason = `heat flow ${interval.q.toFixed(0)} mW/m² is not a conductive value`;
    flags.push({ code: 'implausible-heat-flow', message: reason });
    return partial(w, 'no-heat-flow', reason, { conductivity, bullard: interval.bullard });
  }
  const heatFlow = surfaceHeatFlow(w, interval, conductivity);
  const check = modelCheck(w, heatFlow.heatFlowMWm2);
  return {
    ...base,
    status: 'ok',
    gradient: w.gradient,
    conductivity,
    bullard: interval.bullard,
    heatFlow,
    plot,
    modelCheck: check,
    row: rowOf(w, 'ok', heatFlow, conductivity, check),
  };
}

/** The report's fields every outcome shares. */
type ReportBase = Pick<WellReport, 'id' | 'name' | 'lonLat' | 'elevationM' | 'points' | 'horner' | 'flags'>;

/** A well whose temperatures gave a line: what the later steps read. */
interface Fitted {
  well: WellInput;
  opts: WellAnalysisOptions;
  base: ReportBase;
  grad: GradientFit;
  gradient: NonNullable<WellReport['gradient']>;
  /** Correction methods of the points used, sorted. */
  methods: CorrectedPoint['method'][];
  plot: WellPlot;
  /** Interval of the conductivity mean (m): from the surface when anchored. */
  topM: number;
  bottomM: number;
}

/** The temperature–depth plot's data before the fit: raw and corrected points. */
function plotOf(well: WellInput, points: CorrectedPoint[]): WellPlot {
  return {
    raw: well.measurements.map((m, index) => ({ index, depthM: m.depthM, temperatureC: m.temperatureC, kind: m.kind })),
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
  };
}

/** The report of a well whose points give no line, with the reason. */
function noGradient(well: WellInput, opts: WellAnalysisOptions, base: ReportBase, methods: string[]): WellReport {
  const points = base.points;
  const usedCount = points.filter((p) => p.used).length;
  const distinct = new Set(points.filter((p) => p.used).map((p) => p.depthM)).size;
  const reason =
    usedCount === 0
      ? 'no usable measurement'
      : distinct <= 1 && !((opts.anchor ?? true) && opts.surfaceTemperatureC !== undefined)
        ? `all ${usedCount} usable point${usedCount === 1 ? ' is' : 's are'} at one depth and no surface temperature anchors the line (give --surface-temp-c or a model)`
        : 'the points do not span two depths';
  base.flags.push({ code: 'no-gradient', message: reason });
  const status: WellStatus = 'no-heat-flow';
  return {
    ...base,
    status,
    reason,
    plot: plotOf(well, points),
    row: { id: well.id, name: well.name, status, method: methods.join('+'), nPoints: usedCount, flags: base.flags.map((f) => f.code) },
  };
}

/** The fit without its flags (already among the well's) and with plain arrays (for JSON). */
function gradientReport(grad: GradientFit): NonNullable<WellReport['gradient']> {
  return {
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
}

/** A report that stops before a heat flow (status gradient-only or no-heat-flow), with the reason. */
function partial(w: Fitted, status: WellStatus, reason: string, extra: { conductivity?: WellConductivity; bullard?: WellReport['bullard'] }): WellReport {
  const check = modelCheck(w);
  const out: WellReport = {
    ...w.base,
    status,
    reason,
    gradient: w.gradient,
    ...extra,
    plot: w.plot,
    modelCheck: check,
    row: rowOf(w, status, undefined, extra.conductivity, check),
  };
  return out;
}

/**
 * The well's conductivity column, first source that exists: its own conductivityColumn, its lithologyColumn through
 * the user's map, the one `conductivityWmK` given (an explicit choice overrides the model), or the model's layers.
 */
function conductivityColumn(
  well: WellInput,
  opts: WellAnalysisOptions,
  flags: WellFlag[],
): { source: ConductivitySource; column: ConductivityInterval[] } | undefined {
  if (well.conductivityColumn && well.conductivityColumn.length > 0) return { source: 'column', column: sortColumn(well.conductivityColumn) };
  if (well.lithologyColumn && well.lithologyColumn.length > 0) {
    if (!opts.lithologyConductivity) {
      flags.push({ code: 'no-lithology-map', message: 'the well has a lithologyColumn but no lithology → conductivity map was given' });
    } else {
      const r = columnFromLithology(well.lithologyColumn, opts.lithologyConductivity);
      if (r.missing.length > 0)
        flags.push({
          code: 'lithology-unmapped',
          message: `lithologies not in the conductivity map: ${r.missing.join(', ')} (those intervals have no conductivity)`,
        });
      if (r.column.length > 0) return { source: 'lithology', column: sortColumn(r.column) };
    }
  }
  if (opts.conductivityWmK !== undefined) {
    if (!(opts.conductivityWmK > 0)) throw new RangeError('conductivityWmK must be > 0 W/m/K');
    return { source: 'constant', column: [{ topM: 0, bottomM: Number.POSITIVE_INFINITY, conductivityWmK: opts.conductivityWmK }] };
  }
  if (opts.model) return { source: 'model', column: sortColumn(opts.model.column) };
  return undefined;
}

/** The model check at the check heat flow and at the well's own (when given); adds both geotherms to the plot. */
function modelCheck(w: Fitted, ownQ?: number): WellReport['modelCheck'] {
  const m = w.opts.model;
  if (!m) return undefined;
  const points = w.base.points;
  const q = w.opts.checkHeatFlowMWm2 ?? m.surfaceHeatFlowMWm2;
  const out: NonNullable<WellReport['modelCheck']> = {};
  const sampleBottom = Math.max(w.bottomM * 1.1, 100);
  if (Number.isFinite(q) && q > 0) {
    out.regional = modelResiduals(points, m.temperature, q);
    w.plot.modelRegional = { heatFlowMWm2: q, samples: modelGeotherm(m.temperature, q, sampleBottom) };
  }
  if (ownQ !== undefined && Number.isFinite(ownQ) && ownQ > 0) {
    out.own = modelResiduals(points, m.temperature, ownQ);
    w.plot.modelOwn = { heatFlowMWm2: ownQ, samples: modelGeotherm(m.temperature, ownQ, sampleBottom) };
  }
  return out;
}

function rowOf(w: Fitted, status: WellStatus, hf?: WellHeatFlow, k?: WellConductivity, check?: WellReport['modelCheck']): WellRow {
  return {
    id: w.well.id,
    name: w.well.name,
    status,
    method: [hf?.method, w.methods.join('+')].filter(Boolean).join('; '),
    nPoints: w.grad.nPoints,
    gradientCPerKm: w.grad.gradientCPerKm,
    gradientSeCPerKm: w.grad.seGradientCPerKm,
    conductivityWmK: k?.harmonicMeanWmK,
    heatFlowMWm2: hf?.heatFlowMWm2,
    uncertaintyMWm2: hf?.uncertaintyMWm2,
    quality: hf?.quality,
    residualRmsC: check?.regional?.rmsC,
    flags: w.base.flags.map((f) => f.code),
  };
}

/** The heat flow over the fitted interval: gradient × harmonic-mean k, or the Bullard slope where the well has its own column. */
interface IntervalHeatFlow {
  method: HeatFlowMethod;
  q: number;
  sq: number;
  /** Gradient × harmonic-mean conductivity and its σ, mW/m². */
  qg: number;
  sqg: number;
  bq?: number;
  sbq?: number;
  bullard?: WellReport['bullard'];
}

/**
 * q = gradient × harmonic-mean k (°C/km × W/m/K = mW/m²), σ_q/q = √((σ_g/g)² + (σ_k/k)²); where the well has its own
 * depth-resolved column (measured or lithology) and the Bullard line has redundancy, its positive slope instead.
 */
function intervalHeatFlow(w: Fitted, column: ConductivityInterval[], conductivity: WellConductivity): IntervalHeatFlow {
  const { grad, opts } = w;
  // °C/km × W/m/K = 10⁻³ K/m · W/m/K = mW/m².
  const qg = grad.gradientCPerKm * conductivity.harmonicMeanWmK;
  const sqg = qg * Math.hypot(grad.seGradientCPerKm / grad.gradientCPerKm, conductivity.relativeSd);
  const out: IntervalHeatFlow = { method: 'gradient-conductivity', q: qg, sq: sqg, qg, sqg };
  if (conductivity.source !== 'column' && conductivity.source !== 'lithology') return out;
  const bull = bullardFit(w.base.points, column, { surfaceTemperatureC: opts.surfaceTemperatureC, anchor: opts.anchor ?? true, anchorSdC: opts.anchorSdC });
  // A Bullard line needs redundancy: three points, or two plus the surface anchor.
  if (bull === null || !(bull.nPoints >= 3 || (bull.nPoints >= 2 && bull.anchored))) return out;
  const bq = bull.heatFlowMWm2;
  const sbq = Math.hypot(bull.seHeatFlowMWm2, bq * conductivity.relativeSd);
  Object.assign(out, { bq, sbq, bullard: { ...bull, resistanceM2KW: Array.from(bull.resistanceM2KW, nullIfNaN) } });
  if (bq > 0) Object.assign(out, { method: 'bullard', q: bq, sq: sbq });
  else w.base.flags.push({ code: 'bullard-non-positive', message: `the Bullard slope is ${bq.toFixed(1)} mW/m²; the gradient method is used` });
  return out;
}

/**
 * The surface heat flow: the interval value is q at the fit's effective depth; the heat produced above it is added
 * (q0 = q(z) + ∫₀^z A dz, A from the well's heatProductionColumn or the model); with a model, q0 is also fitted
 * directly to the temperatures, and that fit is the site's value where the model also gives the conductivity; then
 * the paleoclimatic and topographic corrections asked for.
 */
function surfaceHeatFlow(w: Fitted, interval: IntervalHeatFlow, conductivity: WellConductivity): WellHeatFlow {
  const { well, opts, grad } = w;
  const { points, flags } = w.base;
  const { q, sq } = interval;
  const outliers = points.some((p) => p.flags.includes('outlier') || p.flags.includes('outlier-excluded'));
  const qual = heatFlowQuality({
    methods: w.methods,
    nPoints: grad.nPoints,
    conductivitySource: conductivity.source,
    conductivityCoverage: conductivity.coverage,
    relativeUncertainty: sq / q,
    outliers,
  });
  const zMidM = effectiveDepthM(points, grad.anchored ? grad.anchorSdC : undefined, (w.topM + w.bottomM) / 2);
  const { source: aSource, correction } = heatProducedAbove(well, opts, zMidM, flags);
  const corrected = q + correction;
  let fit: SurfaceFit | null = null;
  if (opts.model) {
    fit = fitSurfaceHeatFlow(points, opts.model.geotherm, { q0: corrected, t0: grad.interceptC }, grad.anchored ? grad.anchorTemperatureC : undefined);
    if (fit === null) flags.push({ code: 'model-fit-failed', message: 'the direct fit of q0 with the model geotherm did not converge or had too few points' });
  }
  // The direct fit is the site's value where the model also gives the conductivity (one consistent k(T) and A(z)).
  const useFit = fit !== null && conductivity.source === 'model' && fit.heatFlowMWm2 > 0;
  const q0Raw = useFit ? fit!.heatFlowMWm2 : corrected;
  const sq0 = useFit ? Math.hypot(fit!.seMWm2, q0Raw * conductivity.relativeSd) : sq;
  const hfc = wellHeatFlowCorrections(well.lonLat, w.topM, w.bottomM, grad.gradientCPerKm, q, opts.heatFlowCorrections, flags);
  return {
    method: interval.method,
    heatFlowMWm2: q0Raw + (hfc?.totalHeatFlowChangeMWm2 ?? 0),
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
    gradientMethodMWm2: interval.qg,
    gradientMethodUncertaintyMWm2: interval.sqg,
    bullardMWm2: interval.bq,
    bullardUncertaintyMWm2: interval.sbq,
    quality: qual.quality,
    qualityReasons: qual.reasons,
  };
}

/** ∫₀^z A dz (mW/m²) above zM metres, from the well's heatProductionColumn, else the model, else none (flagged). */
function heatProducedAbove(
  well: WellInput,
  opts: WellAnalysisOptions,
  zM: number,
  flags: WellFlag[],
): { source: WellHeatFlow['heatProductionSource']; correction: number } {
  if (well.heatProductionColumn && well.heatProductionColumn.length > 0) {
    const r = columnHeatAboveMWm2(well.heatProductionColumn, zM);
    if (r.coveredM < zM - 1e-6)
      flags.push({
        code: 'heat-production-partial',
        message: `the heatProductionColumn covers ${r.coveredM.toFixed(0)} of the ${zM.toFixed(0)} m above mid-interval; uncovered depths count as producing no heat`,
      });
    return { source: 'well-column', correction: r.heatMWm2 };
  }
  if (opts.model) return { source: 'model', correction: opts.model.heatAboveMWm2(zM / 1000) };
  flags.push({
    code: 'no-heat-production',
    message: 'no thermal model or heatProductionColumn: the surface heat flow is the interval value, not corrected for the heat produced above the interval',
  });
  return { source: 'none', correction: 0 };
}
