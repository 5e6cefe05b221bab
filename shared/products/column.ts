/**
 * The one column answer (shared/schema/column.ts) of a thermal model at a surface heat flow: the steady-state
 * conductive geotherm sampled with depth (temperature, heat flow, lithostatic pressure, facies), isotherm depths,
 * temperatures at depths, reduced and basal heat flow, solidus crossings, and with realizations the Monte Carlo over
 * the model's distributions (and the heat flow's standard deviation). Used by the `geotherm` verb and by
 * POST /api/column; all physics is shared/thermal's (Turcotte & Schubert 2002 §4-6, §4-8).
 */
import { CAUTION } from '../caution.ts';
import { InputError } from '../errors.ts';
import { classifyFacies } from '../petrology/index.ts';
import type { Distribution } from '../random/distributions.ts';
import { ROCK_SOLIDUS } from '../petrology/solidus.ts';
import type { ColumnAnswer, ColumnLayer, MaybeUncertain, Uncertain } from '../schema/column.ts';
import { ROCK_KINDS, type ThermalModelInput } from '../schema/model.ts';
import {
  COLUMN_CONDUCTIVITY_UNDEFINED,
  COLUMN_FLOW_EXHAUSTED,
  STDERR_P50_METHOD,
  columnProfile,
  compileModel,
  describePorePressure,
  isUncertainModel,
  layerAt,
  limitedIsothermDepth,
  limitedTemperature,
  limitsToJson,
  monteCarloColumn,
  nominalModel,
  parsePorePressureMode,
  porePressureAt,
  sampleFlag,
  summaryToJson,
  type CompiledModel,
  type ThermalModel,
  type Summary,
} from '../thermal/index.ts';
import { VERSION } from '../version.ts';

export interface ColumnQuery {
  model: ThermalModelInput;
  /** Surface heat flow, mW/m² (default the model's surfaceHeatFlowMWm2). */
  heatFlowMWm2?: number;
  /** Standard deviation of the surface heat flow, mW/m² (e.g. the kriging sd at the point). */
  heatFlowSdMWm2?: number;
  /** Surface temperature, °C (default the model's). */
  surfaceTemperatureC?: number;
  isothermsC: number[];
  depthsKm: number[];
  maxDepthKm: number;
  stepKm: number;
  /** Monte Carlo realizations (0 = none). */
  realizations: number;
  seed: number;
  /** Also summarise temperature at every profile depth (the inspector's P10–P90 band). */
  profileBand?: boolean;
  /** `hydrostatic` (default) or `lambda:λ` (pore pressure = λ × lithostatic). */
  porePressure?: string;
  /** Pore-fluid density for hydrostatic pressure, kg/m³ (default 1000). */
  fluidDensityKgM3?: number;
}

const r6 = (v: number) => Math.round(v * 1e6) / 1e6;
const num = (v: number): number | null => (Number.isFinite(v) ? r6(v) : null);
const uncertain = (s: Summary): Uncertain => {
  const j = summaryToJson(s);
  return {
    p10: num(j.p10 ?? NaN),
    p50: num(j.p50 ?? NaN),
    p90: num(j.p90 ?? NaN),
    mean: num(j.mean ?? NaN),
    sd: num(j.sd ?? NaN),
    stderrP50: num(j.stderrP50 ?? NaN),
  };
};
const layerLabel = (model: ThermalModelInput, i: number) => (model.layers[i]?.name !== undefined ? `layers[${i}] (${model.layers[i].name})` : `layers[${i}]`);

/** The surface heat flow of the query (else the model's), mW/m²; InputError `missing_heat_flow` unless > 0. */
function surfaceHeatFlowOf(q: ColumnQuery, nominal: ThermalModel): number {
  const q0 = q.heatFlowMWm2 ?? nominal.surfaceHeatFlowMWm2;
  if (q0 === undefined || !(q0 > 0)) {
    const problem = q0 === undefined ? 'missing: give heatFlowMWm2, or put surfaceHeatFlowMWm2 in the model' : `must be > 0 mW/m², got ${q0}`;
    throw new InputError(`no usable surface heat flow: ${problem}`, [{ field: 'heatFlowMWm2', problem }], 'missing_heat_flow');
  }
  return q0;
}

