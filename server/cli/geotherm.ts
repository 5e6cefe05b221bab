/**
 * `subtherm geotherm`: a steady-state conductive geotherm for one column of a thermal model (DESIGN.md §4), with
 * isotherm depths, temperatures at depths, a sampled profile (temperature, heat flow, lithostatic pressure, facies),
 * reduced and basal heat flow, solidus crossings, and optionally a Monte Carlo over the model's distributions.
 */
import { readFile } from 'node:fs/promises';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';
import { classifyFacies } from '../../shared/petrology/index.ts';
import {
  COLUMN_CONDUCTIVITY_UNDEFINED,
  COLUMN_FLOW_EXHAUSTED,
  STDERR_P50_METHOD,
  columnProfile,
  compileModel,
  isUncertainModel,
  layerAt,
  monteCarloColumn,
  nominalModel,
  describePorePressure,
  limitedIsothermDepth,
  limitedTemperature,
  limitsToJson,
  parsePorePressureMode,
  porePressureAt,
  sampleFlag,
  summaryToJson,
  type CompiledModel,
} from '../../shared/thermal/index.ts';
import { VERSION } from '../../shared/version.ts';
import { numberListOption, numberOption, parseVerbArgs } from './args.ts';

const HELP = `subtherm geotherm --model M.json [options] [--json]

Steady-state conductive geotherm of one column (screening estimate).
  --model FILE            thermal model JSON (required)
  --heat-flow Q           surface heat flow, mW/m² (default: the model's surfaceHeatFlowMWm2)
  --isotherms LIST        isotherm temperatures, °C (default 300,500)
  --depths-km LIST        depths for temperature, km (default 5,10)
  --max-depth-km Z        deepest depth, km (default 60; the last layer is extended to it)
  --step-km S             profile spacing, km (default 0.1)
  --surface-temp-c T      surface temperature, °C (overrides the model)
  --realizations N        Monte Carlo realizations over the model's distributions
  --seed S                seed of the Monte Carlo (integer, default 1)
  --pore-pressure MODE    hydrostatic (default) or lambda:λ (pore pressure = λ × lithostatic, e.g. lambda:0.7)
  --fluid-density-kg-m3 R pore-fluid density for hydrostatic pressure, kg/m³ (default 1000)

Each layer's rock (sediment, felsic-crust (default), mafic-crust, mantle) chooses its solidus curves: reaching the
water-saturated one is a warning; reaching the fluid-absent/dry one is the melt onset, below which no temperature is
given. In mantle layers the temperature follows the conductive geotherm down to the mantle adiabat
(mantlePotentialTemperatureC, default 1330 °C) and the adiabat below.
  --json                  print one JSON object
`;

const r6 = (v: number) => Math.round(v * 1e6) / 1e6;
const num = (v: number): number | null => (Number.isFinite(v) ? r6(v) : null);
const key = (v: number) => String(v);
/** A summary for JSON, rounded to 1e-6 like the deterministic values. */
const sj = (s: Parameters<typeof summaryToJson>[0]) => Object.fromEntries(Object.entries(summaryToJson(s)).map(([k, x]) => [k, x === null ? null : r6(x)]));

