/**
 * The run job system: a FIFO queue in front of a piscina pool of run workers. At most `concurrency` runs execute
 * at once (one worker thread each); each run gets a MessagePort for its progress, an AbortSignal (piscina
 * terminates the thread on abort) and a shared cancel flag the pipeline checks between tiles. A run that throws,
 * or whose thread dies, fails alone: the pool replaces the thread and the queue goes on.
 */
import { EventEmitter } from 'node:events';
import { MessageChannel } from 'node:worker_threads';
import { Piscina } from 'piscina';
import { InputError } from '../../shared/errors.ts';
import type { RunRequest } from '../../shared/schema/run.ts';
import type { RunRecord, RunStatus, Store } from '../store/types.ts';
import { newId } from '../store/sqlite.ts';
import { LAYER_CONTENT_TYPES, LAYER_EXTS, type LayerExt, type RunResult, type RunTask, type SerializedGrid } from './types.ts';

export interface RunJobsOptions {
  store: Store;
  /** Absolute path of the worker module (default export: the run function). */
  workerFile: string;
  /** Runs executing at once. */
  concurrency: number;
  /** Runs queued or running per client address. */
  maxQueuedPerClient: number;
  /** Server-fault log (never given tokens or request bodies). */
  log?: (line: string) => void;
}

/** What GET /api/runs/:id and the event stream report while a run is live. */
export interface RunSnapshot {
  id: string;
  status: RunStatus;
  progress: number;
  message: string;
}

interface Job {
  id: string;
  client: string;
  request: RunRequest;
  datasets: Record<string, { kind: string; body: string }>;
  abort: AbortController;
  cancelFlag: SharedArrayBuffer;
  snapshot: RunSnapshot;
}

const TERMINAL: ReadonlySet<RunStatus> = new Set(['done', 'failed', 'cancelled']);
export const isTerminal = (s: RunStatus) => TERMINAL.has(s);

/** Layer names become file names in URLs: letters, digits, `_`, `-` and single dots. */
const LAYER_NAME = /^[A-Za-z0-9_-]+(\.[A-Za-z0-9_-]+)*$/;

export class RunJobs {
  private readonly store: Store;
  private readonly workerFile: string;
  private readonly concurrency: number;
  private readonly maxPerClient: number;
  private readonly log: (line: string) => void;
  private pool: Piscina | null = null;
  private readonly queue: Job[] = [];
  private readonly running = new Map<string, Job>();
  private readonly perClient = new Map<string, number>();
  /** Each running job's end of its MessagePort (progress in; the worker also takes `{ type: 'cancel' }`). */
  private readonly ports = new Map<string, import('node:worker_threads').MessagePort>();
  private readonly events = new EventEmitter();
  private closed = false;

  constructor(opts: RunJobsOptions) {
    this.store = opts.store;
    this.workerFile = opts.workerFile;
    this.concurrency = opts.concurrency;
    this.maxPerClient = opts.maxQueuedPerClient;
    this.log = opts.log ?? ((l) => process.stderr.write(l + '\n'));
    this.events.setMaxListeners(0);
    // Runs left queued or running by a server that stopped can never finish: say so instead of leaving them.
    this.store.failInterruptedRuns('the server stopped before this run finished; submit it again');
  }

  private getPool(): Piscina {
    if (this.pool) return this.pool;
    const pool = new Piscina({
      filename: this.workerFile,
      execArgv: ['--import', 'tsx'],
      minThreads: 0,
      maxThreads: this.concurrency,
      idleTimeout: 60_000,
      // geotiff pulls in the web-worker package, which destructures workerData at import time in any worker thread:
      // an empty object keeps it from throwing (and from taking the thread over as a web worker).
      workerData: {},
      // A run's result (grids, GeoTIFFs) may be large; leave room above the default heap.
      resourceLimits: { maxOldGenerationSizeMb: 2048 },
    });
    // A thread that dies outside a task is reported here; the task itself is rejected and fails alone.
    pool.on('error', (e: Error) => this.log(`[${new Date().toISOString()}] run worker error: ${e.stack ?? e.message}`));
    this.pool = pool;
    return pool;
  }

