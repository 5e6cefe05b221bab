/**
 * Pools of worker threads for the work that must never run on the request thread: column bands (Monte Carlo),
 * sections and heat in place. Each pool has a bounded queue and each task a deadline: a task still unfinished at
 * its deadline has its thread terminated (piscina aborts it) and is answered with an error naming the limit.
 * Errors the caller caused cross the thread boundary as plain data and are rethrown as InputError. Short and long
 * tasks go to different pools (server/app.ts), the long ones on lowered-priority threads, so a long task never
 * holds a short one behind it in a queue or off the cores.
 */
import { fileURLToPath } from 'node:url';
import { Piscina } from 'piscina';
import { WORKER_EXEC_ARGV } from '../workers/exec-argv.ts';
import { InputError, type InputProblem } from '../../shared/errors.ts';
import type { ComputeTask, ComputeReply } from '../workers/compute-worker.ts';

export const COMPUTE_WORKER_FILE = fileURLToPath(new URL('../workers/compute-worker.ts', import.meta.url));

export interface ComputePoolOptions {
  /** Label used in messages ("interactive", "jobs"). */
  name: string;
  threads: number;
  /** Most tasks waiting for a thread; one more is refused with 503 server_busy. */
  maxQueue: number;
  /** Name of the limit in /api/limits that sets the deadline (named in the error). */
  deadlineLimit: string;
  /** Name of the limit in /api/limits that bounds the queue (named in the 503). */
  queueLimit: string;
  /**
   * Nice value of the pool's threads (server/workers/priority.ts): 0 for short interactive tasks, 10 for long ones,
   * so long work never starves short work or the request thread of CPU.
   */
  niceness?: number;
  /** Keep all threads started once the pool is first used (short tasks then never wait for a thread to start). */
  keepWarm?: boolean;
  workerFile?: string;
}

/** Seconds a client is told to wait (Retry-After) when a pool's queue is full. */
export const BUSY_RETRY_AFTER_SECONDS = 2;

/** A limit was exceeded while the work ran (the deadline). */
export class DeadlineError extends InputError {}

export class ComputePool {
  private pool: Piscina | null = null;
  /** Tasks submitted and not yet settled (queued in piscina or running). */
  private inFlight = 0;
  private closed = false;

  constructor(private readonly opts: ComputePoolOptions) {}

  private getPool(): Piscina {
    if (this.pool) return this.pool;
    this.pool = new Piscina({
      filename: this.opts.workerFile ?? COMPUTE_WORKER_FILE,
      execArgv: WORKER_EXEC_ARGV,
      minThreads: this.opts.keepWarm === true ? this.opts.threads : 0,
      maxThreads: this.opts.threads,
      idleTimeout: 30_000,
      // geotiff's web-worker dependency reads workerData at import time in any worker thread (see jobs.ts).
      workerData: { niceness: this.opts.niceness ?? 0 },
      resourceLimits: { maxOldGenerationSizeMb: 2048 },
    });
    this.pool.on('error', (e: Error) => process.stderr.write(`[${new Date().toISOString()}] ${this.opts.name} worker error: ${e.stack ?? e.message}\n`));
    return this.pool;
  }

  /** Tasks queued or running now. */
  load(): number {
    return this.inFlight;
  }

  /**
   * Runs a task on a worker thread within `deadlineMs` (counted from the call, waiting included). Rejects with
   * InputError: 503 server_busy when the queue is full, 503 deadline_exceeded at the deadline, or the task's own
   * InputError (4xx) when the input was at fault. Buffers in `transferList` move to the worker (no copy; they are
   * unusable here afterwards).
   */
  async run<T>(task: ComputeTask, deadlineMs: number, signal?: AbortSignal, transferList?: ArrayBuffer[]): Promise<T> {
    if (this.closed) throw new InputError('the server is shutting down', [], 'shutting_down');
    if (this.inFlight >= this.opts.threads + this.opts.maxQueue) {
      throw new InputError(
        `the server is busy: ${this.inFlight - this.opts.threads} ${this.opts.name} tasks are waiting (limit ${this.opts.queueLimit} = ${this.opts.maxQueue}); try again in a few seconds`,
        [{ field: this.opts.queueLimit, problem: `at most ${this.opts.maxQueue} waiting ${this.opts.name} tasks` }],
        'server_busy',
      );
    }
    const deadline = AbortSignal.timeout(deadlineMs);
    const both = signal ? AbortSignal.any([deadline, signal]) : deadline;
    this.inFlight++;
    try {
      const reply = (await this.getPool().run(task, { signal: both, transferList })) as ComputeReply;
      if (!reply.ok) throw new InputError(reply.error.message, reply.error.details, reply.error.code);
      return reply.value as T;
    } catch (e) {
      if (deadline.aborted) {
        const s = deadlineMs / 1000;
        throw new DeadlineError(
          `the computation did not finish within ${s} s (limit ${this.opts.deadlineLimit} = ${s}); ask for less work (fewer realizations, a smaller area) or try again when the server is less busy`,
          [{ field: this.opts.deadlineLimit, problem: `at most ${s} s per task` }],
          'deadline_exceeded',
        );
      }
      if (signal?.aborted) throw new InputError('cancelled', [], 'cancelled');
      throw e;
    } finally {
      this.inFlight--;
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    await this.pool?.destroy();
    this.pool = null;
  }
}

export type { InputProblem };
