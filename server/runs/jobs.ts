/**
 * The run job system: a fair queue in front of a piscina pool of run workers. Each client (a project, else a
 * remote address) has its own FIFO and runs start in round-robin order across clients, so one client's backlog
 * never holds back another client's first run. At most `concurrency` runs execute at once (one worker thread
 * each); each run gets a MessagePort for its progress and its cancel message (server/runs/types.ts: the pipeline
 * stops between tiles), an AbortSignal (piscina terminates the thread on abort), and a wall-clock limit after which it ends `failed` with
 * the reason. A run that throws, or whose thread dies, fails alone: the pool replaces the thread and the queue goes
 * on. Bounds (runs and cells × realizations, per client and for the server) are checked before a run is queued.
 * Starting a run returns a run token (256 random bits, kept only as its SHA-256, compared in constant time) that
 * cancelling requires; a run started through a project may also be cancelled with the project's edit token.
 */
import { MessageChannel, type MessagePort } from 'node:worker_threads';
import { Piscina } from 'piscina';
import { WORKER_EXEC_ARGV } from '../workers/exec-argv.ts';
import { InputError } from '../../shared/errors.ts';
import type { Store } from '../store/types.ts';
import { hashToken, newEditToken } from '../security.ts';
import { CANCEL_MESSAGE, type RunResult, type RunTask } from './types.ts';
import { storeCheckedRunResult } from './run-result.ts';
import { LiveRuns, isTerminal, type RunSnapshot } from './live-runs.ts';
import { checkRunBounds, runWork, type RunBounds } from './run-bounds.ts';
import { FairQueue } from './fair-queue.ts';
import { newJob, type Job, type RunSubmission } from './run-job.ts';

export { isTerminal, type RunSnapshot };

export interface RunJobsOptions {
  store: Store;
  /** Absolute path of the worker module (default export: the run function). */
  workerFile: string;
  /** Runs executing at once. */
  concurrency: number;
  /** Runs queued or running per client. */
  maxQueuedPerClient: number;
  /** Runs queued or running on the server (default unbounded). */
  maxQueuedServer?: number;
  /** Cells × realizations of one run (default unbounded). */
  maxRunWork?: number;
  /** Cells × realizations queued or running per client, and for the server (default unbounded). */
  maxQueuedWorkPerClient?: number;
  maxQueuedWorkServer?: number;
  /** Wall-clock limit of a started run, ms (default none). */
  wallClockMs?: number;
  /** Server-fault log (never given tokens or request bodies). */
  log?: (line: string) => void;
}

/** Nice value of run threads: runs are the longest work, so requests and short tasks go first. */
export const RUN_NICENESS = 10;

export class RunJobs extends LiveRuns {
  private readonly workerFile: string;
  private readonly concurrency: number;
  private readonly log: (line: string) => void;
  private readonly limits: RunBounds & { wallClockMs: number };
  private pool: Piscina | null = null;
  /** Queued runs (round-robin across clients) and what each client has in flight. */
  private readonly queue = new FairQueue<Job>();
  private readonly running = new Map<string, Job>();
  /** Cells × realizations per second per worker thread, from runs finished here (exponentially weighted). */
  private rate: number | null = null;
  /** Each running job's end of its MessagePort (progress in; the worker also takes `{ type: 'cancel' }`). */
  private readonly ports = new Map<string, MessagePort>();
  /** Runs that have ended whose final state is still being written to the store (reported from here until then). */
  private readonly settling = new Map<string, RunSnapshot>();
  private closed = false;
  /** Resolves once runs left over by a stopped server have been marked failed (submit waits for it). */
  readonly ready: Promise<void>;

