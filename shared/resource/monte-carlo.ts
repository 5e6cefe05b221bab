/**
 * Heat in place over a grid, deterministic (the nominal model and the kriged heat flow) and by Monte Carlo
 * (DESIGN.md §3): per realization r, from its own stream createStream(seed, r), in this fixed order: every model's
 * distributions (realizeModel, as the thermal engine draws them), one standard normal for fully correlated heat-flow
 * errors (the same one the thermal grid Monte Carlo draws), then ρC, the recovery factor, the utilization efficiency
 * and the conversion efficiency (a number draws nothing). Independent heat-flow errors use one keyed normal per
 * (realization, cell), the thermal engine's formula. So results never depend on how cells are split into chunks.
 *
 * Per realization and model zone the column integrals are tabulated over the heat-flow range (heat-table.ts); each
 * cell is one lookup. Totals are sums over cells of (integral × cell area) kept per realization; a total's
 * percentiles come from those per-realization sums, never from cell percentiles. Sums are accumulated per fixed
 * block of SUM_BLOCK cells (absolute cell index) and added in block order, so a total is bit-identical for any
 * chunking whose boundaries are multiples of SUM_BLOCK.
 */
import { createStream, hashUniform } from '../random/prng.ts';
import { drawFrom, nominalValue } from '../random/distributions.ts';
import type { ThermalModelInput, UncertainNumber } from '../schema/model.ts';
import { compileModel, type CompiledModel } from '../thermal/compile.ts';
import { ColumnState } from '../thermal/column.ts';
import { nominalModel, realizationProblem, realizeModel } from '../thermal/realize.ts';
import { ColumnHeatScratch, checkWindow, columnHeat, emptyColumnHeat, type HeatWindow } from './column-heat.ts';
import { JULIAN_YEAR_S } from './exergy.ts';
import { buildHeatTable, type HeatTable } from './heat-table.ts';
import { percentilesBySelection } from '../stats/quantile.ts';

const PCTS = [0.1, 0.5, 0.9];

type Floats = Float32Array | Float64Array;

/** Cells per summation block (chunk boundaries must be multiples of it). */
export const SUM_BLOCK = 512;
/** Quantities summed per (block, area set, realization): G·A (K·m³), X·A (K·m³), hot volume h·A (m³), hot area (m²). */
export const SUM_QUANTITIES = 4;
/** Heat-flow errors are drawn within ±this many standard deviations of the keyed normals (their largest |z| is 8.66). */
const TABLE_SD_SPAN = 8.7;

export interface ResourceParameters {
  /** Volumetric heat capacity of the rock, MJ/m³/K (default 2.7). */
  rhoCMJm3K: UncertainNumber;
  /** Recovery factor Rg, (0, 1] (default 0.1). */
  recoveryFactor: UncertainNumber;
  /** Utilization efficiency ηu of the available work, (0, 1] (default 0.4). */
  utilizationEfficiency: UncertainNumber;
  /** Overall conversion efficiency ηc of the thermal × conversion route, (0, 1]; absent = that route not computed. */
  conversionEfficiency?: UncertainNumber;
  /** Plant life, Julian years (default 30). */
  lifeYears: number;
}

export const DEFAULT_PARAMETERS: Readonly<ResourceParameters> = Object.freeze({
  rhoCMJm3K: 2.7,
  recoveryFactor: 0.1,
  utilizationEfficiency: 0.4,
  lifeYears: 30,
});

