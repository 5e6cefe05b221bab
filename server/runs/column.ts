/**
 * The column inspector's answer (POST /api/column): one steady-state conductive column of a thermal model at a
 * surface heat flow, sampled with depth (temperature, heat flow, lithostatic pressure, metamorphic facies), with
 * isotherm depths, solidus crossings and, when asked, the P10–P90 band from the thermal engine's Monte Carlo over
 * the model's distributions and the heat flow's standard deviation. All physics is shared/thermal's.
 */
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { classifyFacies } from '../../shared/petrology/index.ts';
import type { Distribution } from '../../shared/random/distributions.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import {
  COLUMN_FLOW_EXHAUSTED,
  columnProfile,
  compileModel,
  describePorePressure,
  limitedIsothermDepth,
  limitedTemperature,
  limitsToJson,
  monteCarloColumn,
  nominalModel,
  parsePorePressureMode,
  porePressureAt,
  sampleFlag,
  summaryToJson,
  STDERR_P50_METHOD,
} from '../../shared/thermal/index.ts';

export interface ColumnQuery {
  model: ThermalModelInput;
  /** Surface heat flow, mW/m² (default the model's surfaceHeatFlowMWm2). */
  heatFlowMWm2?: number;
  /** Standard deviation of the surface heat flow, mW/m² (e.g. the kriging sd at the point). */
  heatFlowSdMWm2?: number;
  isothermsC: number[];
  depthsKm: number[];
  maxDepthKm: number;
  stepKm: number;
  /** Monte Carlo realizations for the P10–P90 band (0 = none). */
  realizations: number;
  seed: number;
  /** `hydrostatic` (default) or `lambda:λ`. */
  porePressure?: string;
  /** Pore-fluid density for hydrostatic pressure, kg/m³ (default 1000). */
  fluidDensityKgM3?: number;
}

const r4 = (v: number) => Math.round(v * 1e4) / 1e4;
const num = (v: number): number | null => (Number.isFinite(v) ? r4(v) : null);
const sj = (s: Parameters<typeof summaryToJson>[0]) => Object.fromEntries(Object.entries(summaryToJson(s)).map(([k, x]) => [k, x === null ? null : r4(x)]));

