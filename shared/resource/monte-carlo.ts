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
 *
 * The spec and prepared state are typed in resource-spec.ts, prepared in prepare.ts (the draws and tables), and the
 * per-realization inner loops of a block are in realization-block.ts.
 */

import { percentilesBySelection } from '../stats/quantile.ts';
import type { CompiledModel } from '../thermal/compile.ts';
import { ColumnState } from '../thermal/column.ts';
import { ColumnHeatScratch, columnHeat, emptyColumnHeat, type ColumnHeat } from './column-heat.ts';
import type { HeatTable } from './heat-table.ts';
import { accumulateBlock, lookupBlock, type BlockSink } from './realization-block.ts';
import { SUM_BLOCK, SUM_QUANTITIES, type PreparedResource } from './resource-spec.ts';

const PCTS = [0.1, 0.5, 0.9];

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

/** The working buffers of one resourceRange call (one block and all realizations at a time). */
interface RangeWork {
  prep: PreparedResource;
  out: ResourceOutput;
  /** Realization-major densities of the block (r·SUM_BLOCK + cell): heat PJ/km², electric MWe/km². */
  bufH: Float64Array;
  bufE: Float64Array;
  /** Column integrals of the block in one realization. */
  cols: { g: Float64Array; x: Float64Array; h: Float64Array };
  blockArea: Float64Array;
  acc: Float64Array;
  zoneAcc: Float64Array;
  nZones: number;
  sc: ColumnHeatScratch;
  ch: ColumnHeat;
  states: ColumnState[];
}

function rangeWork(prep: PreparedResource, out: ResourceOutput): RangeWork {
  const N = prep.spec.realizations,
    B = SUM_BLOCK;
  const nZones = prep.sets - zone0Of(prep);
  return {
    prep,
    out,
    bufH: new Float64Array(N > 0 ? B * N : 0),
    bufE: new Float64Array(N > 0 ? B * N : 0),
    cols: { g: new Float64Array(B), x: new Float64Array(B), h: new Float64Array(B) },
    blockArea: new Float64Array(B),
    acc: new Float64Array(8),
    zoneAcc: new Float64Array(Math.max(1, nZones) * SUM_QUANTITIES),
    nZones,
    sc: new ColumnHeatScratch(),
    ch: emptyColumnHeat(),
    states: prep.nominal.models.map((m) => new ColumnState(m.nLayers)),
  };
}

/** Index of (block, area set, realization slot) in the block sums. */
const sumIndex = (prep: PreparedResource, blk: number, set: number, r: number) => ((blk * prep.sets + set) * (prep.spec.realizations + 1) + r) * SUM_QUANTITIES;

/** Adds (G, X, h) × area of cell c to the sets it belongs to, realization slot r, block blk. */
function addToSets(prep: PreparedResource, sums: Float64Array, blk: number, c: number, r: number, a: number, g: number, x: number, h: number): void {
  const spec = prep.spec;
  const hotA = h > 0 ? a : 0;
  const put = (k: number) => {
    sums[k] += g * a;
    sums[k + 1] += x * a;
    sums[k + 2] += h * a;
    sums[k + 3] += hotA;
  };
  put(sumIndex(prep, blk, 0, r));
  if (spec.polygonMask !== undefined && spec.polygonMask[c] === 1) put(sumIndex(prep, blk, prep.polygonSet, r));
  if (spec.zoneLabels !== undefined && spec.zoneLabels[c] >= 0) put(sumIndex(prep, blk, prep.zoneSet0 + spec.zoneLabels[c], r));
}

/** The nominal run over cells [b0, b1) of block blk: direct column integrals, its densities and sums (slot N). */
function nominalBlock(wk: RangeWork, blk: number, b0: number, b1: number): void {
  const { prep, out } = wk;
  const spec = prep.spec;
  const q = spec.heatFlowMWm2,
    sd = spec.heatFlowSdMWm2,
    zones = spec.modelZones;
  const nm = prep.nominal;
  const nomHeatF = nm.rhoCMJm3K * 1e-3; // ρC[MJ/m³/K]·G[K·m] = MJ/m² = 1e-3 PJ/km²
  const nomElecF = (nm.utilizationEfficiency * nm.recoveryFactor * nm.rhoCMJm3K * 1e6) / prep.lifeS; // J/m² → MWe/km²
  let truncated = 0,
    sdMissing = 0;
  for (let c = b0; c < b1; c++) {
    const q0 = q[c];
    if (!(q0 === q0)) continue;
    if (sd !== undefined && !(sd[c] === sd[c])) sdMissing++;
    const zi = zones === undefined ? 0 : zones[c];
    const cm = nm.models[zi];
    if (cm === undefined) throw new RangeError(`cell ${c}: model zone ${zi} has no model`);
    const ch = wk.ch;
    columnHeat(cm, q0, cm.surfaceTemperatureC, spec.window, wk.states[zi], wk.sc, ch);
    if (ch.truncated) truncated++;
    out.nominalHeatPJkm2[c] = nomHeatF * ch.heatKm;
    out.nominalElectricMWekm2[c] = nomElecF * ch.exergyKm;
    const a = spec.cellAreaM2 === undefined ? spec.rowAreaM2[Math.floor(c / spec.width)] : spec.cellAreaM2[c];
    addToSets(prep, out.blockSums, blk, c, spec.realizations, a, ch.heatKm, ch.exergyKm, ch.thicknessM);
  }
  out.blockTruncated[blk] = truncated;
  out.blockSdMissing[blk] = sdMissing;
}