  constructor(opts: RunJobsOptions) {
    super(opts.store);
    this.workerFile = opts.workerFile;
    this.concurrency = opts.concurrency;
    this.limits = {
      maxPerClient: opts.maxQueuedPerClient,
      maxQueuedServer: opts.maxQueuedServer ?? Infinity,
      maxRunWork: opts.maxRunWork ?? Infinity,
      maxQueuedWorkPerClient: opts.maxQueuedWorkPerClient ?? Infinity,
      maxQueuedWorkServer: opts.maxQueuedWorkServer ?? Infinity,
      wallClockMs: opts.wallClockMs ?? Infinity,
    };
    this.log = opts.log ?? ((l) => process.stderr.write(l + '\n'));
    // Runs left queued or running by a server that stopped can never finish: say so instead of leaving them.
    this.ready = this.store.failInterruptedRuns('the server stopped before this run finished; submit it again').then(
      () => undefined,
      (e: unknown) => this.log(`[${new Date().toISOString()}] could not mark interrupted runs failed: ${(e as Error)?.stack ?? String(e)}`),
    );
  }

  private getPool(): Piscina {
    this.pool ??= createRunPool(this.workerFile, this.concurrency, this.log);
    return this.pool;
  }

  /**
   * Queues a run, or returns the existing run with the same cache key (queued, running or done): `cached` is true
   * then, and no token is given (the run belongs to whoever started it). Bounds are checked first: the run's cells ×
   * realizations (422), the client's runs and work in flight (429), the server's (503).
   * @param cells output grid cells of the run (null when not known before it starts)
   */
  async submit(input: RunSubmission): Promise<{ id: string; cached: boolean; runToken?: string }> {
    await this.ready;
    if (this.closed) throw new InputError('the server is shutting down', [], 'shutting_down');
    const existing = await this.store.findRunByCacheKey(input.cacheKey, ['queued', 'running', 'done']);
    if (existing && (existing.status === 'done' || this.running.has(existing.id) || this.queue.inOrder().some((j) => j.id === existing.id))) {
      return { id: existing.id, cached: true };
    }
    // The same request submitted while the first was being recorded: the live one is found in memory.
    const twin = [...this.running.values(), ...this.queue.inOrder()].find((j) => j.cacheKey === input.cacheKey);
    if (twin) return { id: twin.id, cached: true };
    const work = runWork(input.request, input.cells, this.limits.maxRunWork);
    const client = this.queue.inFlight(input.client);
    checkRunBounds(this.limits, {
      work,
      clientRuns: client.runs,
      clientWork: client.work,
      serverRuns: this.queue.size + this.running.size,
      serverWork: this.queue.workTotal,
    });
    const runToken = newEditToken();
    const { rec, job } = newJob({ ...input, tokenHash: hashToken(runToken), work });
    const id = job.id;
    // The bounds are reserved before the record is written, so submissions in flight together cannot pass them all.
    this.queue.reserve(job);
    try {
      await this.store.putRun(rec);
    } catch (e) {
      this.queue.release(job);
      throw e;
    }
    this.queue.push(job);
    this.pump();
    return { id, cached: false, runToken };
  }

  protected async cancelKeys(id: string): Promise<{ tokenHash: string; projectId: string | null } | null> {
    return this.running.get(id) ?? this.queue.inOrder().find((j) => j.id === id) ?? null;
  }

  live(id: string): RunSnapshot | null {
    const ending = this.settling.get(id);
    if (ending) return { ...ending };
    const run = this.running.get(id);
    if (run) return { ...run.snapshot, estimateSeconds: this.seconds(run.work * (1 - run.snapshot.progress)) };
    const order = this.queue.inOrder();
    const k = order.findIndex((q) => q.id === id);
    if (k < 0) return null;
    // Work ahead: what the running runs have left, the runs that start before this one, and its own.
    let ahead = 0;
    for (const r of this.running.values()) ahead += r.work * (1 - r.snapshot.progress);
    for (let i = 0; i <= k; i++) ahead += order[i].work;
    return { ...order[k].snapshot, position: k + 1, estimateSeconds: this.seconds(ahead / this.concurrency) };
  }

  private seconds(work: number): number | null {
    return this.rate === null ? null : Math.round(work / this.rate);
  }

