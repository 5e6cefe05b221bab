/**
 * Monte Carlo over the thermal model's parameter distributions (DESIGN.md §3). Each realization r draws every
 * uncertain parameter once from its own stream createStream(seed, r), so results never depend on how the work is
 * split (workers, tiles, blocks). Summaries: P10/P50/P90 (Hyndman & Fan type 7), mean, sd and the standard error
 * of the P50 (see quantiles.ts). An isotherm (or solidus) not reached above the maximum depth counts as deeper than
 * any depth (+∞). So does an isotherm hotter than the peak of a column whose heat flow runs out above the maximum
 * depth ("heat flow exhausted"): where q reaches 0 the temperature has its maximum (dT/dz = q/k), so no depth reaches
 * a hotter isotherm; such realizations are counted (`exhaustedFraction`). A realization whose column is not valid
 * where the value is asked (k(T) undefined, below an exhausted column's peak for a temperature, a physically
 * impossible draw) is left out and counted.
 */
import { createStream, hashUniform, type RandomStream } from '../random/prng.ts';
import { drawFrom, type Distribution } from '../random/distributions.ts';
import type { ThermalModelInput } from '../schema/model.ts';
import { compileModel, type CompiledModel, type CompileOptions } from './compile.ts';
import {
  COLUMN_BAD_INPUT,
  COLUMN_CONDUCTIVITY_UNDEFINED,
  COLUMN_FLOW_EXHAUSTED,
  ColumnState,
  columnIsothermDepth,
  columnTemperature,
  solveColumn,
} from './column.ts';
import { summarizeSorted, type Summary } from './quantiles.ts';
import { realizationProblem, realizeModel } from './realize.ts';
import { columnLimits, dryAtTops, limitedIsothermDepth, limitedTemperature, limitsWhereReached, type ColumnLimits } from './limits.ts';

type Floats = Float32Array | Float64Array;

const emptySummary = (): Summary => ({ p10: NaN, p50: NaN, p90: NaN, mean: NaN, sd: NaN, stderrP50: NaN, n: 0, finite: 0 });

/**
 * The verdict on an isotherm tIso not found above zMax in a column valid to validToKm: +∞ (not reached) when the
 * column is valid down to zMax, or when its heat flow runs out above zMax and its peak temperature there (the
 * temperature at validToKm, where q = 0) is below tIso; NaN (invalid) otherwise.
 */
function notReached(cm: CompiledModel, st: ColumnState, validToKm: number, tIso: number, zMax: number): number {
  if (validToKm >= zMax) return Infinity;
  return st.status & COLUMN_FLOW_EXHAUSTED && validToKm === st.validToKm && columnTemperature(cm, st, validToKm) < tIso ? Infinity : NaN;
}

/** Value of one isotherm in one realization: depth, +∞ when not reached (see notReached), NaN when invalid. */
function isothermValue(cm: CompiledModel, st: ColumnState, tIso: number, zMax: number): number {
  if (st.status & (COLUMN_BAD_INPUT | COLUMN_CONDUCTIVITY_UNDEFINED)) return NaN;
  const z = columnIsothermDepth(cm, st, tIso, zMax);
  return z === z ? z : notReached(cm, st, st.validToKm, tIso, zMax);
}

/** Same under the melt and mantle limits (limits.ts): NaN past the melt onset or where k(T) is undefined. */
function limitedIsothermValue(cm: CompiledModel, st: ColumnState, lim: ColumnLimits, tIso: number, zMax: number): number {
  if (st.status & (COLUMN_BAD_INPUT | COLUMN_CONDUCTIVITY_UNDEFINED) && !(lim.validToKm >= zMax)) return NaN;
  const z = limitedIsothermDepth(cm, st, lim, tIso, zMax);
  if (z === z) return z;
  return lim.endReason === 'heat-flow-exhausted' || lim.validToKm >= zMax ? notReached(cm, st, lim.validToKm, tIso, zMax) : NaN;
}

