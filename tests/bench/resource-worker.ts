// Worker for the heat-in-place benchmark: prepares the run once per key, then processes a cell range into shared buffers.
import { prepareResource, resourceRange, type PreparedResource, type ResourceOutput, type ResourceSpec } from '../../shared/resource/index.ts';

let cached: { key: string; prep: PreparedResource } | null = null;

export default function run(task: { spec: ResourceSpec; key: string; out: ResourceOutput; start: number; end: number }): number {
  if (cached === null || cached.key !== task.key) cached = { key: task.key, prep: prepareResource(task.spec) };
  const t = performance.now();
  resourceRange(cached.prep, task.start, task.end, task.out);
  return performance.now() - t;
}