  /**
   * Queues a run, or returns the existing run with the same cache key (queued, running or done): `cached` is true
   * then. Throws InputError 429 when the client already has maxQueuedPerClient runs in flight.
   */
  submit(input: { request: RunRequest; datasets: Record<string, { kind: string; body: string }>; cacheKey: string; client: string }): { id: string; cached: boolean } {
    if (this.closed) throw new InputError('the server is shutting down', [], 'shutting_down', 503);
    const existing = this.store.findRunByCacheKey(input.cacheKey, ['queued', 'running', 'done']);
    if (existing && (existing.status === 'done' || this.running.has(existing.id) || this.queue.some((j) => j.id === existing.id))) {
      return { id: existing.id, cached: true };
    }
    const inFlight = this.perClient.get(input.client) ?? 0;
    if (inFlight >= this.maxPerClient) {
      throw new InputError(
        `too many runs in flight: ${inFlight} queued or running for this client (limit ${this.maxPerClient}); wait for one to finish or cancel one`,
        [{ field: 'runs', problem: `at most ${this.maxPerClient} queued or running runs per client` }],
        'too_many_runs',
        429,
      );
    }
    const now = new Date().toISOString();
    const id = newId('run_');
    const rec: RunRecord = {
      id, cacheKey: input.cacheKey, request: input.request, status: 'queued', progress: 0, message: 'queued',
      layers: [], summary: null, warnings: [], model: null, grids: [], client: input.client, createdAt: now, updatedAt: now,
    };
    this.store.putRun(rec);
    const job: Job = {
      id, client: input.client, request: input.request, datasets: input.datasets,
      abort: new AbortController(), cancelFlag: new SharedArrayBuffer(4),
      snapshot: { id, status: 'queued', progress: 0, message: 'queued' },
    };
    this.perClient.set(input.client, inFlight + 1);
    this.queue.push(job);
    this.pump();
    return { id, cached: false };
  }

  /** The live state of a queued or running run (null once it has finished: read the store then). */
  live(id: string): RunSnapshot | null {
    const j = this.running.get(id) ?? this.queue.find((q) => q.id === id);
    return j ? { ...j.snapshot } : null;
  }

  /** Current state from memory or the store; null for an unknown id. */
  snapshot(id: string): RunSnapshot | null {
    const l = this.live(id);
    if (l) return l;
    const r = this.store.getRun(id);
    return r ? { id, status: r.status, progress: r.progress, message: r.message } : null;
  }

  /** Calls `fn` on every change of the run until it ends; returns the unsubscribe function. */
  subscribe(id: string, fn: (s: RunSnapshot) => void): () => void {
    this.events.on(id, fn);
    return () => this.events.off(id, fn);
  }

  /**
   * Cancels a queued or running run: a queued one leaves the queue, a running one gets its cancel flag set and its
   * worker thread terminated. Returns the state after the call, or null for an unknown id.
   */
  cancel(id: string): RunSnapshot | null {
    const qi = this.queue.findIndex((j) => j.id === id);
    if (qi >= 0) {
      const [job] = this.queue.splice(qi, 1);
      this.finish(job, { status: 'cancelled', progress: job.snapshot.progress, message: 'cancelled before it started' });
      return { ...job.snapshot };
    }
    const job = this.running.get(id);
    if (job) {
      // Ask the pipeline to stop between tiles (port message and shared flag), then stop the thread itself.
      Atomics.store(new Int32Array(job.cancelFlag), 0, 1);
      try {
        this.ports.get(id)?.postMessage({ type: 'cancel' });
      } catch {
        // the port may already be closed: the abort below still ends the run
      }
      job.abort.abort();
      // The pool's rejection settles the job (see start); report the outcome now.
      return { ...job.snapshot, status: 'cancelled', message: 'cancelled' };
    }
    return this.snapshot(id);
  }

  /** Runs queued or running now. */
  counts(): { queued: number; running: number } {
    return { queued: this.queue.length, running: this.running.size };
  }

  /** Resolves when no run is queued or running (for tests and shutdown). */
  async idle(): Promise<void> {
    while (this.queue.length > 0 || this.running.size > 0) await new Promise((r) => setTimeout(r, 20));
  }

  /** Cancels everything and stops the pool. */
  async close(): Promise<void> {
    this.closed = true;
    for (const j of [...this.queue]) this.cancel(j.id);
    for (const id of [...this.running.keys()]) this.cancel(id);
    await this.idle();
    await this.pool?.destroy();
    this.pool = null;
  }

  private pump(): void {
    while (this.running.size < this.concurrency && this.queue.length > 0) {
      const job = this.queue.shift()!;
      this.start(job);
    }
  }

