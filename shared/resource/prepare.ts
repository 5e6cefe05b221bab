/**
 * Preparing a heat-in-place Monte Carlo (monte-carlo.ts): the nominal models and parameters, the heat-flow range
 * every realization's table must cover, and per realization r, from its own stream createStream(seed, r), in this
 * fixed order: every model's distributions (realizeModel, as the thermal engine draws them), one standard normal
 * for fully correlated heat-flow errors, then ρC, the recovery factor, the utilization efficiency and the conversion
 * efficiency (a number draws nothing); then its compiled models and heat-flow tables (heat-table.ts).
 */
import { createStream } from '../random/prng.ts';
import { drawFrom, nominalValue } from '../random/distributions.ts';
import type { UncertainNumber } from '../schema/model.ts';
import { compileModel, type CompiledModel } from '../thermal/compile.ts';
import { ColumnState } from '../thermal/column.ts';
import { nominalModel, realizationProblem, realizeModel } from '../thermal/realize.ts';
import { ColumnHeatScratch, checkWindow } from './column-heat.ts';
import { JULIAN_YEAR_S } from './exergy.ts';
import { buildHeatTable, type HeatTable } from './heat-table.ts';
import {
  SUM_BLOCK,
  TABLE_SD_SPAN,
  parameterProblem,
  type PreparedResource,
  type RealizationParameters,
  type ResourceParameters,
  type ResourceSpec,
} from './resource-spec.ts';

const opt = (v: UncertainNumber | undefined, rng: ReturnType<typeof createStream>): number =>
  v === undefined ? NaN : typeof v === 'number' ? v : drawFrom(rng, v);
const nom = (v: UncertainNumber | undefined): number => (v === undefined ? NaN : typeof v === 'number' ? v : nominalValue(v));

/** Checks the spec's sizes and numbers (RangeError naming the value). */
function checkSpec(spec: ResourceSpec): void {
  checkWindow(spec.window);
  const N = spec.realizations;
  if (!(Number.isInteger(N) && N >= 0)) throw new RangeError(`realizations must be an integer ≥ 0, got ${N}`);
  if (spec.models.length === 0) throw new RangeError('at least one model is needed');
  const cells = spec.heatFlowMWm2.length;
  if (!(Number.isInteger(spec.width) && spec.width > 0 && cells % spec.width === 0))
    throw new RangeError(`grid width ${spec.width} does not divide ${cells} cells`);
  if (spec.rowAreaM2.length !== cells / spec.width) throw new RangeError(`rowAreaM2 needs ${cells / spec.width} rows, got ${spec.rowAreaM2.length}`);
  for (const b of [spec.heatFlowSdMWm2, spec.polygonMask, spec.zoneLabels, spec.modelZones, spec.cellAreaM2])
    if (b !== undefined && b.length !== cells) throw new RangeError(`per-cell arrays need ${cells} values, got ${b.length}`);
  if (!(spec.parameters.lifeYears > 0)) throw new RangeError(`lifeYears must be > 0, got ${spec.parameters.lifeYears}`);
  const sims = spec.heatFlowRealizationsMWm2;
  if (sims !== undefined && sims.length !== N * cells) throw new RangeError(`heatFlowRealizationsMWm2 needs ${N} × ${cells} values, got ${sims.length}`);
}

/** The nominal run: each model with its distributions at their central values, compiled; the nominal parameters. */
function nominalOf(spec: ResourceSpec): PreparedResource['nominal'] {
  const P = spec.parameters;
  const nominal = {
    models: spec.models.map((m) => {
      const nm = nominalModel(m);
      delete nm.surfaceHeatFlowMWm2;
      const problem = realizationProblem(nm);
      if (problem !== null) throw new RangeError(`the nominal model is impossible: ${problem}`);
      return compileModel(nm, { maxDepthKm: spec.window.bottomKm });
    }),
    rhoCMJm3K: nom(P.rhoCMJm3K),
    recoveryFactor: nom(P.recoveryFactor),
    utilizationEfficiency: nom(P.utilizationEfficiency),
    conversionEfficiency: nom(P.conversionEfficiency),
  };
  const hasConv = P.conversionEfficiency !== undefined;
  const np = parameterProblem(nominal.rhoCMJm3K, nominal.recoveryFactor, nominal.utilizationEfficiency, nominal.conversionEfficiency, hasConv);
  if (np !== null) throw new RangeError(`nominal parameters impossible: ${np}`);
  return nominal;
}