  /**
   * Cancels a queued or running run: a queued one leaves the queue, a running one is sent the cancel message and its
   * worker thread terminated. Returns the state after the call, or null for an unknown id.
   */
  async cancel(id: string): Promise<RunSnapshot | null> {
    const queued = this.queue.remove(id);
    if (queued) {
      const job = queued;
      this.finish(job, { status: 'cancelled', progress: job.snapshot.progress, message: 'cancelled before it started' });
      return { ...job.snapshot };
    }
    const job = this.running.get(id);
    if (job) {
      // Ask the pipeline to stop between tiles, then stop the thread itself.
      this.stopRunning(job);
      // The pool's rejection settles the job (see start); report the outcome now.
      return { ...job.snapshot, status: 'cancelled', message: 'cancelled' };
    }
    return this.snapshot(id);
  }

  /** The one way a running run is stopped: the cancel message on its port, then the end of its thread. */
  private stopRunning(job: Job): void {
    try {
      this.ports.get(job.id)?.postMessage(CANCEL_MESSAGE);
    } catch {
      // the port may already be closed: the abort below still ends the run
    }
    job.abort.abort();
  }

  /** Runs queued or running now. */
  counts(): { queued: number; running: number } {
    return { queued: this.queue.size, running: this.running.size };
  }

  /** Resolves when no run is queued or running (for tests and shutdown). */
  async idle(): Promise<void> {
    while (this.queue.size > 0 || this.running.size > 0 || this.settling.size > 0) await new Promise((r) => setTimeout(r, 20));
  }

  /** Cancels everything and stops the pool. */
  async close(): Promise<void> {
    this.closed = true;
    for (const j of this.queue.inOrder()) await this.cancel(j.id);
    for (const id of [...this.running.keys()]) await this.cancel(id);
    await this.idle();
    await this.pool?.destroy();
    this.pool = null;
  }

  private pump(): void {
    while (this.running.size < this.concurrency) {
      const job = this.queue.next();
      if (!job) return;
      this.start(job);
    }
  }

  /** Applies a change to the live snapshot and tells subscribers; with `persist`, queues its write (returned). */
  private update(job: Job, patch: Partial<RunSnapshot>, persist: boolean): Promise<void> {
    Object.assign(job.snapshot, patch);
    this.emit(job.snapshot);
    if (!persist) return job.writes;
    const fields = { status: job.snapshot.status, progress: job.snapshot.progress, message: job.snapshot.message };
    job.writes = job.writes
      .then(() => this.store.updateRun(job.id, fields))
      .catch((e: unknown) => this.log(`[${new Date().toISOString()}] run ${job.id}: could not record its state: ${(e as Error)?.stack ?? String(e)}`));
    return job.writes;
  }

  private finish(job: Job, patch: Pick<RunSnapshot, 'status' | 'progress' | 'message'>): void {
    const wasRunning = this.running.delete(job.id);
    this.queue.release(job);
    if (wasRunning && patch.status === 'done') {
      const seconds = Math.max(0.05, (Date.now() - job.startedAt) / 1000);
      const r = job.work / seconds;
      this.rate = this.rate === null ? r : 0.7 * this.rate + 0.3 * r;
    }
    // Until the final state is in the store, readers get it from here.
    this.settling.set(job.id, job.snapshot);
    void this.update(job, patch, true).finally(() => this.settling.delete(job.id));
  }