type Profile = ReturnType<typeof columnProfile>;

/** InputError `invalid_model` naming the layer where k(T) = k0/(1 + bT) became undefined in the profile. */
function refuseUndefinedConductivity(q: ColumnQuery, cm: CompiledModel, st: Profile['state']): void {
  if (!(st.status & COLUMN_CONDUCTIVITY_UNDEFINED)) return;
  const i = layerAt(cm, st.validToKm);
  const problem = `1 + b·T ≤ 0 within the modelled range (T = ${r6(st.tTopC[i])} °C at ${r6(st.validToKm)} km): k(T) = k0/(1 + bT) is undefined`;
  throw new InputError(
    `${layerLabel(q.model, i)}: ${problem}`,
    [{ feature: layerLabel(q.model, i), field: 'conductivityTempCoeffPerK', problem }],
    'invalid_model',
  );
}

/** The pore-pressure mode of the query; InputError `invalid_column` naming the field at fault. */
function poreModeOf(q: ColumnQuery): ReturnType<typeof parsePorePressureMode> {
  try {
    return parsePorePressureMode(q.porePressure, q.fluidDensityKgM3);
  } catch (e) {
    const field = q.porePressure === undefined ? 'fluidDensityKgM3' : 'porePressure';
    throw new InputError(`${field}: ${(e as Error).message}`, [{ field, problem: (e as Error).message }], 'invalid_column');
  }
}

/** One row of the answer per profile depth: temperature, heat flow, pressures, facies, regime and validity flag. */
function profileRows(prof: Profile, pore: ReturnType<typeof parsePorePressureMode>, cm: CompiledModel): ColumnAnswer['profile'] {
  return Array.from(prof.depthKm, (z, j) => {
    const t = prof.temperatureC[j],
      p = prof.pressureMPa[j];
    // Facies only where the column gives a temperature (the readout stops at the melt onset).
    const f = Number.isFinite(t) ? classifyFacies(t, p / 100) : null; // 1 kbar = 100 MPa
    const pp = porePressureAt(pore, z, p, cm.gravityMS2);
    return {
      depthKm: r6(z),
      temperatureC: num(t),
      heatFlowMWm2: num(prof.heatFlowMWm2[j]),
      pressureMPa: num(p),
      porePressureMPa: num(pp.porePressureMPa),
      poreFluidFactor: num(pp.poreFluidFactor),
      effectivePressureMPa: num(pp.effectivePressureMPa),
      facies: f?.facies ?? null,
      faciesApproximate: f?.approximate ?? false,
      regime: Number.isFinite(t) ? (prof.adiabatic[j] ? ('adiabat' as const) : ('conductive' as const)) : null,
      flag: sampleFlag(prof.limits, z),
    };
  });
}

/** Without Monte Carlo: the isotherms and depths asked for that lie below the end of the column (null in the answer). */
function columnEndWarnings(q: ColumnQuery, limits: Profile['limits'], isothermDepthsKm: Record<string, number | null>): string[] {
  if (q.realizations !== 0 || limits.endReason === null) return [];
  const warnings: string[] = [];
  const below = q.isothermsC.filter((t) => isothermDepthsKm[String(t)] === null);
  if (below.length > 0)
    warnings.push(`isotherms ${below.join(', ')} °C: not reached above ${r6(limits.validToKm)} km, where the column ends (${limits.endReason}); null`);
  const deep = q.depthsKm.filter((z) => z > limits.validToKm);
  if (deep.length > 0)
    warnings.push(`temperatures at ${deep.join(', ')} km: below ${r6(limits.validToKm)} km, where the column ends (${limits.endReason}); null`);
  return warnings;
}

/**
 * Computes the column answer. Throws InputError `missing_heat_flow` when neither the query nor the model gives a
 * surface heat flow > 0, and `invalid_model` when k(T) = k0/(1 + bT) becomes undefined within maxDepthKm.
 */