export interface ResourceSpec {
  /** One thermal model, or one per model zone (distributions allowed); surfaceHeatFlowMWm2 is ignored. */
  models: ThermalModelInput[];
  /** Per-cell index into models (default all 0). */
  modelZones?: Uint8Array | Uint16Array | Uint32Array;
  /** Surface heat flow per cell, mW/m² (NaN = no data: the cell is left out of everything). */
  heatFlowMWm2: Floats;
  /** Its standard deviation (e.g. the kriging sd), mW/m²; NaN or absent = 0. */
  heatFlowSdMWm2?: Floats;
  /** 'full' (default): one standard normal per realization for all cells; 'independent': one per cell. */
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /**
   * Heat-flow realizations, realization-major (realization r, cell c at r·cells + c), mW/m², e.g. conditional
   * simulations: when given they replace q + sd·z in realization r (sd and the correlation are then unused); a
   * cell whose heatFlowMWm2 is NaN stays no data. Totals are then sums over each simulated field.
   */
  heatFlowRealizationsMWm2?: Float32Array;
  /** Grid width (cells per row), to find a cell's row. */
  width: number;
  /** Area of one cell of each row, m² (length = grid height). */
  rowAreaM2: Float64Array;
  /** Per-cell ground areas, m² (projected grids, where areas vary along a row too); overrides rowAreaM2. */
  cellAreaM2?: Float64Array;
  /** Cells (1) inside the assessed polygon; its totals are area set 1. */
  polygonMask?: Uint8Array;
  /** Per-cell zone label 0 … zoneCount − 1 (−1 = none) of a class layer; its totals follow the polygon's. */
  zoneLabels?: Int32Array;
  zoneCount?: number;
  window: HeatWindow;
  parameters: ResourceParameters;
  /** Monte Carlo realizations (0 = the deterministic run only). */
  realizations: number;
  seed: number;
  /** Table nodes per realization and model zone (default 256). */
  tableNodes?: number;
}

export interface RealizationParameters {
  rhoCMJm3K: Float64Array;
  recoveryFactor: Float64Array;
  utilizationEfficiency: Float64Array;
  conversionEfficiency: Float64Array;
  heatFlowNormal: Float64Array;
  /** 1 = usable, 0 = rejected (a physically impossible draw). */
  accepted: Uint8Array;
}

export interface PreparedResource {
  spec: ResourceSpec;
  cells: number;
  /** Area sets: 0 the grid, then the polygon (when given), then one per zone. */
  sets: number;
  polygonSet: number;
  zoneSet0: number;
  blocks: number;
  /** Nominal models (compiled) and parameters. */
  nominal: { models: CompiledModel[]; rhoCMJm3K: number; recoveryFactor: number; utilizationEfficiency: number; conversionEfficiency: number };
  compiled: (CompiledModel | null)[][];
  tables: (HeatTable | null)[][];
  params: RealizationParameters;
  rejected: number;
  firstRejection: string | null;
  qLo: number;
  qHi: number;
  lifeS: number;
}

const opt = (v: UncertainNumber | undefined, rng: ReturnType<typeof createStream>): number =>
  v === undefined ? NaN : typeof v === 'number' ? v : drawFrom(rng, v);
const nom = (v: UncertainNumber | undefined): number => (v === undefined ? NaN : typeof v === 'number' ? v : nominalValue(v));

/** Why a set of resource parameters is impossible, or null. */
export function parameterProblem(rhoC: number, rg: number, eta: number, etaC: number, hasConversion: boolean): string | null {
  if (!(rhoC > 0)) return `rhoCMJm3K ${rhoC} ≤ 0`;
  if (!(rg > 0 && rg <= 1)) return `recoveryFactor ${rg} outside (0, 1]`;
  if (!(eta > 0 && eta <= 1)) return `utilizationEfficiency ${eta} outside (0, 1]`;
  if (hasConversion && !(etaC > 0 && etaC <= 1)) return `conversionEfficiency ${etaC} outside (0, 1]`;
  return null;
}

/**
 * Draws and compiles every realization's models and parameters and builds their heat-flow tables. Deterministic in
 * the spec: each worker may call it for itself.
 */
