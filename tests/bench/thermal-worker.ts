// Worker for the thermal benchmark: runs monteCarloGridRange on a cell range, writing into shared output buffers.
import {
  monteCarloGridRange,
  prepareGridMonteCarlo,
  type GridMonteCarloOutput,
  type GridMonteCarloSpec,
  type PreparedGridMonteCarlo,
} from '../../shared/thermal/index.ts';

let cached: { key: string; prep: PreparedGridMonteCarlo } | null = null;

export default function run(task: { spec: GridMonteCarloSpec; key: string; out: GridMonteCarloOutput; start: number; end: number }): number {
  if (cached === null || cached.key !== task.key) cached = { key: task.key, prep: prepareGridMonteCarlo(task.spec) };
  const t = performance.now();
  monteCarloGridRange(cached.prep, task.start, task.end, task.out);
  return performance.now() - t;
}
