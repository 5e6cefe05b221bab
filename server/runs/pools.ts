/**
 * The server's worker pools for work that must never run on the request thread (server/runs/compute.ts), and the
 * heat-in-place job queue over one of them. Five pools, so long work never holds short work behind it: short
 * column bands (a map click) on threads of normal priority; long columns and sections, heat-in-place jobs, a
 * run's spread and probability layers, each on a thread of lowered priority; and data sets (parsing large uploads,
 * heat-flow corrections, the vector GeoPackage export) on one thread of normal priority.
 */
import { availableParallelism } from 'node:os';
import type { Limits } from '../limits.ts';
import { ComputePool } from './compute.ts';
import { HeatJobs } from './heat-jobs.ts';

export interface ComputePools {
  short: ComputePool;
  long: ComputePool;
  jobs: ComputePool;
  layers: ComputePool;
  data: ComputePool;
}

/** The five pools, sized and bounded by the limits; `workerFile` replaces the compute worker (tests). */
export function createComputePools(limits: Limits, workerFile?: string): ComputePools {
  const long = { threads: 1, niceness: 10, workerFile };
  return {
    short: new ComputePool({
      name: 'short column',
      threads: Math.min(2, availableParallelism()),
      maxQueue: limits.maxComputeQueue,
      queueLimit: 'maxComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
      keepWarm: true,
      workerFile,
    }),
    long: new ComputePool({
      ...long,
      name: 'long column and section',
      maxQueue: limits.maxLongComputeQueue,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
    }),
    jobs: new ComputePool({
      ...long,
      name: 'heat-in-place',
      maxQueue: limits.maxHeatInPlaceJobsServer,
      queueLimit: 'maxHeatInPlaceJobsServer',
      deadlineLimit: 'heatInPlaceDeadlineSeconds',
    }),
    // A layer costs about what the run's own Monte Carlo did, so it has the run's wall-clock limit.
    layers: new ComputePool({
      ...long,
      name: 'spread and probability layer',
      maxQueue: limits.maxLongComputeQueue,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'runWallClockSeconds',
    }),
    // Someone waits on each of these (an upload, an export) as on a map click, so its one thread keeps normal
    // priority: the request thread still has the other core, and on a machine busy with other programs a lowered
    // thread would let a 50 MB upload run into its deadline.
    data: new ComputePool({
      threads: 1,
      workerFile,
      name: 'data set',
      maxQueue: limits.maxLongComputeQueue,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
    }),
  };
}

/** Heat-in-place jobs, one at a time on the `jobs` pool, within their deadline and per-client and server bounds. */
export function createHeatJobs(pools: ComputePools, limits: Limits): HeatJobs {
  return new HeatJobs({
    pool: pools.jobs,
    concurrency: 1,
    deadlineMs: limits.heatInPlaceDeadlineSeconds * 1000,
    maxPerClient: limits.maxHeatInPlaceJobsPerClient,
    maxServer: limits.maxHeatInPlaceJobsServer,
  });
}

/** Stops every pool's threads. */
export async function closeComputePools(pools: ComputePools): Promise<void> {
  await Promise.all([pools.short.close(), pools.long.close(), pools.jobs.close(), pools.layers.close(), pools.data.close()]);
}
