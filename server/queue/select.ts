/**
 * Where runs execute: in this server's own worker threads (server/runs/jobs.ts, the default), or on the Redis run
 * queue shared by servers and `subtherm worker` processes (server/queue/redis-jobs.ts) when a queue URL is given
 * (SUBTHERM_QUEUE_URL or --queue-url). Both keep one contract, so the routes never ask which.
 */
import { RunJobs, type RunJobsOptions } from '../runs/jobs.ts';
import { RedisRunJobs } from './redis-jobs.ts';

export type RunQueue = RunJobs | RedisRunJobs;

/** The in-process job system, or the Redis queue when `queueUrl` is a non-empty string. */
export function createRunQueue(opts: RunJobsOptions & { queueUrl?: string | null; queuePrefix?: string }): RunQueue {
  if (opts.queueUrl === undefined || opts.queueUrl === null || opts.queueUrl === '') return new RunJobs(opts);
  return new RedisRunJobs({ ...opts, url: opts.queueUrl, prefix: opts.queuePrefix });
}

/** What /api/health says of where runs execute: the queue's kind and the run slots (threads) that serve it. */
export function queueHealth(jobs: RunQueue, inProcessSlots: number): { queue: 'in-process' | 'redis'; workers: number; workerProcesses?: number } {
  if (jobs instanceof RedisRunJobs) return jobs.health();
  return { queue: 'in-process', workers: inProcessSlots };
}
