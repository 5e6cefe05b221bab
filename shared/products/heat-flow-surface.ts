/**
 * The one way a prepared interpolation (shared/interp/interpolate.ts: IDW, Shepard 1968, or ordinary kriging with
 * its standard deviation) becomes a grid: the surface-heat-flow grid of runs and the grid of the `interpolate`
 * verb. Rows are filled in tiles by a row filler: serially in this thread by default (the grid kernel,
 * shared/interp/gridKernel.ts), or by one the caller passes (a worker pool writing shared memory). After each tile
 * `tick(fraction, message)` is called and awaited, so a caller can report progress, yield, or throw to stop.
 */
import { finishGrid, type InterpolationResult, type PreparedInterpolation } from '../interp/interpolate.ts';
import { addStats, computeRows, createGridRuntime, type RowStats } from '../interp/gridKernel.ts';

/** Fills rows [r0, r1) of `values` (and `sd`, the kriging standard deviation) of the plan's grid. */
export type RowFiller = (r0: number, r1: number, values: Float32Array, sd: Float32Array | null) => RowStats | Promise<RowStats>;

export interface SurfaceOptions {
  /** Rows per tile (default: the whole grid in one tile). */
  tileRows?: number;
  /** Fills a tile's rows (default: serially in this thread). */
  fill?: RowFiller;
  /** Allocates a buffer of `cells` Float32 values (default: an ordinary Float32Array; a pool needs shared memory). */
  allocate?: (cells: number) => Float32Array;
  /** After each tile: the fraction of rows done (0..1) and a message. */
  tick?: (fraction: number, message: string) => void | Promise<void>;
}

const NO_ROWS: RowStats = { cells: 0, masked: 0, empty: 0, hidden: 0, fallbacks: 0, regularized: 0, factorizations: 0 };

/** The serial row filler: one grid runtime (indexes, factor caches) for the plan, built on first use. */
export function serialRowFiller(prep: PreparedInterpolation): RowFiller {
  let rt: ReturnType<typeof createGridRuntime> | null = null;
  return (r0, r1, values, sd) => computeRows((rt ??= createGridRuntime(prep.plan)), r0, r1, values, sd);
}

/** The grid of a prepared interpolation, with its standard deviation (kriging) and row-statistics warnings. */
export async function heatFlowSurface(prep: PreparedInterpolation, o: SurfaceOptions = {}): Promise<InterpolationResult> {
  const t0 = performance.now();
  const g = prep.plan.grid;
  const cells = g.width * g.height;
  const allocate = o.allocate ?? ((n: number) => new Float32Array(n));
  const values = allocate(cells);
  const sd = prep.plan.withSd ? allocate(cells) : null;
  const fill = o.fill ?? serialRowFiller(prep);
  const tileRows = o.tileRows ?? g.height;
  if (!(Number.isInteger(tileRows) && tileRows >= 1)) throw new RangeError(`tileRows must be a positive integer, got ${tileRows}`);
  let stats = NO_ROWS;
  for (let r = 0; r < g.height; r += tileRows) {
    const r1 = Math.min(g.height, r + tileRows);
    stats = addStats(stats, await fill(r, r1, values, sd));
    await o.tick?.(r1 / g.height, `rows ${r1} of ${g.height}`);
  }
  return finishGrid(prep, values, sd, stats, performance.now() - t0);
}
