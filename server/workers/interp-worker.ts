import { fileURLToPath } from 'node:url';
import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import { createGridRuntime, computeRows, addStats, type GridPlan, type GridRuntime, type RowStats } from '../../shared/interp/gridKernel.ts';

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
    execArgv: ['--import', 'tsx'],
    minThreads: threads,
    maxThreads: threads,
  });
}

/**
 * Fills a whole grid with a pool: rows split into interleaved blocks (so threads share dense and sparse parts
 * alike), results written into shared buffers. Returns the buffers and the summed row statistics.
 */
export async function computeGridParallel(pool: Piscina, plan: GridPlan, blockRows = 16): Promise<{ values: Float32Array; sd: Float32Array | null; stats: RowStats }> {
  const { width, height } = plan.grid;
  const vb = new SharedArrayBuffer(4 * width * height);
  const sb = plan.withSd ? new SharedArrayBuffer(4 * width * height) : null;
  const tasks: Promise<RowStats>[] = [];
  for (let r0 = 0; r0 < height; r0 += blockRows) {
    tasks.push(pool.run({ plan, r0, r1: Math.min(height, r0 + blockRows), values: vb, sd: sb } satisfies RowTask) as Promise<RowStats>);
  }
  const parts = await Promise.all(tasks);
  let stats: RowStats = { cells: 0, masked: 0, empty: 0, fallbacks: 0, regularized: 0, factorizations: 0 };
  for (const p of parts) stats = addStats(stats, p);
  return { values: new Float32Array(vb), sd: sb === null ? null : new Float32Array(sb), stats };
}