  private start(job: Job): void {
    this.running.set(job.id, job);
    job.startedAt = Date.now();
    void this.update(job, { status: 'running', message: 'starting' }, true);
    // The wall-clock limit: stop the thread and record why.
    const wallClock = Number.isFinite(this.limits.wallClockMs)
      ? setTimeout(() => {
          job.timedOut = true;
          this.stopRunning(job);
        }, this.limits.wallClockMs)
      : null;
    const { port1, port2 } = new MessageChannel();
    this.ports.set(job.id, port1);
    let lastWrite = 0;
    port1.on('message', (m: unknown) => {
      const msg = m as { type?: unknown; fraction?: unknown; message?: unknown };
      if (msg?.type !== 'progress' || job.snapshot.status !== 'running') return;
      const f = typeof msg.fraction === 'number' && Number.isFinite(msg.fraction) ? Math.min(1, Math.max(0, msg.fraction)) : job.snapshot.progress;
      const text = typeof msg.message === 'string' ? msg.message.slice(0, 500) : job.snapshot.message;
      // Progress never goes backwards; the store is written at most four times a second.
      const now = Date.now();
      const persist = now - lastWrite >= 250;
      if (persist) lastWrite = now;
      void this.update(job, { progress: Math.max(job.snapshot.progress, f), message: text }, persist);
    });
    const task: RunTask = { request: job.request, datasets: job.datasets, port: port2 };
    let settled: Promise<unknown>;
    try {
      settled = this.getPool().run(task, {
        signal: job.abort.signal,
        transferList: [port2] as unknown as NonNullable<Parameters<Piscina['run']>[1]>['transferList'],
      });
    } catch (e) {
      settled = Promise.reject(e instanceof Error ? e : new Error(String(e)));
    }
    settled
      .then(async (result) => {
        if (job.abort.signal.aborted) throw new Error('cancelled');
        await this.storeResult(job, result as RunResult);
      })
      .catch((err: unknown) => {
        if (job.timedOut) {
          const s = this.limits.wallClockMs / 1000;
          this.finish(job, {
            status: 'failed',
            progress: job.snapshot.progress,
            message: `the run took longer than the wall-clock limit (runWallClockSeconds = ${s} s) and was stopped; ask for fewer cells or realizations`,
          });
          return;
        }
        if (job.abort.signal.aborted) {
          this.finish(job, { status: 'cancelled', progress: job.snapshot.progress, message: 'cancelled' });
          return;
        }
        const e = err as { name?: string; message?: string; stack?: string };
        // Errors cross the thread boundary as plain Errors: the stack still names the class.
        const userFault = e?.name === 'InputError' || /^InputError\b/.test(e?.stack ?? '');
        if (!userFault) this.log(`[${new Date().toISOString()}] run ${job.id} failed: ${e?.stack ?? e?.message ?? String(err)}`);
        this.finish(job, { status: 'failed', progress: job.snapshot.progress, message: String(e?.message ?? err).slice(0, 2000) });
      })
      // A store that cannot record the outcome (disk full, closed) is a server fault: log it, never crash.
      .catch((e: unknown) => this.log(`[${new Date().toISOString()}] run ${job.id}: could not record the outcome: ${(e as Error)?.stack ?? String(e)}`))
      .finally(() => {
        if (wallClock !== null) clearTimeout(wallClock);
        this.ports.delete(job.id);
        port1.close();
        this.pump();
      });
  }

  /** Stores a finished run's files and grids content-addressed, and its record, in one transaction. */
  private async storeResult(job: Job, result: RunResult): Promise<void> {
    await job.writes;
    await storeCheckedRunResult(this.store, job.id, result);
    this.finish(job, { status: 'done', progress: 1, message: 'done' });
  }
}

/** The worker threads of runs: started on first use, at most `concurrency`, at a lowered priority. */
function createRunPool(workerFile: string, concurrency: number, log: (line: string) => void): Piscina {
  const pool = new Piscina({
    filename: workerFile,
    execArgv: WORKER_EXEC_ARGV,
    minThreads: 0,
    maxThreads: concurrency,
    idleTimeout: 60_000,
    // geotiff pulls in the web-worker package, which destructures workerData at import time in any worker thread:
    // an object keeps it from throwing (and from taking the thread over as a web worker). Run threads run at a
    // lowered priority (server/workers/priority.ts).
    workerData: { niceness: RUN_NICENESS },
    // A run's result (grids, GeoTIFFs) may be large; leave room above the default heap.
    resourceLimits: { maxOldGenerationSizeMb: 2048 },
  });
  // A thread that dies outside a task is reported here; the task itself is rejected and fails alone.
  pool.on('error', (e: Error) => log(`[${new Date().toISOString()}] run worker error: ${e.stack ?? e.message}`));
  return pool;
}
