/**
 * `subtherm geotherm`: a steady-state conductive geotherm for one column of a thermal model (DESIGN.md §4), with
 * isotherm depths, temperatures at depths, a sampled profile (temperature, heat flow, lithostatic pressure, facies),
 * reduced and basal heat flow, solidus crossings, and optionally a Monte Carlo over the model's distributions.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../../shared/errors.ts';
import { computeColumn } from '../../shared/products/column.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import type { ColumnAnswer } from '../../shared/schema/column.ts';
import { numberListOption, numberOption, parseVerbArgs, textOptions } from './args.ts';

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

async function readModelFile(path: string) {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read model file ${path}: ${(e as Error).message}`, [{ field: 'model', problem: `file ${path} cannot be read` }], 'bad_file');
  }
  return parseModelText(text, path);
}

export async function geotherm(argv: string[]): Promise<number> {
  const { values: v } = parseVerbArgs('geotherm', argv, {
    ...textOptions('model heat-flow isotherms depths-km max-depth-km step-km surface-temp-c realizations seed pore-pressure fluid-density-kg-m3'),
  });
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (v.model === undefined) throw new InputError('--model is required', [{ field: 'model', problem: 'missing: give --model M.json' }], 'bad_option');
  const isotherms = numberListOption('isotherms', v.isotherms, [300, 500]);
  const depthsKm = numberListOption('depths-km', v['depths-km'], [5, 10]);
  const maxDepthKm = numberOption('max-depth-km', v['max-depth-km'], 60);
  const stepKm = numberOption('step-km', v['step-km'], 0.1);
  const bad = (field: string, problem: string) => new InputError(`--${field}: ${problem}`, [{ field, problem }], 'bad_option');
  if (!(maxDepthKm > 0)) throw bad('max-depth-km', `must be > 0, got ${maxDepthKm}`);
  if (!(stepKm > 0)) throw bad('step-km', `must be > 0, got ${stepKm}`);
  if (maxDepthKm / stepKm > 1e6) throw bad('step-km', 'more than 1,000,000 profile samples: use a larger step');
  for (const d of depthsKm) if (!(d >= 0)) throw bad('depths-km', `depths must be ≥ 0, got ${d}`);
  const surfaceT = v['surface-temp-c'] === undefined ? undefined : numberOption('surface-temp-c', v['surface-temp-c']);
  const heatFlowOpt = v['heat-flow'] === undefined ? undefined : numberOption('heat-flow', v['heat-flow']);
  if (heatFlowOpt !== undefined && !(heatFlowOpt > 0)) throw bad('heat-flow', `must be > 0 mW/m², got ${heatFlowOpt}`);
  const realizations = v.realizations === undefined ? undefined : numberOption('realizations', v.realizations);
  if (realizations !== undefined && !(Number.isInteger(realizations) && realizations >= 1 && realizations <= 1_000_000))
    throw bad('realizations', `must be an integer from 1 to 1000000, got ${realizations}`);
  const seed = numberOption('seed', v.seed, 1);
  if (!Number.isSafeInteger(seed)) throw bad('seed', `must be an integer, got ${seed}`);
  const fluidDensityKgM3 = v['fluid-density-kg-m3'] === undefined ? undefined : numberOption('fluid-density-kg-m3', v['fluid-density-kg-m3']);

  const { model } = await readModelFile(v.model);
  const out = computeColumn({
    model,
    heatFlowMWm2: heatFlowOpt,
    surfaceTemperatureC: surfaceT,
    isothermsC: isotherms,
    depthsKm,
    maxDepthKm,
    stepKm,
    realizations: realizations ?? 0,
    seed,
    porePressure: v['pore-pressure'],
    fluidDensityKgM3,
  });
  process.stdout.write(v.json ? JSON.stringify(out) + '\n' : renderTable(out, isotherms, depthsKm));
  return 0;
}

function fmt(v: unknown, digits = 2): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') return v.toFixed(digits);
  const s = v as { p10: number | null; p50: number | null; p90: number | null };
  return `P10 ${fmt(s.p10, digits)}  P50 ${fmt(s.p50, digits)}  P90 ${fmt(s.p90, digits)}`;
}

const key = (v: number) => String(v);

function renderTable(out: ColumnAnswer, isotherms: number[], depthsKm: number[]): string {
  const mc = out.monteCarlo !== null;
  const lines: string[] = [];
  lines.push(`Geotherm (steady-state conduction)   q0 = ${fmt(out.surfaceHeatFlowMWm2)} mW/m²   T0 = ${fmt(out.surfaceTemperatureC)} °C`);
  lines.push(`Reduced heat flow ${fmt(out.reducedHeatFlowMWm2)} mW/m² (${out.reducedHeatFlowMethod});  basal heat flow ${fmt(out.basalHeatFlowMWm2)} mW/m²`);
  const iso = out.isothermDepthsKm;
  const dep = out.temperatureAtDepthsC;
  lines.push('', mc ? 'Isotherm depth (km), Monte Carlo' : 'Isotherm     depth (km)');
  for (const t of isotherms) lines.push(`  ${(key(t) + ' °C').padEnd(10)} ${fmt(iso[key(t)], 3)}${iso[key(t)] === null ? '  (not reached)' : ''}`);
  lines.push('', mc ? 'Temperature at depth (°C), Monte Carlo' : 'Depth        temperature (°C)');
  for (const z of depthsKm) lines.push(`  ${(key(z) + ' km').padEnd(10)} ${fmt(dep[key(z)], 1)}`);
  const sc = out.solidusCrossingKm;
  lines.push('', `Solidus (km): water-saturated reached at ${fmt(sc.wetSolidus, 2)};  melt onset ${fmt(sc.meltOnset, 2)} (no temperature below)`);
  lines.push('', '  depth (km)   T (°C)   q (mW/m²)   P (MPa)   facies');
  for (const r of out.profile) {
    lines.push(
      `  ${r.depthKm.toFixed(2).padStart(9)}  ${fmt(r.temperatureC, 1).padStart(8)}  ${fmt(r.heatFlowMWm2, 2).padStart(10)}  ${fmt(r.pressureMPa, 1).padStart(8)}   ${r.facies ?? '—'}`,
    );
  }
  const w = out.warnings;
  if (w.length) lines.push('', 'Warnings:', ...w.map((s) => `  - ${s}`));
  lines.push('', out.caution, '');
  return lines.join('\n');
}