/** Heat-flow range every realization's table must cover (the whole grid's, so it never depends on the chunk). */
function tableRange(spec: ResourceSpec): { lo: number; hi: number } {
  const q = spec.heatFlowMWm2,
    sd = spec.heatFlowSdMWm2,
    sims = spec.heatFlowRealizationsMWm2;
  const N = spec.realizations,
    cells = q.length;
  let lo = Infinity,
    hi = -Infinity;
  for (let c = 0; c < cells; c++) {
    const v = q[c];
    if (!(v === v)) continue;
    let a = v,
      b = v;
    if (sims !== undefined) {
      for (let r = 0; r < N; r++) {
        const x = sims[r * cells + c];
        if (x < a) a = x;
        if (x > b) b = x;
      }
    } else {
      const s = sd === undefined ? 0 : sd[c] > 0 ? sd[c] : 0;
      a = v - TABLE_SD_SPAN * s;
      b = v + TABLE_SD_SPAN * s;
    }
    if (a < lo) lo = a;
    if (b > hi) hi = b;
  }
  if (!(hi >= lo)) {
    lo = 1;
    hi = 2; // no data at all: any valid range
  }
  lo = Math.max(lo, 1e-3);
  if (!(hi > lo * (1 + 1e-6))) {
    hi = Math.max(hi, lo) + 0.5;
    lo = Math.max(1e-3, lo - 0.5);
  }
  return { lo, hi };
}

interface Draws {
  params: RealizationParameters;
  compiled: (CompiledModel | null)[][];
  tables: (HeatTable | null)[][];
  rejected: number;
  firstRejection: string | null;
}

/** Every realization's draws (in the stream order of the file comment), compiled models and heat-flow tables. */
function drawRealizations(spec: ResourceSpec, lo: number, hi: number): Draws {
  const N = spec.realizations;
  const P: ResourceParameters = spec.parameters;
  const hasConv = P.conversionEfficiency !== undefined;
  const copt = { maxDepthKm: spec.window.bottomKm };
  const f64 = () => new Float64Array(N);
  const params: RealizationParameters = {
    rhoCMJm3K: f64(),
    recoveryFactor: f64(),
    utilizationEfficiency: f64(),
    conversionEfficiency: f64(),
    heatFlowNormal: f64(),
    accepted: new Uint8Array(N),
  };
  const d: Draws = { params, compiled: [], tables: [], rejected: 0, firstRejection: null };
  const rng = createStream(spec.seed, 0);
  const sc = new ColumnHeatScratch();
  const states = new Map<number, ColumnState>();
  const stateFor = (n: number) => {
    let s = states.get(n);
    if (s === undefined) states.set(n, (s = new ColumnState(n)));
    return s;
  };
  for (let r = 0; r < N; r++) {
    rng.reset(spec.seed, r);
    let problem: string | null = null;
    const reals = spec.models.map((m) => {
      const real = realizeModel(m, rng);
      delete real.surfaceHeatFlowMWm2; // the grid gives q0; the draw above keeps the stream order fixed
      problem ??= realizationProblem(real);
      return real;
    });
    params.heatFlowNormal[r] = rng.normal();
    const rhoC = (params.rhoCMJm3K[r] = opt(P.rhoCMJm3K, rng)),
      rg = (params.recoveryFactor[r] = opt(P.recoveryFactor, rng)),
      eta = (params.utilizationEfficiency[r] = opt(P.utilizationEfficiency, rng)),
      etaC = (params.conversionEfficiency[r] = opt(P.conversionEfficiency, rng));
    problem ??= parameterProblem(rhoC, rg, eta, etaC, hasConv);
    if (problem !== null) {
      d.rejected++;
      d.firstRejection ??= problem;
      d.compiled.push(spec.models.map(() => null));
      d.tables.push(spec.models.map(() => null));
      continue;
    }
    params.accepted[r] = 1;
    const cms = reals.map((m) => compileModel(m, copt));
    d.compiled.push(cms);
    d.tables.push(cms.map((cm) => buildHeatTable(cm, cm.surfaceTemperatureC, spec.window, lo, hi, stateFor(cm.nLayers), sc, { nodes: spec.tableNodes })));
  }
  return d;
}

/**
 * Draws and compiles every realization's models and parameters and builds their heat-flow tables. Deterministic in
 * the spec: each worker may call it for itself.
 */
export function prepareResource(spec: ResourceSpec): PreparedResource {
  checkSpec(spec);
  const nominal = nominalOf(spec);
  const { lo, hi } = tableRange(spec);
  const d = drawRealizations(spec, lo, hi);
  const cells = spec.heatFlowMWm2.length;
  const polygonSet = spec.polygonMask === undefined ? -1 : 1;
  const zoneSet0 = spec.zoneLabels === undefined ? -1 : 1 + (polygonSet > 0 ? 1 : 0);
  const zoneCount = spec.zoneLabels === undefined ? 0 : (spec.zoneCount ?? 0);
  if (spec.zoneLabels !== undefined && !(Number.isInteger(zoneCount) && zoneCount >= 1))
    throw new RangeError('zoneCount must be a positive integer with zoneLabels');
  return {
    spec,
    cells,
    sets: 1 + (polygonSet > 0 ? 1 : 0) + zoneCount,
    polygonSet,
    zoneSet0,
    blocks: Math.ceil(cells / SUM_BLOCK),
    nominal,
    compiled: d.compiled,
    tables: d.tables,
    params: d.params,
    rejected: d.rejected,
    firstRejection: d.firstRejection,
    qLo: lo,
    qHi: hi,
    lifeS: spec.parameters.lifeYears * JULIAN_YEAR_S,
  };
}