/** Computes the column answer; throws InputError when the model gives no usable surface heat flow. */
export function computeColumn(q: ColumnQuery): Record<string, unknown> {
  const nominal = nominalModel(q.model);
  const q0 = q.heatFlowMWm2 ?? nominal.surfaceHeatFlowMWm2;
  if (q0 === undefined || !(q0 > 0)) {
    throw new InputError('no usable surface heat flow: give heatFlowMWm2 (> 0) or a model with surfaceHeatFlowMWm2', [{ field: 'heatFlowMWm2', problem: `must be > 0 mW/m², got ${q0 ?? 'none'}` }], 'invalid_column', 422);
  }
  const cm = compileModel(nominal, { maxDepthKm: q.maxDepthKm });
  const prof = columnProfile(cm, { heatFlowMWm2: q0, stepKm: q.stepKm, maxDepthKm: q.maxDepthKm });
  const st = prof.state;
  const lim = prof.limits;
  let pore;
  try {
    pore = parsePorePressureMode(q.porePressure, q.fluidDensityKgM3);
  } catch (e) {
    throw new InputError((e as Error).message, [{ field: 'porePressure', problem: (e as Error).message }], 'invalid_column', 422);
  }
  const poreInfo = describePorePressure(pore);
  const profile = Array.from(prof.depthKm, (z, j) => {
    const t = prof.temperatureC[j], p = prof.pressureMPa[j];
    // Facies only where the column gives a temperature (the readout stops at the melt onset).
    const f = Number.isFinite(t) ? classifyFacies(t, p / 100) : null; // 1 kbar = 100 MPa
    const pp = porePressureAt(pore, z, p, cm.gravityMS2);
    return {
      depthKm: r4(z),
      temperatureC: num(t),
      heatFlowMWm2: num(prof.heatFlowMWm2[j]),
      pressureMPa: num(p),
      porePressureMPa: num(pp.porePressureMPa),
      poreFluidFactor: num(pp.poreFluidFactor),
      effectivePressureMPa: num(pp.effectivePressureMPa),
      facies: f?.facies ?? null,
      faciesApproximate: f?.approximate ?? false,
      regime: Number.isFinite(t) ? (prof.adiabatic[j] ? 'adiabat' : 'conductive') : null,
      flag: sampleFlag(lim, z),
    };
  });
  const warnings = [...prof.warnings];
  if (poreInfo.warning !== null) warnings.push(poreInfo.warning);
  const out: Record<string, unknown> = {
    surfaceHeatFlowMWm2: r4(q0),
    heatFlowSdMWm2: q.heatFlowSdMWm2 === undefined ? null : num(q.heatFlowSdMWm2),
    surfaceTemperatureC: cm.surfaceTemperatureC,
    isothermDepthsKm: Object.fromEntries(q.isothermsC.map((t) => [String(t), num(limitedIsothermDepth(cm, st, lim, t, q.maxDepthKm))])),
    temperatureAtDepthsC: Object.fromEntries(q.depthsKm.map((z) => [String(z), num(limitedTemperature(cm, st, lim, z))])),
    basalHeatFlowMWm2: num(prof.basalHeatFlowMWm2),
    reducedHeatFlowMWm2: num(prof.reducedHeatFlowMWm2),
    reducedHeatFlowLayer: cm.reducedHeatFlowLayer >= 0 ? cm.names[cm.reducedHeatFlowLayer] : null,
    solidusCrossingKm: { wetSolidus: num(lim.wetSolidusKm), meltOnset: num(lim.meltOnsetKm) },
    ...limitsToJson(cm, lim),
    porePressure: { mode: pore.kind === 'hydrostatic' ? 'hydrostatic' : `lambda:${pore.lambda}`, method: poreInfo.method },
    // Not valid throughout: heat flow exhausted, k(T) undefined, or melt onset above the maximum depth.
    inconsistent: (st.status & COLUMN_FLOW_EXHAUSTED) !== 0 || lim.endReason !== null,
    profile,
    band: null as unknown,
    warnings,
    caution: CAUTION,
  };
  if (q.realizations > 0) {
    const sd = q.heatFlowSdMWm2 ?? 0;
    const heat: number | Distribution = sd > 0 ? { dist: 'normal', mean: q0, sd } : q0;
    const depths = Array.from(prof.depthKm);
    const mc = monteCarloColumn(q.model, {
      realizations: q.realizations,
      seed: q.seed,
      isothermsC: q.isothermsC,
      depthsKm: depths,
      maxDepthKm: q.maxDepthKm,
      heatFlowMWm2: heat,
      solidus: false,
    });
    out.band = {
      realizations: q.realizations,
      seed: q.seed,
      heatFlow: sd > 0 ? `normal(mean ${r4(q0)}, sd ${r4(sd)}) mW/m², drawn after the model's parameters` : 'fixed (no standard deviation at this point)',
      percentiles: 'Hyndman & Fan (1996) type 7; an isotherm not reached counts as deeper than any depth (null percentile)',
      stderrP50Method: STDERR_P50_METHOD,
      depthKm: depths.map(r4),
      temperatureC: {
        p10: mc.temperatureAtDepthsC.map((s) => num(s.p10)),
        p50: mc.temperatureAtDepthsC.map((s) => num(s.p50)),
        p90: mc.temperatureAtDepthsC.map((s) => num(s.p90)),
      },
      isothermDepthsKm: Object.fromEntries(q.isothermsC.map((t, k) => [String(t), sj(mc.isothermDepthsKm[k])])),
      rejected: mc.rejected,
      inconsistent: mc.inconsistent,
    };
    if (mc.rejected > 0) warnings.push(`${mc.rejected} of ${q.realizations} realizations had physically impossible draws and were left out (first: ${mc.firstRejection})`);
  }
  return out;
}