  private update(job: Job, patch: Partial<RunSnapshot>, persist: boolean): void {
    Object.assign(job.snapshot, patch);
    this.events.emit(job.id, { ...job.snapshot });
    if (persist) this.store.updateRun(job.id, { status: job.snapshot.status, progress: job.snapshot.progress, message: job.snapshot.message });
  }

  private finish(job: Job, patch: Pick<RunSnapshot, 'status' | 'progress' | 'message'>): void {
    this.running.delete(job.id);
    const n = (this.perClient.get(job.client) ?? 1) - 1;
    if (n > 0) this.perClient.set(job.client, n);
    else this.perClient.delete(job.client);
    this.update(job, patch, true);
  }

  private start(job: Job): void {
    this.running.set(job.id, job);
    this.update(job, { status: 'running', message: 'starting' }, true);
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
      try {
        this.update(job, { progress: Math.max(job.snapshot.progress, f), message: text }, persist);
      } catch (e) {
        this.log(`[${new Date().toISOString()}] run ${job.id}: could not record progress: ${(e as Error).message}`);
      }
    });
    const task: RunTask = { request: job.request, datasets: job.datasets, port: port2, cancelFlag: job.cancelFlag };
    let settled: Promise<unknown>;
    try {
      settled = this.getPool().run(task, { signal: job.abort.signal, transferList: [port2] as unknown as NonNullable<Parameters<Piscina['run']>[1]>['transferList'] });
    } catch (e) {
      settled = Promise.reject(e);
    }
    settled
      .then((result) => {
        if (job.abort.signal.aborted) throw new Error('cancelled');
        this.storeResult(job, result as RunResult);
      })
      .catch((err: unknown) => {
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
        this.ports.delete(job.id);
        port1.close();
        this.pump();
      });
  }

  /** Stores a finished run's files and grids content-addressed, and its record, in one transaction. */
  private storeResult(job: Job, result: RunResult): void {
    const bad = (why: string) => new Error(`the run worker returned a malformed result: ${why}`);
    if (result === null || typeof result !== 'object' || !Array.isArray(result.layers)) throw bad('no layers array');
    const heat = result.grids?.heatFlow;
    checkGrid(heat, 'grids.heatFlow', bad);
    if (result.grids.heatFlowSd !== undefined) checkGrid(result.grids.heatFlowSd, 'grids.heatFlowSd', bad);
    const names = new Set<string>();
    for (const l of result.layers) {
      const name = l?.info?.name;
      if (typeof name !== 'string' || !LAYER_NAME.test(name)) throw bad(`layer name ${JSON.stringify(name)} is not a file name`);
      if (names.has(name)) throw bad(`duplicate layer ${name}`);
      names.add(name);
      for (const f of l.files ?? []) {
        if (!LAYER_EXTS.includes(f.ext) || !(f.bytes instanceof Uint8Array)) throw bad(`layer ${name}: bad file ${String(f?.ext)}`);
      }
    }
    const grids = (Object.entries(result.grids) as [string, SerializedGrid | undefined][])
      .filter((e): e is [string, SerializedGrid] => e[1] !== undefined)
      .map(([name, g]) => ({ name, meta: { width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs: g.crs, units: g.units }, values: g.values }));
    this.store.storeRunResult(job.id, {
      files: result.layers.flatMap((l) => l.files.map((f) => ({ name: l.info.name, ext: f.ext, bytes: f.bytes, contentType: LAYER_CONTENT_TYPES[f.ext as LayerExt] }))),
      grids,
      record: {
        layers: result.layers.map((l) => l.info),
        summary: result.summary ?? {},
        warnings: Array.isArray(result.warnings) ? result.warnings.map(String) : [],
        model: result.model ?? null,
        grids: grids.map((g) => g.name),
      },
    });
    this.finish(job, { status: 'done', progress: 1, message: 'done' });
  }
}

function checkGrid(g: SerializedGrid | undefined, label: string, bad: (why: string) => Error): void {
  if (g === undefined || g === null) throw bad(`${label} is missing`);
  if (!(Number.isInteger(g.width) && g.width > 0 && Number.isInteger(g.height) && g.height > 0)) throw bad(`${label} has no size`);
  if (!(g.values instanceof Float32Array) || g.values.length !== g.width * g.height) throw bad(`${label} values are not width × height Float32`);
  if (!(g.dx > 0 && g.dy > 0 && Number.isFinite(g.west) && Number.isFinite(g.north))) throw bad(`${label} has no georeferencing`);
  if (typeof g.crs !== 'string') throw bad(`${label} has no CRS`);
}
