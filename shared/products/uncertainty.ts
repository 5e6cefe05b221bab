/**
 * P10/P50/P90 and mean grids of depth to each isotherm and of temperature at each depth by Monte Carlo (DESIGN.md
 * §3): per realization one draw of every
 * uncertain model parameter (for the whole region, per zone model) and, where a heat-flow standard deviation grid
 * is given (e.g. the kriging sd), a perturbed heat flow q + sd·z with z one standard normal per realization for all
 * cells ("full" correlation, the default and the conservative choice) or one per cell ("independent"). Every
 * realization has its own PRNG stream seeded from (seed, realization index), and the per-cell normals of the
 * independent case are keyed by (seed, realization, cell), so results do not depend on tiling or worker count.
 * Percentiles are Hyndman & Fan type 7; an isotherm not reached counts as deeper than any depth (a temperature below
 * the melt onset as hotter than any), and a percentile that falls there is NoData (NaN). The mean of a cell is the
 * plain mean of its valid realizations; it is NoData where any valid realization does not reach the isotherm (the
 * depth is then unbounded and so is the mean): `finiteFraction` gives the share that do reach it. A realization whose
 * heat flow runs out above the maximum depth has its peak temperature there: an isotherm hotter than that peak is not
 * reached (+∞), not left out; `exhaustedFraction` gives the share of such realizations per cell.
 *
 * The sampling and summaries are the thermal engine's (prepareGridMonteCarlo, monteCarloGridRange); this module
 * streams them tile by tile (rows), so memory is the output grids plus one (realizations × block) buffer, never
 * realizations × cells.
 */
import type { ThermalModelInput } from '../schema/model.ts';
import { monteCarloGridRange, prepareGridMonteCarlo, type GridMonteCarloOutput, type PreparedGridMonteCarlo } from '../thermal/index.ts';
import type { Grid } from '../grid/grid.ts';

export interface UncertaintySpec {
  heatFlow: Grid<Float32Array | Float64Array>;
  /** Heat-flow standard deviation per cell, same georeferencing (mW/m²); absent = model parameters only. */
  heatFlowSd?: Grid<Float32Array | Float64Array> | null;
  /** Models with distributions, indexed by zone (zone 0 = base). */
  models: ThermalModelInput[];
  zones?: Uint16Array;
  isothermsC: number[];
  /** Depths for temperature summaries, km (default none). */
  depthsKm?: number[];
  maxDepthKm: number;
  realizations: number;
  seed: number;
  heatFlowErrorCorrelation?: 'full' | 'independent';
  /** Heat-flow realizations (realization-major, realizations × cells, mW/m²): replace q + sd·z when given. */
  heatFlowRealizations?: Float32Array;
}

/** One quantity's summary grids: P10, P50, P90 and mean (NaN = NoData), and the share of valid realizations that are finite. */
export interface SummaryGrids {
  p10: Float32Array;
  p50: Float32Array;
  p90: Float32Array;
  mean: Float32Array;
  finiteFraction: Float32Array;
}

export interface UncertaintyGrids {
  /** Per isotherm: depth summaries (km). */
  isotherms: SummaryGrids[];
  /** Per depth: temperature summaries (°C). */
  temperatures: SummaryGrids[];
  /** Fraction of realizations left out per cell (invalid column or physically impossible draw). */
  invalidFraction: Float32Array;
  /** Fraction of realizations per cell whose heat flow runs out above the maximum depth (counted, not left out). */
  exhaustedFraction: Float32Array;
  /** Realizations whose parameter draw was physically impossible (per zone model, summed). */
  rejectedDraws: number;
  /** Cell-realizations whose heat flow runs out above the maximum depth, and the cells with at least one. */
  heatFlowExhausted: { cellRealizations: number; cells: number };
}