/** Realization r over cells [b0, b1) of block blk: densities into the block buffers and the sums of every set. */
function realizationSums(wk: RangeWork, blk: number, r: number, b0: number, b1: number): void {
  const { prep } = wk;
  const spec = prep.spec,
    P = prep.params;
  const rowOff = r * SUM_BLOCK;
  if (P.accepted[r] === 0) {
    wk.bufH.fill(NaN, rowOff, rowOff + (b1 - b0));
    wk.bufE.fill(NaN, rowOff, rowOff + (b1 - b0));
    return;
  }
  const rhoC = P.rhoCMJm3K[r];
  const labels = spec.zoneLabels;
  if (labels !== undefined) wk.zoneAcc.fill(0);
  const fallback = (zi: number, q0: number, o: Float64Array) => {
    // Outside the table (cannot happen with the keyed normals' range; kept exact all the same).
    const cm = prep.compiled[r][zi] as CompiledModel;
    columnHeat(cm, q0, cm.surfaceTemperatureC, spec.window, wk.states[zi], wk.sc, wk.ch);
    o[0] = wk.ch.heatKm;
    o[1] = wk.ch.exergyKm;
    o[2] = wk.ch.thicknessM;
  };
  const independent = spec.heatFlowErrorCorrelation === 'independent';
  const draw = {
    q: spec.heatFlowMWm2,
    sd: spec.heatFlowSdMWm2,
    sims: spec.heatFlowRealizationsMWm2,
    simOff: r * prep.cells,
    seedIndependent: independent ? spec.seed : NaN,
    r,
    zr: P.heatFlowNormal[r],
  };
  lookupBlock(prep.tables[r] as HeatTable[], draw, spec.modelZones, b0, b1, wk.cols, fallback);
  const sink: BlockSink = {
    rowOff,
    heatF: rhoC * 1e-3,
    elecF: (P.utilizationEfficiency[r] * P.recoveryFactor[r] * rhoC * 1e6) / prep.lifeS,
    bufH: wk.bufH,
    bufE: wk.bufE,
    blockArea: wk.blockArea,
    mask: spec.polygonMask,
    labels,
    acc: wk.acc,
    zoneAcc: wk.zoneAcc,
  };
  accumulateBlock(wk.cols, b0, b1, sink);
  const sums = wk.out.blockSums,
    acc = wk.acc;
  sums.set(acc.subarray(0, 4), sumIndex(prep, blk, 0, r));
  if (spec.polygonMask !== undefined) sums.set(acc.subarray(4, 8), sumIndex(prep, blk, prep.polygonSet, r));
  if (labels !== undefined)
    for (let l = 0; l < wk.nZones; l++) sums.set(wk.zoneAcc.subarray(l * SUM_QUANTITIES, (l + 1) * SUM_QUANTITIES), sumIndex(prep, blk, prep.zoneSet0 + l, r));
}

/** Per-cell P10/P50/P90 and mean of the block's densities over the accepted realizations. */
function cellSummaries(wk: RangeWork, b0: number, b1: number, scratch: Float64Array, pct: Float64Array): void {
  const N = wk.prep.spec.realizations,
    q = wk.prep.spec.heatFlowMWm2;
  const H = wk.out.heatPJkm2!,
    E = wk.out.electricMWekm2!;
  for (let c = b0; c < b1; c++) {
    if (!(q[c] === q[c])) continue;
    const off = c - b0;
    for (let pass = 0; pass < 2; pass++) {
      const buf = pass === 0 ? wk.bufH : wk.bufE;
      const tgt = pass === 0 ? H : E;
      let s = 0,
        n = 0;
      for (let r = 0; r < N; r++) {
        const v = buf[r * SUM_BLOCK + off];
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
  const N = spec.realizations;
  const per = prep.sets * (N + 1) * SUM_QUANTITIES;
  const wk = rangeWork(prep, out);
  const scratch = new Float64Array(N),
    pct = new Float64Array(3);
  for (let b0 = start; b0 < end; b0 += SUM_BLOCK) {
    const b1 = Math.min(end, b0 + SUM_BLOCK);
    const blk = b0 / SUM_BLOCK;
    // Clear this block's sums (a re-run of a range overwrites, never accumulates twice).
    out.blockSums.fill(0, blk * per, (blk + 1) * per);
    nominalBlock(wk, blk, b0, b1);
    if (N === 0) continue;
    for (let c = b0; c < b1; c++) wk.blockArea[c - b0] = spec.cellAreaM2 === undefined ? spec.rowAreaM2[Math.floor(c / spec.width)] : spec.cellAreaM2[c];
    for (let r = 0; r < N; r++) realizationSums(wk, blk, r, b0, b1);
    cellSummaries(wk, b0, b1, scratch, pct);
  }
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