/** Whether a solved column's heat flow runs out above zMax (km): its isotherms hotter than its peak count as not reached. */
export function flowExhaustedAbove(st: ColumnState, zMax: number): boolean {
  return (st.status & COLUMN_FLOW_EXHAUSTED) !== 0 && st.validToKm < zMax;
}

/**
 * Temperature (°C) at z (km) in one realization under the limits: below the melt onset the conductive column is
 * not valid and the rock is at least at its solidus there, so the value counts as hotter than any valid temperature
 * (+∞: a percentile falling there is null, as for an isotherm not reached); NaN below another end of validity.
 */
function limitedTemperatureValue(cm: CompiledModel, st: ColumnState, lim: ColumnLimits, z: number): number {
  if (lim.endReason === 'melt-onset' && z > lim.meltOnsetKm) return Infinity;
  return limitedTemperature(cm, st, lim, z);
}

/**
 * One realization's depth to the isotherm tIso (km) for a solved column, under the limits `lim` from
 * limitsWhereReached (null: they cannot act): +∞ when not reached in a valid column, NaN when invalid.
 */
export function isothermAnswer(cm: CompiledModel, st: ColumnState, lim: ColumnLimits | null, tIso: number, zMax: number): number {
  return lim === null ? isothermValue(cm, st, tIso, zMax) : limitedIsothermValue(cm, st, lim, tIso, zMax);
}

/** One realization's temperature at z (km) for a solved column under `lim` (see isothermAnswer): +∞ past the melt onset. */
export function temperatureAnswer(cm: CompiledModel, st: ColumnState, lim: ColumnLimits | null, z: number): number {
  return lim === null ? columnTemperature(cm, st, z) : limitedTemperatureValue(cm, st, lim, z);
}

function sortedSummary(values: Float64Array): Summary {
  const a = values.slice().sort(); // NaN sort last
  let n = a.length;
  while (n > 0 && a[n - 1] !== a[n - 1]) n--;
  return summarizeSorted(a, 0, n, emptySummary());
}

export interface ColumnMonteCarloOptions {
  realizations: number;
  seed: number;
  isothermsC: number[];
  depthsKm: number[];
  /** Isotherm and solidus searches stop here, km. */
  maxDepthKm: number;
  /** Overrides the model's surface heat flow (a number, or a distribution drawn after the model's parameters). */
  heatFlowMWm2?: number | Distribution;
  /** Overrides the model's surface temperature, °C. */
  surfaceTemperatureC?: number;
  /** Also summarise the wet-solidus crossing, the melt onset and the lithosphere base (default true). */
  solidus?: boolean;
  /** Scan step for the solidus crossings, km (default 0.1). */
  stepKm?: number;
  gravityMS2?: number;
}

export interface ColumnMonteCarloResult {
  realizations: number;
  /** Realizations with a physically impossible draw (k0 ≤ 0, …), left out of every summary. */
  rejected: number;
  /** Realizations whose column was flagged (heat flow exhausted, k(T) undefined, melt onset above the maximum depth). */
  inconsistent: number;
  isothermDepthsKm: Summary[];
  temperatureAtDepthsC: Summary[];
  basalHeatFlowMWm2: Summary;
  reducedHeatFlowMWm2: Summary;
  /** Rock-aware crossings (limits.ts): water-saturated solidus, melt onset (dry solidus), lithosphere base. */
  solidusCrossingKm: { wetSolidus: Summary; meltOnset: Summary; lithosphereBase: Summary } | null;
  /** First reason a realization was rejected, for the warning. */
  firstRejection: string | null;
}

