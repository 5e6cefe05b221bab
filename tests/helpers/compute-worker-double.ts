// Test double of the compute worker (server/workers/compute-worker.ts): a task carrying the seed SPIN_SEED (a
// column query's `seed`, or a heat-in-place body's `options.seed`) never returns, as a computation stuck in a
// loop would; every other task is handed to the real worker. It lets a test show that a task past its deadline is
// stopped and its thread freed, without depending on how fast the machine is.
import compute, { type ComputeTask, type ComputeReply } from '../../server/workers/compute-worker.ts';

export const SPIN_SEED = 987_654_321;

export default async function computeDouble(task: ComputeTask): Promise<ComputeReply> {
  const seed = task.kind === 'column' ? task.query.seed : task.kind === 'heat-in-place' ? task.body.options?.seed : undefined;
  if (seed === SPIN_SEED) {
    // A busy loop: the thread never yields, so only terminating it can stop the task.
    for (let i = 0; ; i = (i + 1) % 1_000_000);
  }
  return await compute(task);
}