export function prepareResource(spec: ResourceSpec): PreparedResource {
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
  const w = spec.window;
  const maxDepthKm = w.bottomKm;
  const copt = { maxDepthKm };
  const hasConv = spec.parameters.conversionEfficiency !== undefined;
  const P = spec.parameters;
  const nominal = {
    models: spec.models.map((m) => {
      const nm = nominalModel(m);
      delete nm.surfaceHeatFlowMWm2;
      const problem = realizationProblem(nm);
      if (problem !== null) throw new RangeError(`the nominal model is impossible: ${problem}`);
      return compileModel(nm, copt);
    }),
    rhoCMJm3K: nom(P.rhoCMJm3K),
    recoveryFactor: nom(P.recoveryFactor),
    utilizationEfficiency: nom(P.utilizationEfficiency),
    conversionEfficiency: nom(P.conversionEfficiency),
  };
  const np = parameterProblem(nominal.rhoCMJm3K, nominal.recoveryFactor, nominal.utilizationEfficiency, nominal.conversionEfficiency, hasConv);
  if (np !== null) throw new RangeError(`nominal parameters impossible: ${np}`);

  // Heat-flow range every realization's table must cover (the whole grid's, so it never depends on the chunk).
  const q = spec.heatFlowMWm2,
    sd = spec.heatFlowSdMWm2,
    sims = spec.heatFlowRealizationsMWm2;
  if (sims !== undefined && sims.length !== N * cells) throw new RangeError(`heatFlowRealizationsMWm2 needs ${N} × ${cells} values, got ${sims.length}`);
  let lo = Infinity,
    hi = -Infinity;
  for (let c = 0; c < cells; c++) {
    const v = q[c];
    if (!(v === v)) continue;
    if (sims !== undefined) {
      let a = v,
        b = v;
      for (let r = 0; r < N; r++) {
        const x = sims[r * cells + c];
        if (x < a) a = x;
        if (x > b) b = x;
      }
      if (a < lo) lo = a;
      if (b > hi) hi = b;
      continue;
    }
    const s = sd === undefined ? 0 : sd[c] > 0 ? sd[c] : 0;
    const a = v - TABLE_SD_SPAN * s,
      b = v + TABLE_SD_SPAN * s;
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

  const params: RealizationParameters = {
    rhoCMJm3K: new Float64Array(N),
    recoveryFactor: new Float64Array(N),
    utilizationEfficiency: new Float64Array(N),
    conversionEfficiency: new Float64Array(N),
    heatFlowNormal: new Float64Array(N),
    accepted: new Uint8Array(N),
  };
  const compiled: (CompiledModel | null)[][] = [];
  const tables: (HeatTable | null)[][] = [];
  let rejected = 0;
  let firstRejection: string | null = null;
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
    const rhoC = opt(P.rhoCMJm3K, rng),
      rg = opt(P.recoveryFactor, rng),
      eta = opt(P.utilizationEfficiency, rng),
      etaC = opt(P.conversionEfficiency, rng);
    params.rhoCMJm3K[r] = rhoC;
    params.recoveryFactor[r] = rg;
    params.utilizationEfficiency[r] = eta;
    params.conversionEfficiency[r] = etaC;
    problem ??= parameterProblem(rhoC, rg, eta, etaC, hasConv);
    if (problem !== null) {
      rejected++;
      firstRejection ??= problem;
      compiled.push(spec.models.map(() => null));
      tables.push(spec.models.map(() => null));
      continue;
    }
    params.accepted[r] = 1;
    const cms = reals.map((m) => compileModel(m, copt));
    compiled.push(cms);
    tables.push(cms.map((cm) => buildHeatTable(cm, cm.surfaceTemperatureC, w, lo, hi, stateFor(cm.nLayers), sc, { nodes: spec.tableNodes })));
  }
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
    compiled,
    tables,
    params,
    rejected,
    firstRejection,
    qLo: lo,
    qHi: hi,
    lifeS: spec.parameters.lifeYears * JULIAN_YEAR_S,
  };
}

/** First zone set index, or the set count when there are no zones. */
function zone0Of(prep: PreparedResource): number {
  return prep.zoneSet0 < 0 ? prep.sets : prep.zoneSet0;
}

/** Per-cell percentile buffers of one density quantity (NaN = no data). */
export interface CellSummaryBuffers {
  p10: Float32Array;
  p50: Float32Array;
  p90: Float32Array;
  mean: Float32Array;
}

export interface ResourceOutput {
  /** Nominal heat in place per area, PJ/km², and nominal electric power density (exergy route), MWe/km². */
  nominalHeatPJkm2: Float32Array;
  nominalElectricMWekm2: Float32Array;
  /** Monte Carlo summaries per cell (present when realizations > 0). */
  heatPJkm2?: CellSummaryBuffers;
  electricMWekm2?: CellSummaryBuffers;
  /** [block][set][realization (the last, index N, is the nominal run)][SUM_QUANTITIES]. */
  blockSums: Float64Array;
  /** Per block: cells whose nominal column stops being valid inside the window; cells with a non-finite sd. */
  blockTruncated: Float64Array;
  blockSdMissing: Float64Array;
}