/** Monte Carlo of one column: N realizations of the model, summarised per isotherm and per depth. */
export function monteCarloColumn(model: ThermalModelInput, o: ColumnMonteCarloOptions): ColumnMonteCarloResult {
  const N = o.realizations;
  if (!(Number.isInteger(N) && N >= 1)) throw new RangeError(`realizations must be a positive integer, got ${N}`);
  const nIso = o.isothermsC.length,
    nDep = o.depthsKm.length;
  const iso = o.isothermsC.map(() => new Float64Array(N));
  const dep = o.depthsKm.map(() => new Float64Array(N));
  const basal = new Float64Array(N),
    reduced = new Float64Array(N),
    wet = new Float64Array(N),
    dry = new Float64Array(N),
    lith = new Float64Array(N);
  const doSolidus = o.solidus ?? true;
  const copt: CompileOptions = { maxDepthKm: o.maxDepthKm, gravityMS2: o.gravityMS2 };
  let rejected = 0,
    inconsistent = 0;
  let firstRejection: string | null = null;
  let st: ColumnState | null = null;
  const rng: RandomStream = createStream(o.seed, 0);
  for (let r = 0; r < N; r++) {
    rng.reset(o.seed, r);
    const m = realizeModel(model, rng);
    const q0 = o.heatFlowMWm2 === undefined ? m.surfaceHeatFlowMWm2 : typeof o.heatFlowMWm2 === 'number' ? o.heatFlowMWm2 : drawFrom(rng, o.heatFlowMWm2);
    if (q0 === undefined) throw new RangeError('no surface heat flow: give heatFlowMWm2 or put surfaceHeatFlowMWm2 in the model');
    const problem = realizationProblem(m) ?? (q0 > 0 ? null : `surface heat flow ${q0} ≤ 0`);
    if (problem !== null) {
      rejected++;
      firstRejection ??= problem;
      for (let k = 0; k < nIso; k++) iso[k][r] = NaN;
      for (let k = 0; k < nDep; k++) dep[k][r] = NaN;
      basal[r] = reduced[r] = wet[r] = dry[r] = lith[r] = NaN;
      continue;
    }
    const cm = compileModel(m, copt);
    st ??= new ColumnState(cm.nLayers);
    solveColumn(cm, q0, o.surfaceTemperatureC ?? cm.surfaceTemperatureC, st);
    const maxZ = Math.max(o.maxDepthKm, ...o.depthsKm);
    const lim = columnLimits(cm, st, maxZ, o.stepKm ?? 0.1);
    if (lim.endReason !== null) inconsistent++;
    for (let k = 0; k < nIso; k++) iso[k][r] = limitedIsothermValue(cm, st, lim, o.isothermsC[k], o.maxDepthKm);
    for (let k = 0; k < nDep; k++) dep[k][r] = limitedTemperatureValue(cm, st, lim, o.depthsKm[k]);
    basal[r] = q0 - cm.totalHeatProductionMWm2;
    reduced[r] = q0 - cm.reducedHeatFlowOffsetMWm2;
    if (doSolidus) {
      // Not reached counts as deeper than any depth only where the column is valid that deep.
      const notReached = lim.validToKm >= o.maxDepthKm || lim.endReason === 'melt-onset' ? Infinity : NaN;
      wet[r] = lim.wetSolidusKm === lim.wetSolidusKm ? lim.wetSolidusKm : notReached;
      dry[r] = lim.meltOnsetKm === lim.meltOnsetKm ? lim.meltOnsetKm : notReached;
      lith[r] = lim.lithosphereBaseKm === lim.lithosphereBaseKm ? lim.lithosphereBaseKm : lim.validToKm >= o.maxDepthKm ? Infinity : NaN;
    }
  }
  return {
    realizations: N,
    rejected,
    inconsistent,
    isothermDepthsKm: iso.map(sortedSummary),
    temperatureAtDepthsC: dep.map(sortedSummary),
    basalHeatFlowMWm2: sortedSummary(basal),
    reducedHeatFlowMWm2: sortedSummary(reduced),
    solidusCrossingKm: doSolidus ? { wetSolidus: sortedSummary(wet), meltOnset: sortedSummary(dry), lithosphereBase: sortedSummary(lith) } : null,
    firstRejection,
  };
}