export function computeColumn(q: ColumnQuery): ColumnAnswer {
  const nominal = nominalModel(q.model);
  if (q.surfaceTemperatureC !== undefined) nominal.surfaceTemperatureC = q.surfaceTemperatureC;
  const q0 = surfaceHeatFlowOf(q, nominal);
  const cm = compileModel(nominal, { maxDepthKm: q.maxDepthKm });
  const prof = columnProfile(cm, { heatFlowMWm2: q0, stepKm: q.stepKm, maxDepthKm: q.maxDepthKm });
  const st = prof.state;
  refuseUndefinedConductivity(q, cm, st);
  const limits = prof.limits;
  const pore = poreModeOf(q);
  const poreInfo = describePorePressure(pore);
  const profile = profileRows(prof, pore, cm);
  const warnings = [...prof.warnings];
  if (poreInfo.warning !== null) warnings.push(poreInfo.warning);
  const isothermDepthsKm = Object.fromEntries(q.isothermsC.map((t) => [String(t), num(limitedIsothermDepth(cm, st, limits, t, q.maxDepthKm))]));
  warnings.push(...columnEndWarnings(q, limits, isothermDepthsKm));
  const out: ColumnAnswer = {
    surfaceHeatFlowMWm2: r6(q0),
    heatFlowSdMWm2: q.heatFlowSdMWm2 === undefined ? null : num(q.heatFlowSdMWm2),
    surfaceTemperatureC: cm.surfaceTemperatureC,
    isothermDepthsKm,
    temperatureAtDepthsC: Object.fromEntries(q.depthsKm.map((z) => [String(z), num(limitedTemperature(cm, st, limits, z))])),
    profile,
    layers: columnLayers(cm),
    basalHeatFlowMWm2: num(prof.basalHeatFlowMWm2),
    reducedHeatFlowMWm2: num(prof.reducedHeatFlowMWm2),
    reducedHeatFlowMethod: reducedMethod(cm),
    reducedHeatFlowLayer: cm.reducedHeatFlowLayer >= 0 ? cm.names[cm.reducedHeatFlowLayer] : null,
    solidusCrossingKm: { wetSolidus: num(limits.wetSolidusKm), meltOnset: num(limits.meltOnsetKm) },
    ...(limitsToJson(cm, limits) as LimitFields),
    porePressure: { mode: pore.kind === 'hydrostatic' ? 'hydrostatic' : `lambda:${pore.lambda}`, method: poreInfo.method },
    inconsistent: (st.status & COLUMN_FLOW_EXHAUSTED) !== 0 || limits.endReason !== null,
    monteCarlo: null,
    warnings,
    caution: CAUTION,
    version: VERSION,
  };
  if (q.realizations > 0)
    addMonteCarlo(
      out,
      q,
      q0,
      profile.map((p) => p.depthKm),
    );
  return out;
}

/** The layers of a compiled model with their rock kinds and solidus curves (the last one reaches the column's bottom). */
function columnLayers(cm: CompiledModel): ColumnLayer[] {
  return cm.names.map((name, i) => {
    const rock = ROCK_KINDS[cm.rock[i]];
    const pair = ROCK_SOLIDUS[rock];
    return { name, topKm: r6(cm.topKm[i]), bottomKm: r6(cm.bottomKm[i]), rock, wetSolidus: pair.wet.id, drySolidus: pair.dry.id };
  });
}

/** The answer's fields that describe where the conductive column ends (from `limitsToJson`). */
type LimitFields = Pick<
  ColumnAnswer,
  | 'meltOnsetKm'
  | 'meltOnset'
  | 'wetSolidusKm'
  | 'wetSolidus'
  | 'lithosphereBaseKm'
  | 'mantlePotentialTemperatureC'
  | 'adiabatAboveDrySolidusToKm'
  | 'decompressionMelting'
  | 'validToKm'
  | 'invalidBelow'
>;