/** Allocates the output (shared memory when asked, for worker threads). */
export function allocateResourceOutput(prep: PreparedResource, shared = false): ResourceOutput {
  const f32 = (n: number) => (shared ? new Float32Array(new SharedArrayBuffer(n * 4)) : new Float32Array(n)).fill(NaN);
  const f64 = (n: number) => (shared ? new Float64Array(new SharedArrayBuffer(n * 8)) : new Float64Array(n));
  const n = prep.cells;
  const set = (): CellSummaryBuffers => ({ p10: f32(n), p50: f32(n), p90: f32(n), mean: f32(n) });
  const mc = prep.spec.realizations > 0;
  return {
    nominalHeatPJkm2: f32(n),
    nominalElectricMWekm2: f32(n),
    heatPJkm2: mc ? set() : undefined,
    electricMWekm2: mc ? set() : undefined,
    blockSums: f64(prep.blocks * prep.sets * (prep.spec.realizations + 1) * SUM_QUANTITIES),
    blockTruncated: f64(prep.blocks),
    blockSdMissing: f64(prep.blocks),
  };
}

/** Standard normal keyed by (seed, realization, cell): the thermal engine's formula (Box–Muller of two keyed uniforms). */
export function cellNormal(seed: number, r: number, c: number): number {
  const u1 = hashUniform(seed, r, c, 1);
  const u2 = hashUniform(seed, r, c, 2);
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/**
 * Processes cells [start, end) (start a multiple of SUM_BLOCK; end a multiple of it or the last cell): per-cell
 * densities into the output at absolute cell indices, and the block sums. Each cell's N values give its percentiles
 * (Hyndman & Fan type 7, by selection: shared/stats/quantile.ts) from one (N × SUM_BLOCK) buffer per quantity.
 */
export function resourceRange(prep: PreparedResource, start: number, end: number, out: ResourceOutput): void {
  const spec = prep.spec;
  const cells = prep.cells;
  if (!(start >= 0 && end <= cells && start <= end)) throw new RangeError(`bad cell range [${start}, ${end}) for ${cells} cells`);
  if (start % SUM_BLOCK !== 0 || (end % SUM_BLOCK !== 0 && end !== cells))
    throw new RangeError(`cell ranges must start and end on multiples of ${SUM_BLOCK} (or the last cell), got [${start}, ${end})`);
  const N = spec.realizations,
    NR = N + 1,
    S = prep.sets,
    K = SUM_QUANTITIES;
  const q = spec.heatFlowMWm2,
    sd = spec.heatFlowSdMWm2,
    zones = spec.modelZones;
  const mask = spec.polygonMask,
    labels = spec.zoneLabels;
  const width = spec.width,
    rowArea = spec.rowAreaM2,
    cellArea = spec.cellAreaM2;
  const independent = spec.heatFlowErrorCorrelation === 'independent';
  const w = spec.window;
  const sums = out.blockSums;
  const lifeS = prep.lifeS;
  const B = SUM_BLOCK;
  const bufH = N > 0 ? new Float64Array(B * N) : new Float64Array(0);
  const bufE = N > 0 ? new Float64Array(B * N) : new Float64Array(0);
  const scratch = new Float64Array(N);
  const blockArea = new Float64Array(B);
  const acc = new Float64Array(8);
  const pct = new Float64Array(3);
  const nZones = prep.sets - zone0Of(prep);
  const zoneAcc = new Float64Array(Math.max(1, nZones) * SUM_QUANTITIES);
  const sc = new ColumnHeatScratch();
  const ch = emptyColumnHeat();
  const states = prep.nominal.models.map((m) => new ColumnState(m.nLayers));
  const polySet = prep.polygonSet,
    zone0 = prep.zoneSet0;
  const nm = prep.nominal;
  const nomHeatF = nm.rhoCMJm3K * 1e-3; // ρC[MJ/m³/K]·G[K·m] = MJ/m² = 1e-3 PJ/km²
  const nomElecF = (nm.utilizationEfficiency * nm.recoveryFactor * nm.rhoCMJm3K * 1e6) / lifeS; // J/m² → MWe/km²

  // Adds (G, X, h) × area of cell c to the sets it belongs to, realization slot r, block blk.
  const add = (blk: number, c: number, r: number, a: number, g: number, x: number, h: number) => {
    const hotA = h > 0 ? a : 0;
    let k = (blk * S * NR + r) * K;
    sums[k] += g * a;
    sums[k + 1] += x * a;
    sums[k + 2] += h * a;
    sums[k + 3] += hotA;
    if (mask !== undefined && mask[c] === 1) {
      k = ((blk * S + polySet) * NR + r) * K;
      sums[k] += g * a;
      sums[k + 1] += x * a;
      sums[k + 2] += h * a;
      sums[k + 3] += hotA;
    }
    if (labels !== undefined) {
      const l = labels[c];
      if (l >= 0) {
        k = ((blk * S + zone0 + l) * NR + r) * K;
        sums[k] += g * a;
        sums[k + 1] += x * a;
        sums[k + 2] += h * a;
        sums[k + 3] += hotA;
      }
    }
  };

  for (let b0 = start; b0 < end; b0 += B) {
    const b1 = Math.min(end, b0 + B);
    const blk = b0 / B;
    // Clear this block's sums (a re-run of a range overwrites, never accumulates twice).
    sums.fill(0, blk * S * NR * K, (blk + 1) * S * NR * K);
    let truncated = 0,
      sdMissing = 0;
    // Nominal run: direct column integrals.
    for (let c = b0; c < b1; c++) {
      const q0 = q[c];
      if (!(q0 === q0)) continue;
      if (sd !== undefined && !(sd[c] === sd[c])) sdMissing++;
      const zi = zones === undefined ? 0 : zones[c];
      const cm = nm.models[zi];
      if (cm === undefined) throw new RangeError(`cell ${c}: model zone ${zi} has no model`);
      columnHeat(cm, q0, cm.surfaceTemperatureC, w, states[zi], sc, ch);
      if (ch.truncated) truncated++;
      out.nominalHeatPJkm2[c] = nomHeatF * ch.heatKm;
      out.nominalElectricMWekm2[c] = nomElecF * ch.exergyKm;
      add(blk, c, N, cellArea === undefined ? rowArea[Math.floor(c / width)] : cellArea[c], ch.heatKm, ch.exergyKm, ch.thicknessM);
    }
    out.blockTruncated[blk] = truncated;
    out.blockSdMissing[blk] = sdMissing;
    if (N === 0) continue;
    // Realizations: table lookups (inlined: this loop runs cells × realizations times). Sums go to local
    // accumulators per realization (set 0, the polygon, the zones) and are written once per block.
    const nb = b1 - b0;
    for (let c = b0; c < b1; c++) blockArea[c - b0] = cellArea === undefined ? rowArea[Math.floor(c / width)] : cellArea[c];
    for (let r = 0; r < N; r++) {
      const tabs = prep.tables[r];
      const rowOff = r * B;
      if (prep.params.accepted[r] === 0) {
        bufH.fill(NaN, rowOff, rowOff + nb);
        bufE.fill(NaN, rowOff, rowOff + nb);
        continue;
      }
      const zr = prep.params.heatFlowNormal[r];
      const rhoC = prep.params.rhoCMJm3K[r];
      const heatF = rhoC * 1e-3;
      const elecF = (prep.params.utilizationEfficiency[r] * prep.params.recoveryFactor[r] * rhoC * 1e6) / lifeS;
      if (labels !== undefined) zoneAcc.fill(0);
      const fallback = (zi: number, q0: number, o: Float64Array) => {
        // Outside the table (cannot happen with the keyed normals' range; kept exact all the same).
        const cm = prep.compiled[r][zi] as CompiledModel;
        columnHeat(cm, q0, cm.surfaceTemperatureC, w, states[zi], sc, ch);
        o[0] = ch.heatKm;
        o[1] = ch.exergyKm;
        o[2] = ch.thicknessM;
      };
      realizationBlock(
        tabs as HeatTable[],
        q,
        sd,
        spec.heatFlowRealizationsMWm2,
        r * cells,
        independent ? spec.seed : NaN,
        r,
        zr,
        zones,
        b0,
        b1,
        rowOff,
        heatF,
        elecF,
        bufH,
        bufE,
        blockArea,
        mask,
        labels,
        acc,
        zoneAcc,
        fallback,
      );
      const gG = acc[0],
        gX = acc[1],
        gV = acc[2],
        gA = acc[3],
        pG = acc[4],
        pX = acc[5],
        pV = acc[6],
        pA = acc[7];
      let k = (blk * S * NR + r) * K;
      sums[k] = gG;
      sums[k + 1] = gX;
      sums[k + 2] = gV;
      sums[k + 3] = gA;
      if (mask !== undefined) {
        k = ((blk * S + polySet) * NR + r) * K;
        sums[k] = pG;
        sums[k + 1] = pX;
        sums[k + 2] = pV;
        sums[k + 3] = pA;
      }
      if (labels !== undefined) {
        for (let l = 0; l < nZones; l++) {
          k = ((blk * S + zone0 + l) * NR + r) * K;
          for (let e = 0; e < K; e++) sums[k + e] = zoneAcc[l * K + e];
        }
      }
    }
    // Per-cell percentiles.
    const H = out.heatPJkm2!,
      E = out.electricMWekm2!;
    for (let c = b0; c < b1; c++) {
      if (!(q[c] === q[c])) continue;
      const off = c - b0;
      for (let pass = 0; pass < 2; pass++) {
        const buf = pass === 0 ? bufH : bufE;
        const tgt = pass === 0 ? H : E;
        let s = 0,
          n = 0;
        for (let r = 0; r < N; r++) {
          const v = buf[r * B + off];
          if (v === v) {
            scratch[n++] = v; // rejected realizations (NaN) left out
            s += v;
          }
        }
        percentilesBySelection(scratch, n, PCTS, pct);
        tgt.p10[c] = pct[0];
        tgt.p50[c] = pct[1];
        tgt.p90[c] = pct[2];
        tgt.mean[c] = n > 0 ? s / n : NaN;
      }
    }
  }
}

/**
 * One realization over cells [b0, b1): heat-flow draw, table lookup (lookupHeatTable inlined: this loop runs cells ×
 * realizations times), densities into bufH/bufE, and the sums of the grid (acc[0..3]), the polygon (acc[4..7]) and
 * the zones (zoneAcc). seedIndependent is the seed for independent heat-flow errors, NaN for fully correlated ones;
 * `sims` (with this realization's offset `simOff`) replaces the heat-flow draw by a simulated field.
 */
function realizationBlock(
  tabs: HeatTable[],
  q: Floats,
  sd: Floats | undefined,
  sims: Float32Array | undefined,
  simOff: number,
  seedIndependent: number,
  r: number,
  zr: number,
  zones: Uint8Array | Uint16Array | Uint32Array | undefined,
  b0: number,
  b1: number,
  rowOff: number,
  heatF: number,
  elecF: number,
  bufH: Float64Array,
  bufE: Float64Array,
  blockArea: Float64Array,
  mask: Uint8Array | undefined,
  labels: Int32Array | undefined,
  acc: Float64Array,
  zoneAcc: Float64Array,
  fallback: (zi: number, q0: number, o: Float64Array) => void,
): void {
  const K = SUM_QUANTITIES;
  const independent = seedIndependent === seedIndependent;
  let gG = 0,
    gX = 0,
    gV = 0,
    gA = 0,
    pG = 0,
    pX = 0,
    pV = 0,
    pA = 0;
  let tz = 0;
  let t = tabs[0];
  let ends = t.ends,
    vals = t.values,
    firstNode = t.firstNode,
    stepA = t.step,
    intervals = t.intervals,
    lastSeg = ends.length - 2,
    qLo = t.qLo,
    qHi = t.qHi;
  const o = acc; // scratch for the fallback (acc is written at the end)
  for (let c = b0; c < b1; c++) {
    const j = rowOff + (c - b0);
    let q0 = q[c];
    if (!(q0 === q0)) {
      bufH[j] = NaN;
      bufE[j] = NaN;
      continue;
    }
    if (sims !== undefined) q0 = sims[simOff + c];
    else if (sd !== undefined) {
      const s = sd[c];
      if (s > 0) q0 += s * (independent ? cellNormal(seedIndependent, r, c) : zr);
    }
    if (zones !== undefined && zones[c] !== tz) {
      tz = zones[c];
      t = tabs[tz];
      ends = t.ends;
      vals = t.values;
      firstNode = t.firstNode;
      stepA = t.step;
      intervals = t.intervals;
      lastSeg = ends.length - 2;
      qLo = t.qLo;
      qHi = t.qHi;
    }
    let g = 0,
      x = 0,
      h = 0;
    if (q0 >= qLo && q0 <= qHi) {
      let sg = 0;
      while (sg < lastSeg && q0 >= ends[sg + 1]) sg++;
      const m = intervals[sg];
      const u0 = (q0 - ends[sg]) / stepA[sg];
      let base = Math.floor(u0) - 1;
      if (base > m - 3) base = m - 3;
      if (base < 0) base = 0;
      const u = u0 - base,
        u1 = u - 1,
        u2 = u - 2,
        u3 = u - 3;
      const l0 = (-u1 * u2 * u3) / 6,
        l1 = (u * u2 * u3) / 2,
        l2 = (-u * u1 * u3) / 2,
        l3 = (u * u1 * u2) / 6;
      const k = (firstNode[sg] + base) * 3;
      g = l0 * vals[k] + l1 * vals[k + 3] + l2 * vals[k + 6] + l3 * vals[k + 9];
      x = l0 * vals[k + 1] + l1 * vals[k + 4] + l2 * vals[k + 7] + l3 * vals[k + 10];
      h = l0 * vals[k + 2] + l1 * vals[k + 5] + l2 * vals[k + 8] + l3 * vals[k + 11];
      if (!(g > 0)) g = 0;
      if (!(x > 0)) x = 0;
      if (!(h > 0)) h = 0;
    } else if (q0 > 0) {
      fallback(tz, q0, o);
      g = o[0];
      x = o[1];
      h = o[2];
    }
    bufH[j] = heatF * g;
    bufE[j] = elecF * x;
    const a = blockArea[c - b0];
    const ga = g * a,
      xa = x * a,
      ha = h * a,
      aa = h > 0 ? a : 0;
    gG += ga;
    gX += xa;
    gV += ha;
    gA += aa;
    if (mask !== undefined && mask[c] === 1) {
      pG += ga;
      pX += xa;
      pV += ha;
      pA += aa;
    }
    if (labels !== undefined) {
      const l = labels[c];
      if (l >= 0) {
        const zk = l * K;
        zoneAcc[zk] += ga;
        zoneAcc[zk + 1] += xa;
        zoneAcc[zk + 2] += ha;
        zoneAcc[zk + 3] += aa;
      }
    }
  }
  acc[0] = gG;
  acc[1] = gX;
  acc[2] = gV;
  acc[3] = gA;
  acc[4] = pG;
  acc[5] = pX;
  acc[6] = pV;
  acc[7] = pA;
}

/** Per-realization sums of one area set (index N = the nominal run), in SI: K·m³, K·m³, m³, m². */
export interface SetSums {
  heatKm3: Float64Array;
  exergyKm3: Float64Array;
  hotVolumeM3: Float64Array;
  hotAreaM2: Float64Array;
}

/** Adds the block sums in block order (the fixed order that makes totals independent of chunking). */
export function combineSums(prep: PreparedResource, out: ResourceOutput): SetSums[] {
  const NR = prep.spec.realizations + 1,
    S = prep.sets,
    K = SUM_QUANTITIES;
  const res: SetSums[] = [];
  for (let s = 0; s < S; s++) {
    const o: SetSums = { heatKm3: new Float64Array(NR), exergyKm3: new Float64Array(NR), hotVolumeM3: new Float64Array(NR), hotAreaM2: new Float64Array(NR) };
    for (let b = 0; b < prep.blocks; b++) {
      for (let r = 0; r < NR; r++) {
        const k = ((b * S + s) * NR + r) * K;
        o.heatKm3[r] += out.blockSums[k];
        o.exergyKm3[r] += out.blockSums[k + 1];
        o.hotVolumeM3[r] += out.blockSums[k + 2];
        o.hotAreaM2[r] += out.blockSums[k + 3];
      }
    }
    res.push(o);
  }
  return res;
}