// ---------------------------------------------------------------------------------------------------------------
// Grid Monte Carlo

export interface GridMonteCarloSpec {
  /** One model (or one per zone) with distributions; its surfaceHeatFlowMWm2 is ignored (the grid gives q0). */
  models: ThermalModelInput[];
  /** Per-cell index into models (default all 0). */
  zones?: Uint8Array | Uint16Array | Uint32Array;
  /** Surface heat flow per cell, mW/m² (NaN = no data). */
  heatFlowMWm2: Floats;
  /** Standard deviation of each cell's heat flow, mW/m² (e.g. the kriging sd; default none). */
  heatFlowSdMWm2?: Floats;
  /** "full": one standard normal per realization for all cells (default, conservative); "independent": one per cell. */
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /**
   * Heat-flow realizations, realization-major (realization r, cell c at r·cells + c), mW/m², e.g. conditional
   * simulations: when given they replace q + sd·z (sd and the correlation are then unused); a cell whose
   * heatFlowMWm2 is NaN stays no data.
   */
  heatFlowRealizationsMWm2?: Float32Array;
  /** Per-cell surface temperature, °C (default each realization's model value). */
  surfaceTemperatureC?: Floats;
  isothermsC: number[];
  depthsKm: number[];
  maxDepthKm: number;
  realizations: number;
  seed: number;
  gravityMS2?: number;
}

/** Output buffers of one summarised quantity, indexed by absolute cell index; NaN = null. */
export interface GridSummaryBuffers {
  p10: Floats;
  p50: Floats;
  p90: Floats;
  mean?: Floats;
  sd?: Floats;
  stderrP50?: Floats;
  /** Fraction of the valid realizations in which the value was finite (an isotherm reached). */
  finiteFraction?: Floats;
}

export interface GridMonteCarloOutput {
  isotherms: GridSummaryBuffers[];
  temperatures: GridSummaryBuffers[];
  /** Fraction of realizations left out for the cell (invalid column or impossible draw). */
  invalidFraction?: Floats;
  /** Fraction of realizations whose column reaches the melt onset (the dry solidus of its rock) above the maximum depth. */
  meltFraction?: Floats;
  /** Fraction of realizations whose heat flow runs out above the maximum depth (isotherms above its peak: not reached). */
  exhaustedFraction?: Floats;
}

/** Realized, compiled models per realization (null = rejected draw) and the full-correlation normals. */
export interface PreparedGridMonteCarlo {
  spec: GridMonteCarloSpec;
  compiled: (CompiledModel | null)[][];
  /** dryAtTops of each compiled model (limits.ts), for the melt limit's fast path. */
  dryTop: (Float64Array | null)[][];
  fullNormal: Float64Array;
}

/**
 * Draws and compiles every realization's models once (cheap: realizations × zones small objects). Deterministic in
 * (spec, seed): each worker may call it for itself.
 */
export function prepareGridMonteCarlo(spec: GridMonteCarloSpec): PreparedGridMonteCarlo {
  const N = spec.realizations;
  if (!(Number.isInteger(N) && N >= 1)) throw new RangeError(`realizations must be a positive integer, got ${N}`);
  if (spec.models.length === 0) throw new RangeError('at least one model is needed');
  const compiled: (CompiledModel | null)[][] = [];
  const fullNormal = new Float64Array(N);
  const rng = createStream(spec.seed, 0);
  for (let r = 0; r < N; r++) {
    rng.reset(spec.seed, r);
    const row: (CompiledModel | null)[] = [];
    for (const m of spec.models) {
      const real = realizeModel(m, rng);
      delete real.surfaceHeatFlowMWm2; // the grid gives q0; the draw above keeps the stream order fixed
      row.push(realizationProblem(real) === null ? compileModel(real, { maxDepthKm: spec.maxDepthKm, gravityMS2: spec.gravityMS2 }) : null);
    }
    compiled.push(row);
    fullNormal[r] = rng.normal();
  }
  return { spec, compiled, dryTop: compiled.map((row) => row.map((cm) => (cm === null ? null : dryAtTops(cm)))), fullNormal };
}