async function readModel(path: string): Promise<ThermalModelInput> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read model file ${path}: ${(e as Error).message}`, [{ field: 'model', problem: `file ${path} cannot be read` }], 'bad_file');
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(`${path}: not valid JSON: ${(e as Error).message}`, [{ field: 'model', problem: 'not valid JSON' }], 'bad_file');
  }
  return parseThermalModel(raw, path);
}

function layerLabel(model: ThermalModelInput, i: number): string {
  const n = model.layers[i]?.name;
  return n !== undefined ? `layers[${i}] (${n})` : `layers[${i}]`;
}

export async function geotherm(argv: string[]): Promise<number> {
  const { values: v } = parseVerbArgs('geotherm', argv, {
    model: { type: 'string' },
    'heat-flow': { type: 'string' },
    isotherms: { type: 'string' },
    'depths-km': { type: 'string' },
    'max-depth-km': { type: 'string' },
    'step-km': { type: 'string' },
    'surface-temp-c': { type: 'string' },
    realizations: { type: 'string' },
    seed: { type: 'string' },
    'pore-pressure': { type: 'string' },
    'fluid-density-kg-m3': { type: 'string' },
  });
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (v.model === undefined) throw new InputError('--model is required', [{ field: 'model', problem: 'missing: give --model M.json' }], 'bad_option');
  const isotherms = numberListOption('isotherms', v.isotherms as string | undefined, [300, 500]);
  const depthsKm = numberListOption('depths-km', v['depths-km'] as string | undefined, [5, 10]);
  const maxDepthKm = numberOption('max-depth-km', v['max-depth-km'] as string | undefined, 60);
  const stepKm = numberOption('step-km', v['step-km'] as string | undefined, 0.1);
  const bad = (field: string, problem: string) => new InputError(`--${field}: ${problem}`, [{ field, problem }], 'bad_option');
  if (!(maxDepthKm > 0)) throw bad('max-depth-km', `must be > 0, got ${maxDepthKm}`);
  if (!(stepKm > 0)) throw bad('step-km', `must be > 0, got ${stepKm}`);
  if (maxDepthKm / stepKm > 1e6) throw bad('step-km', 'more than 1,000,000 profile samples: use a larger step');
  for (const d of depthsKm) if (!(d >= 0)) throw bad('depths-km', `depths must be ≥ 0, got ${d}`);
  const surfaceT = v['surface-temp-c'] === undefined ? undefined : numberOption('surface-temp-c', v['surface-temp-c'] as string);
  const heatFlowOpt = v['heat-flow'] === undefined ? undefined : numberOption('heat-flow', v['heat-flow'] as string);
  if (heatFlowOpt !== undefined && !(heatFlowOpt > 0)) throw bad('heat-flow', `must be > 0 mW/m², got ${heatFlowOpt}`);
  const realizations = v.realizations === undefined ? undefined : numberOption('realizations', v.realizations as string);
  if (realizations !== undefined && !(Number.isInteger(realizations) && realizations >= 1 && realizations <= 1_000_000)) throw bad('realizations', `must be an integer from 1 to 1000000, got ${realizations}`);
  const seed = numberOption('seed', v.seed as string | undefined, 1);
  if (!Number.isSafeInteger(seed)) throw bad('seed', `must be an integer, got ${seed}`);

  const fluidDensity = numberOption('fluid-density-kg-m3', v['fluid-density-kg-m3'] as string | undefined, 1000);
  let pore;
  try {
    pore = parsePorePressureMode(v['pore-pressure'] as string | undefined, fluidDensity);
  } catch (e) {
    throw bad(v['pore-pressure'] === undefined ? 'fluid-density-kg-m3' : 'pore-pressure', (e as Error).message);
  }

  const model = await readModel(v.model as string);
  const nominal = nominalModel(model);
  if (surfaceT !== undefined) nominal.surfaceTemperatureC = surfaceT;
  const q0 = heatFlowOpt ?? nominal.surfaceHeatFlowMWm2;
  if (q0 === undefined) throw new InputError(`${v.model}: no surface heat flow`, [{ feature: 'model', field: 'surfaceHeatFlowMWm2', problem: 'missing: put it in the model or give --heat-flow' }], 'invalid_model');
  if (!(q0 > 0)) throw new InputError(`${v.model}: surface heat flow must be > 0`, [{ feature: 'model', field: 'surfaceHeatFlowMWm2', problem: `must be > 0 mW/m², got ${q0}` }], 'invalid_model');

  const cm: CompiledModel = compileModel(nominal, { maxDepthKm });
  const prof = columnProfile(cm, { heatFlowMWm2: q0, stepKm, maxDepthKm });
  const st = prof.state;
  if (st.status & COLUMN_CONDUCTIVITY_UNDEFINED) {
    const i = layerAt(cm, st.validToKm);
    throw new InputError(
      `${v.model}: ${layerLabel(model, i)}: 1 + b·T ≤ 0 at ${r6(st.validToKm)} km (T = ${r6(st.tTopC[i])} °C): k(T) = k0/(1 + bT) is undefined`,
      [{ feature: layerLabel(model, i), field: 'conductivityTempCoeffPerK', problem: `1 + b·T ≤ 0 within the modelled range (T = ${r6(st.tTopC[i])} °C at ${r6(st.validToKm)} km)` }],
      'invalid_model',
    );
  }
  const warnings = [...prof.warnings];
  const lim = prof.limits;
  const poreInfo = describePorePressure(pore);
  if (poreInfo.warning !== null) warnings.push(poreInfo.warning);

  // Key order of DESIGN.md §4 first; the Monte Carlo branch below replaces the values in place.
  const out: Record<string, unknown> = { isothermDepthsKm: null, temperatureAtDepthsC: null };
  if (realizations === undefined) {
    out.isothermDepthsKm = Object.fromEntries(isotherms.map((t) => [key(t), num(limitedIsothermDepth(cm, st, lim, t, maxDepthKm))]));
    out.temperatureAtDepthsC = Object.fromEntries(depthsKm.map((z) => [key(z), num(limitedTemperature(cm, st, lim, z))]));
    const below = isotherms.filter((t) => !(limitedIsothermDepth(cm, st, lim, t, maxDepthKm) >= 0) && lim.endReason !== null);
    if (below.length > 0) warnings.push(`isotherms ${below.join(', ')} °C: not reached above ${r6(lim.validToKm)} km, where the column ends (${lim.endReason}); null`);
    const deep = depthsKm.filter((z) => z > lim.validToKm);
    if (deep.length > 0) warnings.push(`temperatures at ${deep.join(', ')} km: below ${r6(lim.validToKm)} km, where the column ends (${lim.endReason}); null`);
  }
  out.profile = Array.from(prof.depthKm, (z, j) => {
    const t = prof.temperatureC[j], p = prof.pressureMPa[j];
    const f = Number.isFinite(t) ? classifyFacies(t, p / 100) : null;
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
      regime: Number.isFinite(t) ? (prof.adiabatic[j] ? 'adiabat' : 'conductive') : null,
      flag: sampleFlag(lim, z),
    };
  });
  out.basalHeatFlowMWm2 = num(prof.basalHeatFlowMWm2);
  out.reducedHeatFlowMWm2 = num(prof.reducedHeatFlowMWm2);
  out.reducedHeatFlowMethod = reducedMethod(cm);
  out.solidusCrossingKm = { wetSolidus: num(lim.wetSolidusKm), meltOnset: num(lim.meltOnsetKm) };
  Object.assign(out, limitsToJson(cm, lim));
  out.porePressure = { mode: pore.kind === 'hydrostatic' ? 'hydrostatic' : `lambda:${pore.lambda}`, method: poreInfo.method };
  out.surfaceHeatFlowMWm2 = q0;
  out.surfaceTemperatureC = cm.surfaceTemperatureC;
  // Not valid throughout: heat flow exhausted, k(T) undefined, or melt onset above the maximum depth.
  out.inconsistent = (st.status & COLUMN_FLOW_EXHAUSTED) !== 0 || lim.endReason !== null;

  if (realizations !== undefined) {
    if (!isUncertainModel(model)) warnings.push('the model has no distributions: every realization is the same');
    const mc = monteCarloColumn(model, {
      realizations,
      seed,
      isothermsC: isotherms,
      depthsKm,
      maxDepthKm,
      heatFlowMWm2: heatFlowOpt,
      surfaceTemperatureC: surfaceT,
      stepKm: Math.min(stepKm, 0.1),
    });
    out.isothermDepthsKm = Object.fromEntries(isotherms.map((t, k) => [key(t), sj(mc.isothermDepthsKm[k])]));
    out.temperatureAtDepthsC = Object.fromEntries(depthsKm.map((z, k) => [key(z), sj(mc.temperatureAtDepthsC[k])]));
    const sc = mc.solidusCrossingKm!;
    out.solidusCrossingKm = { wetSolidus: sj(sc.wetSolidus), meltOnset: sj(sc.meltOnset), lithosphereBase: sj(sc.lithosphereBase) };
    out.monteCarlo = {
      realizations,
      seed,
      rejected: mc.rejected,
      inconsistent: mc.inconsistent,
      stderrP50Method: STDERR_P50_METHOD,
      percentiles: 'Hyndman & Fan (1996) type 7; an isotherm not reached counts as deeper than any depth (null percentile)',
      basalHeatFlowMWm2: sj(mc.basalHeatFlowMWm2),
      reducedHeatFlowMWm2: sj(mc.reducedHeatFlowMWm2),
      isothermReachedFraction: Object.fromEntries(isotherms.map((t, k) => [key(t), mc.isothermDepthsKm[k].n > 0 ? mc.isothermDepthsKm[k].finite / mc.isothermDepthsKm[k].n : null])),
    };
    warnings.push('profile, basal and reduced heat flow are for the nominal model (distribution means/modes); percentiles come from the realizations');
    if (mc.rejected > 0) warnings.push(`${mc.rejected} of ${realizations} realizations had physically impossible draws and were left out (first: ${mc.firstRejection})`);
    if (mc.inconsistent > 0) warnings.push(`${mc.inconsistent} of ${realizations} realizations had a column that is not valid throughout (melt onset, heat flow exhausted or k(T) undefined); values below that depth are left out`);
  }
  out.warnings = warnings;
  out.caution = CAUTION;
  out.version = VERSION;

  if (v.json) {
    process.stdout.write(JSON.stringify(out) + '\n');
    return 0;
  }
  process.stdout.write(renderTable(out, isotherms, depthsKm, realizations !== undefined));
  return 0;
}

/** How the reduced heat flow was defined, in words. */
function reducedMethod(cm: CompiledModel): string {
  const i = cm.reducedHeatFlowLayer;
  if (i < 0) return 'not applicable: no layer is marked heatProducingUpperCrust';
  const above = i > 0 ? ' minus the heat produced above it' : '';
  return cm.reducedHeatFlowMethod === 'exponential' ? `q0 − A0·D of ${cm.names[i]} (exponential; Birch/Lachenbruch q0 = qr + D·A0)${above}` : `flow below ${cm.names[i]} (constant heat production): q0 − ∫A dz to its base`;
}

function fmt(v: unknown, digits = 2): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') return v.toFixed(digits);
  const s = v as { p10: number | null; p50: number | null; p90: number | null };
  return `P10 ${fmt(s.p10, digits)}  P50 ${fmt(s.p50, digits)}  P90 ${fmt(s.p90, digits)}`;
}

function renderTable(out: Record<string, unknown>, isotherms: number[], depthsKm: number[], mc: boolean): string {
  const lines: string[] = [];
  lines.push(`Geotherm (steady-state conduction)   q0 = ${fmt(out.surfaceHeatFlowMWm2)} mW/m²   T0 = ${fmt(out.surfaceTemperatureC)} °C`);
  lines.push(`Reduced heat flow ${fmt(out.reducedHeatFlowMWm2)} mW/m² (${String(out.reducedHeatFlowMethod)});  basal heat flow ${fmt(out.basalHeatFlowMWm2)} mW/m²`);
  const iso = out.isothermDepthsKm as Record<string, unknown>;
  const dep = out.temperatureAtDepthsC as Record<string, unknown>;
  lines.push('', mc ? 'Isotherm depth (km), Monte Carlo' : 'Isotherm     depth (km)');
  for (const t of isotherms) lines.push(`  ${(key(t) + ' °C').padEnd(10)} ${fmt(iso[key(t)], 3)}${iso[key(t)] === null ? '  (not reached)' : ''}`);
  lines.push('', mc ? 'Temperature at depth (°C), Monte Carlo' : 'Depth        temperature (°C)');
  for (const z of depthsKm) lines.push(`  ${(key(z) + ' km').padEnd(10)} ${fmt(dep[key(z)], 1)}`);
  const sc = out.solidusCrossingKm as Record<string, unknown>;
  lines.push('', `Water-saturated solidus reached (km): ${fmt(sc.wetSolidus, 2)};  melt onset (fluid-absent/dry solidus, km): ${fmt(sc.meltOnset, 2)}`);
  lines.push(`Lithosphere base (conductive geotherm meets the ${String(out.mantlePotentialTemperatureC)} °C mantle adiabat, km): ${fmt(out.lithosphereBaseKm, 2)}`);
  lines.push(`Pore pressure: ${(out.porePressure as { method: string }).method}`);
  lines.push('', '  depth (km)   T (°C)   q (mW/m²)   P (MPa)  Pf (MPa)      λ   Peff (MPa)   facies / flag');
  for (const r of out.profile as { depthKm: number; temperatureC: number | null; heatFlowMWm2: number | null; pressureMPa: number | null; porePressureMPa: number | null; poreFluidFactor: number | null; effectivePressureMPa: number | null; facies: string | null; flag: string | null }[]) {
    lines.push(
      `  ${r.depthKm.toFixed(2).padStart(9)}  ${fmt(r.temperatureC, 1).padStart(8)}  ${fmt(r.heatFlowMWm2, 2).padStart(10)}  ${fmt(r.pressureMPa, 1).padStart(8)}  ${fmt(r.porePressureMPa, 1).padStart(8)}  ${fmt(r.poreFluidFactor, 3).padStart(6)}  ${fmt(r.effectivePressureMPa, 1).padStart(10)}   ${r.flag ?? r.facies ?? '—'}`,
    );
  }
  const w = out.warnings as string[];
  if (w.length) lines.push('', 'Warnings:', ...w.map((s) => `  - ${s}`));
  lines.push('', String(out.caution), '');
  return lines.join('\n');
}