/** Prepares the Monte Carlo (draws and compiles every realization's models once). */
export function prepareUncertainty(spec: UncertaintySpec): PreparedGridMonteCarlo {
  const g = spec.heatFlow;
  const sd = spec.heatFlowSd ?? null;
  if (
    sd !== null &&
    (sd.width !== g.width || sd.height !== g.height || sd.west !== g.west || sd.north !== g.north || sd.dx !== g.dx || sd.dy !== g.dy || sd.crs !== g.crs)
  ) {
    throw new RangeError("the heat-flow standard deviation grid must have the heat-flow grid's size and georeferencing");
  }
  if (spec.models.length > 1 && spec.zones === undefined) throw new RangeError('several models need a zone grid');
  return prepareGridMonteCarlo({
    models: spec.models,
    zones: spec.zones,
    heatFlowMWm2: g.values,
    heatFlowSdMWm2: sd === null ? undefined : sd.values,
    heatFlowErrorCorrelation: spec.heatFlowErrorCorrelation ?? 'full',
    heatFlowRealizationsMWm2: spec.heatFlowRealizations,
    isothermsC: spec.isothermsC,
    depthsKm: spec.depthsKm ?? [],
    maxDepthKm: spec.maxDepthKm,
    realizations: spec.realizations,
    seed: spec.seed,
  });
}

/** Allocates the whole-grid summary buffers (NaN-filled). */
export function allocateUncertaintyOutput(cells: number, nIso: number, nDep = 0): GridMonteCarloOutput {
  const f = () => new Float32Array(cells).fill(NaN);
  const set = () => ({ p10: f(), p50: f(), p90: f(), mean: f(), finiteFraction: f() });
  return { isotherms: Array.from({ length: nIso }, set), temperatures: Array.from({ length: nDep }, set), invalidFraction: f(), exhaustedFraction: f() };
}

/**
 * Computes rows [r0, r1) of the percentile grids into `out`, in blocks of `blockCells` cells (the only
 * realization-sized buffer). Identical values for any split into row ranges and any block size.
 */
export function computeUncertaintyRows(prep: PreparedGridMonteCarlo, width: number, r0: number, r1: number, out: GridMonteCarloOutput, blockCells = 512): void {
  monteCarloGridRange(prep, r0 * width, r1 * width, out, blockCells);
}

/** All rows at once, in tiles of `tileRows` rows (e.g. for tests). */
export function computeUncertainty(spec: UncertaintySpec, tileRows = 16, onTile?: (rowsDone: number) => void): UncertaintyGrids {
  const prep = prepareUncertainty(spec);
  const g = spec.heatFlow;
  const out = allocateUncertaintyOutput(g.width * g.height, spec.isothermsC.length, spec.depthsKm?.length ?? 0);
  for (let r = 0; r < g.height; r += tileRows) {
    const r1 = Math.min(g.height, r + tileRows);
    computeUncertaintyRows(prep, g.width, r, r1, out);
    onTile?.(r1);
  }
  return uncertaintyResult(prep, out);
}

/** The typed result of a finished output. */
export function uncertaintyResult(prep: PreparedGridMonteCarlo, out: GridMonteCarloOutput): UncertaintyGrids {
  let rejected = 0;
  for (const row of prep.compiled) for (const m of row) if (m === null) rejected++;
  const N = prep.spec.realizations,
    ex = out.exhaustedFraction as Float32Array;
  const heatFlowExhausted = { cellRealizations: 0, cells: 0 };
  for (let c = 0; c < ex.length; c++) {
    const n = Math.round(ex[c] * N);
    if (n > 0) {
      heatFlowExhausted.cellRealizations += n;
      heatFlowExhausted.cells++;
    }
  }
  const grids = (s: GridMonteCarloOutput['isotherms'][number]): SummaryGrids => ({
    p10: s.p10 as Float32Array,
    p50: s.p50 as Float32Array,
    p90: s.p90 as Float32Array,
    mean: s.mean as Float32Array,
    finiteFraction: s.finiteFraction as Float32Array,
  });
  return {
    isotherms: out.isotherms.map(grids),
    temperatures: out.temperatures.map(grids),
    invalidFraction: out.invalidFraction as Float32Array,
    exhaustedFraction: ex,
    rejectedDraws: rejected,
    heatFlowExhausted,
  };
}