/** Standard normal for (seed, realization, cell) from two keyed uniforms (Box–Muller); independent of tiling. */
export function cellNormal(seed: number, r: number, c: number): number {
  const u1 = hashUniform(seed, r, c, 1);
  const u2 = hashUniform(seed, r, c, 2);
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/**
 * Processes cells [start, end) of a grid Monte Carlo, writing summaries into `out` at the absolute cell indices.
 * Streaming: cells go in blocks of blockCells with one (N × blockCells) buffer per quantity, then each cell's N
 * values are gathered and sorted (exact percentiles; no N × cells array). Results are identical for any split of the range.
 */
export function monteCarloGridRange(prep: PreparedGridMonteCarlo, start: number, end: number, out: GridMonteCarloOutput, blockCells = 512): void {
  const spec = prep.spec;
  const N = spec.realizations;
  const q = spec.heatFlowMWm2,
    sdq = spec.heatFlowSdMWm2,
    zones = spec.zones,
    t0s = spec.surfaceTemperatureC;
  const independent = spec.heatFlowErrorCorrelation === 'independent';
  const sims = spec.heatFlowRealizationsMWm2,
    cells = q.length;
  if (sims !== undefined && sims.length !== N * cells) throw new RangeError(`heatFlowRealizationsMWm2 needs ${N} × ${cells} values, got ${sims.length}`);
  if (!(start >= 0 && end <= q.length && start <= end)) throw new RangeError(`bad cell range [${start}, ${end}) for ${q.length} cells`);
  const nIso = spec.isothermsC.length,
    nDep = spec.depthsKm.length,
    nQ = nIso + nDep;
  if (out.isotherms.length !== nIso || out.temperatures.length !== nDep) throw new RangeError('one output set per isotherm and per depth is needed');
  const B = Math.max(1, Math.min(blockCells, end - start));
  // Realization-major block buffers (r·B + cell): the inner loop over cells writes contiguously.
  const bufs = Array.from({ length: nQ }, () => new Float64Array(B * N));
  const scratch = new Float64Array(N);
  const invalid = new Uint32Array(B),
    melted = new Uint32Array(B),
    exhausted = new Uint32Array(B);
  const states = spec.models.map((m) => new ColumnState(m.layers.length));
  const isos = Float64Array.from(spec.isothermsC),
    deps = Float64Array.from(spec.depthsKm);
  const zMax = spec.maxDepthKm;
  const sum = emptySummary();
  const targets = [...out.isotherms, ...out.temperatures];
  let needT = -Infinity,
    needZ = 0;
  for (let k = 0; k < nIso; k++) needT = Math.max(needT, isos[k]);
  for (let k = 0; k < nDep; k++) needZ = Math.max(needZ, deps[k]);
  for (let b0 = start; b0 < end; b0 += B) {
    const b1 = Math.min(end, b0 + B);
    invalid.fill(0);
    melted.fill(0);
    exhausted.fill(0);
    for (let r = 0; r < N; r++) {
      const row = prep.compiled[r];
      const dryRow = prep.dryTop[r];
      const zr = prep.fullNormal[r];
      for (let c = b0; c < b1; c++) {
        const j = r * B + (c - b0);
        const zi = zones === undefined ? 0 : zones[c];
        const cm = row[zi];
        if (cm === undefined) throw new RangeError(`cell ${c}: zone ${zi} has no model`);
        let q0 = q[c];
        if (sims !== undefined) {
          if (q0 === q0) q0 = sims[r * cells + c];
        } else if (sdq !== undefined) {
          const s = sdq[c];
          if (s > 0) q0 += s * (independent ? cellNormal(spec.seed, r, c) : zr);
        }
        if (cm === null || !(q0 === q0)) {
          for (let k = 0; k < nQ; k++) bufs[k][j] = NaN;
          invalid[c - b0]++;
          continue;
        }
        const st = states[zi];
        solveColumn(cm, q0, t0s === undefined ? cm.surfaceTemperatureC : t0s[c], st, needT, needZ);
        // The melt and mantle limits where they can act (limits.ts), as in the column Monte Carlo.
        const lim = limitsWhereReached(cm, st, Math.max(zMax, needZ), dryRow[zi]!);
        if (st.status & (COLUMN_BAD_INPUT | COLUMN_CONDUCTIVITY_UNDEFINED)) invalid[c - b0]++;
        // Counted as exhausted only where the run-out, not a melt onset above it, ends the column (else left out).
        else if (flowExhaustedAbove(st, zMax) && (lim === null || lim.endReason === 'heat-flow-exhausted')) exhausted[c - b0]++;
        if (lim !== null && lim.endReason === 'melt-onset') melted[c - b0]++;
        for (let k = 0; k < nIso; k++) bufs[k][j] = isothermAnswer(cm, st, lim, isos[k], zMax);
        for (let k = 0; k < nDep; k++) bufs[nIso + k][j] = temperatureAnswer(cm, st, lim, deps[k]);
      }
    }
    for (let c = b0; c < b1; c++) {
      for (let k = 0; k < nQ; k++) summarizeCell(bufs[k], N, B, c - b0, scratch, sum, targets[k], c);
      if (out.invalidFraction) out.invalidFraction[c] = invalid[c - b0] / N;
      if (out.meltFraction) out.meltFraction[c] = melted[c - b0] / N;
      if (out.exhaustedFraction) out.exhaustedFraction[c] = exhausted[c - b0] / N;
    }
  }
}

/**
 * Summarizes one cell of a block: its N values (realization-major block buffer `buf`, stride B, offset `off`) are
 * gathered into `scratch`, sorted (NaN last, +∞ before it), the NaNs (invalid realizations) dropped, and the summary
 * (quantiles.ts) written into `t` at cell c.
 */
function summarizeCell(buf: Float64Array, N: number, B: number, off: number, scratch: Float64Array, sum: Summary, t: GridSummaryBuffers, c: number): void {
  for (let r = 0; r < N; r++) scratch[r] = buf[r * B + off];
  scratch.sort();
  let n = N;
  while (n > 0 && scratch[n - 1] !== scratch[n - 1]) n--;
  summarizeSorted(scratch, 0, n, sum);
  t.p10[c] = sum.p10;
  t.p50[c] = sum.p50;
  t.p90[c] = sum.p90;
  if (t.mean) t.mean[c] = sum.mean;
  if (t.sd) t.sd[c] = sum.sd;
  if (t.stderrP50) t.stderrP50[c] = sum.stderrP50;
  if (t.finiteFraction) t.finiteFraction[c] = n > 0 ? sum.finite / n : NaN;
}

/** Allocates Float32 output buffers for a whole grid (p10/p50/p90/mean/sd/stderrP50/finiteFraction). */
export function allocateGridMonteCarloOutput(cells: number, nIso: number, nDep: number, shared = false): GridMonteCarloOutput {
  const f = () => (shared ? new Float32Array(new SharedArrayBuffer(cells * 4)) : new Float32Array(cells)).fill(NaN);
  const set = (): GridSummaryBuffers => ({ p10: f(), p50: f(), p90: f(), mean: f(), sd: f(), stderrP50: f(), finiteFraction: f() });
  const temperatures = Array.from({ length: nDep }, set);
  return { isotherms: Array.from({ length: nIso }, set), temperatures, invalidFraction: f(), meltFraction: f(), exhaustedFraction: f() };
}