/** Replaces the uncertain numbers of `out` by their summaries over q.realizations realizations. */
function addMonteCarlo(out: ColumnAnswer, q: ColumnQuery, q0: number, profileDepthsKm: number[]): void {
  const sd = q.heatFlowSdMWm2 ?? 0;
  const heat: number | Distribution | undefined = sd > 0 ? { dist: 'normal', mean: q0, sd } : q.heatFlowMWm2;
  const band = q.profileBand === true ? profileDepthsKm : [];
  const mc = monteCarloColumn(q.model, {
    realizations: q.realizations,
    seed: q.seed,
    isothermsC: q.isothermsC,
    depthsKm: [...q.depthsKm, ...band],
    maxDepthKm: q.maxDepthKm,
    heatFlowMWm2: heat,
    surfaceTemperatureC: q.surfaceTemperatureC,
    stepKm: Math.min(q.stepKm, 0.1),
  });
  const keyed = (keys: number[], s: Summary[]): Record<string, MaybeUncertain> => Object.fromEntries(keys.map((k, i) => [String(k), uncertain(s[i])]));
  out.isothermDepthsKm = keyed(q.isothermsC, mc.isothermDepthsKm);
  out.temperatureAtDepthsC = keyed(q.depthsKm, mc.temperatureAtDepthsC);
  out.basalHeatFlowMWm2 = uncertain(mc.basalHeatFlowMWm2);
  out.reducedHeatFlowMWm2 = uncertain(mc.reducedHeatFlowMWm2);
  const sc = mc.solidusCrossingKm!;
  out.solidusCrossingKm = { wetSolidus: uncertain(sc.wetSolidus), meltOnset: uncertain(sc.meltOnset), lithosphereBase: uncertain(sc.lithosphereBase) };
  out.monteCarlo = {
    realizations: q.realizations,
    seed: q.seed,
    heatFlow:
      sd > 0
        ? `normal(mean ${r6(q0)}, sd ${r6(sd)}) mW/m², drawn after the model's parameters`
        : q.heatFlowMWm2 !== undefined
          ? 'fixed'
          : "the model's surfaceHeatFlowMWm2",
    rejected: mc.rejected,
    inconsistent: mc.inconsistent,
    stderrP50Method: STDERR_P50_METHOD,
    percentiles: 'Hyndman & Fan (1996) type 7; an isotherm not reached counts as deeper than any depth (null percentile)',
    isothermReachedFraction: Object.fromEntries(
      q.isothermsC.map((t, k) => [String(t), mc.isothermDepthsKm[k].n > 0 ? r6(mc.isothermDepthsKm[k].finite / mc.isothermDepthsKm[k].n) : null]),
    ),
    profileTemperatureC: q.profileBand === true ? mc.temperatureAtDepthsC.slice(q.depthsKm.length).map(uncertain) : null,
  };
  const w = out.warnings;
  if (!isUncertainModel(q.model) && !(sd > 0)) w.push('the model has no distributions and the heat flow no standard deviation: every realization is the same');
  w.push('the profile is the nominal model (distribution means/modes); percentiles come from the realizations');
  if (mc.rejected > 0)
    w.push(`${mc.rejected} of ${q.realizations} realizations had physically impossible draws and were left out (first: ${mc.firstRejection})`);
  if (mc.inconsistent > 0)
    w.push(
      `${mc.inconsistent} of ${q.realizations} realizations had a column that is not valid throughout (melt onset, heat flow exhausted or k(T) undefined); values below that depth are left out, except that an isotherm hotter than the peak of a column whose heat flow runs out counts as not reached`,
    );
}

/** How the reduced heat flow was defined, in words. */
function reducedMethod(cm: CompiledModel): string {
  const i = cm.reducedHeatFlowLayer;
  if (i < 0) return 'not applicable: no layer is marked heatProducingUpperCrust';
  const above = i > 0 ? ' minus the heat produced above it' : '';
  return cm.reducedHeatFlowMethod === 'exponential'
    ? `q0 − A0·D of ${cm.names[i]} (exponential; Birch/Lachenbruch q0 = qr + D·A0)${above}`
    : `flow below ${cm.names[i]} (constant heat production): q0 − ∫A dz to its base`;
}
