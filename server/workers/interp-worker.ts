import { fileURLToPath } from 'node:url';
import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import { WORKER_EXEC_ARGV } from './exec-argv.ts';
import { createGridRuntime, computeRows, addStats, type GridPlan, type GridRuntime, type RowStats } from '../../shared/interp/gridKernel.ts';
import type { RowFiller } from '../../shared/products/heat-flow-surface.ts';

/**
 * Worker side of the parallel grid pass: each task fills rows [r0, r1) of shared Float32 buffers for one plan.
 * The runtime (indexes, factor caches) is built once per plan per worker thread and kept for the plan's key.
 */
export interface RowTask {
  plan: GridPlan;
  r0: number;
  r1: number;
  values: SharedArrayBuffer;
  sd: SharedArrayBuffer | null;
}

let cached: GridRuntime | null = null;

export default function fillRows(task: RowTask): RowStats {
  if (cached === null || cached.plan.key !== task.plan.key) cached = createGridRuntime(task.plan);
  const values = new Float32Array(task.values);
  const sd = task.sd === null ? null : new Float32Array(task.sd);
  return computeRows(cached, task.r0, task.r1, values, sd);
}

/** A piscina pool of this worker (TypeScript run through tsx in each thread). */
export function createInterpPool(threads = Math.min(2, availableParallelism())): Piscina {
  return new Piscina({
    filename: fileURLToPath(import.meta.url),
    execArgv: WORKER_EXEC_ARGV,
    minThreads: threads,
    maxThreads: threads,
  });
}

/** A Float32Array over shared memory, for the pool's row filler. */
export const sharedFloat32 = (cells: number) => new Float32Array(new SharedArrayBuffer(4 * cells));

/**
 * A row filler (shared/products/heat-flow-surface.ts) that runs on the pool: the rows split into interleaved blocks
 * (so threads share dense and sparse parts alike), written into the buffers, which must be shared memory
 * (`sharedFloat32`). Returns the summed row statistics.
 */
export function poolRowFiller(pool: Piscina, plan: GridPlan, blockRows = 16): RowFiller {
  return async (r0, r1, values, sd) => {
    const vb = values.buffer,
      sb = sd?.buffer ?? null;
    if (!(vb instanceof SharedArrayBuffer) || (sb !== null && !(sb instanceof SharedArrayBuffer)))
      throw new TypeError('the pool fills shared buffers only (sharedFloat32)');
    const tasks: Promise<RowStats>[] = [];
    for (let a = r0; a < r1; a += blockRows) {
      tasks.push(pool.run({ plan, r0: a, r1: Math.min(r1, a + blockRows), values: vb, sd: sb } satisfies RowTask) as Promise<RowStats>);
    }
    let stats: RowStats = { cells: 0, masked: 0, empty: 0, hidden: 0, fallbacks: 0, regularized: 0, factorizations: 0 };
    for (const p of await Promise.all(tasks)) stats = addStats(stats, p);
    return stats;
  };
}

/** Fills a whole grid with a pool. Returns the buffers and the summed row statistics. */
export async function computeGridParallel(
  pool: Piscina,
  plan: GridPlan,
  blockRows = 16,
): Promise<{ values: Float32Array; sd: Float32Array | null; stats: RowStats }> {
  const { width, height } = plan.grid;
  const values = sharedFloat32(width * height);
  const sd = plan.withSd ? sharedFloat32(width * height) : null;
  const stats = await poolRowFiller(pool, plan, blockRows)(0, height, values, sd);
  return { values, sd, stats };
}
