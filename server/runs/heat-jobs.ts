/**
 * Heat-in-place jobs over a finished run: each POST becomes a job on the "jobs" compute pool with a deadline; the
 * JSON report, the HTML page and the CSV are rendered once on the worker and kept, so every later GET serves them
 * without recomputing. Jobs wait in one queue per client and start in round-robin order across clients, so one
 * client's backlog never holds back another's first job. Finished jobs are kept in memory (the newest
 * `keepFinished`, each for `keepMs`); a server restart forgets them (POST again: the result is seeded, so it is
 * the same).
 */
import { InputError, type InputProblem } from '../../shared/errors.ts';
import { newId } from '../store/sqlite.ts';
import type { ComputePool } from './compute.ts';
import { httpStatusOf } from '../http-status.ts';
import type { HeatInPlaceOutput, HeatInPlaceTask } from '../workers/compute-worker.ts';

export type HeatJobStatus = 'queued' | 'running' | 'done' | 'failed';

export interface HeatJob {
  id: string;
  runId: string;
  client: string;
  status: HeatJobStatus;
  createdAt: string;
  finishedAt: string | null;
  output: HeatInPlaceOutput | null;
  error: { code: string; message: string; details: InputProblem[]; status: number } | null;
  /** Cells × realizations of the job (what the limits count). */
  work: number;
  task: HeatInPlaceTask | null;
}

export interface HeatJobsOptions {
  pool: ComputePool;
  /** Parallel jobs (the pool's threads). */
  concurrency: number;
  deadlineMs: number;
  maxPerClient: number;
  maxServer: number;
  keepFinished?: number;
  keepMs?: number;
}

export class HeatJobs {
  private readonly jobs = new Map<string, HeatJob>();
  /** Waiting jobs, one FIFO per client; `order` is the round-robin ring of clients with waiting jobs. */
  private readonly waiting = new Map<string, HeatJob[]>();
  private order: string[] = [];
  private running = 0;

  constructor(private readonly opts: HeatJobsOptions) {}

  /** Jobs queued or running, for the client and the whole server. */
  inFlight(client?: string): number {
    let n = 0;
    for (const j of this.jobs.values()) if ((j.status === 'queued' || j.status === 'running') && (client === undefined || j.client === client)) n++;
    return n;
  }

  /** Queues a job; throws InputError 429 when the client or the server already has its limit of jobs in flight. */
  submit(input: { runId: string; client: string; task: HeatInPlaceTask; work: number }): HeatJob {
    const mine = this.inFlight(input.client);
    if (mine >= this.opts.maxPerClient) {
      throw new InputError(
        `too many heat-in-place jobs in flight for this client: ${mine} (limit maxHeatInPlaceJobsPerClient = ${this.opts.maxPerClient}); wait for one to finish`,
        [{ field: 'maxHeatInPlaceJobsPerClient', problem: `${mine} in flight, at most ${this.opts.maxPerClient}` }],
        'too_many_jobs',
      );
    }
    const all = this.inFlight();
    if (all >= this.opts.maxServer) {
      throw new InputError(
        `the server has ${all} heat-in-place jobs in flight (limit maxHeatInPlaceJobsServer = ${this.opts.maxServer}); try again shortly`,
        [{ field: 'maxHeatInPlaceJobsServer', problem: `${all} in flight, at most ${this.opts.maxServer}` }],
        'too_many_jobs',
      );
    }
    this.evict();
    const job: HeatJob = {
      id: newId('hip_'),
      runId: input.runId,
      client: input.client,
      status: 'queued',
      createdAt: new Date().toISOString(),
      finishedAt: null,
      output: null,
      error: null,
      work: input.work,
      task: input.task,
    };
    this.jobs.set(job.id, job);
    const q = this.waiting.get(job.client);
    if (q) q.push(job);
    else {
      this.waiting.set(job.client, [job]);
      this.order.push(job.client);
    }
    this.pump();
    return job;
  }

  get(runId: string, jobId: string): HeatJob | null {
    const j = this.jobs.get(jobId);
    return j && j.runId === runId ? j : null;
  }

  /** 1-based place among waiting jobs in the round-robin order (0 when running or finished). */
  position(job: HeatJob): number {
    if (job.status !== 'queued') return 0;
    const queues = this.order.map((c) => this.waiting.get(c) ?? []);
    let pos = 0;
    for (let round = 0; ; round++) {
      let any = false;
      for (const q of queues) {
        if (round >= q.length) continue;
        any = true;
        pos++;
        if (q[round] === job) return pos;
      }
      if (!any) return 0;
    }
  }

  private pump(): void {
    while (this.running < this.opts.concurrency && this.order.length > 0) {
      const client = this.order.shift()!;
      const q = this.waiting.get(client)!;
      const job = q.shift()!;
      if (q.length > 0) this.order.push(client);
      else this.waiting.delete(client);
      this.start(job);
    }
  }

  private start(job: HeatJob): void {
    this.running++;
    job.status = 'running';
    const task = job.task!;
    job.task = null; // the grids are shared memory held by the run grid cache; drop the job's reference
    this.opts.pool
      .run<HeatInPlaceOutput>(task, this.opts.deadlineMs)
      .then((out) => {
        job.output = out;
        job.status = 'done';
      })
      .catch((e: unknown) => {
        job.status = 'failed';
        if (e instanceof InputError) {
          // A deadline reached is 503 deadline_exceeded naming heatInPlaceDeadlineSeconds (the pool's limit), as
          // every deadline of the server.
          job.error = { code: e.code, message: e.message, details: e.details, status: httpStatusOf(e.code) };
        } else {
          process.stderr.write(`[${new Date().toISOString()}] heat-in-place job ${job.id} failed: ${(e as Error)?.stack ?? String(e)}\n`);
          job.error = { code: 'internal', message: 'the computation failed on the server', details: [], status: 500 };
        }
      })
      .finally(() => {
        job.finishedAt = new Date().toISOString();
        this.running--;
        this.pump();
      });
  }

  /** Drops finished jobs beyond the newest `keepFinished` and those older than `keepMs`. */
  private evict(): void {
    const keep = this.opts.keepFinished ?? 200;
    const keepMs = this.opts.keepMs ?? 24 * 3600_000;
    const finished = [...this.jobs.values()].filter((j) => j.finishedAt !== null);
    const now = Date.now();
    finished.forEach((j, i) => {
      if (finished.length - i > keep || now - Date.parse(j.finishedAt!) > keepMs) this.jobs.delete(j.id);
    });
  }

  /** Resolves when no job is queued or running (tests, shutdown). */
  async idle(): Promise<void> {
    while (this.inFlight() > 0) await new Promise((r) => setTimeout(r, 20));
  }
}
