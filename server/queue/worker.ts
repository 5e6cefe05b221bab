/**
 * A queue worker (`subtherm worker`): takes runs from the Redis run queue (server/queue/scripts.ts) in round-robin
 * order across clients, runs each on a thread of its own piscina pool with the same run worker as the in-process job
 * system (server/workers/run-worker.ts), publishes progress for every server's event streams, and stores the result
 * in the shared Store. While it runs a run it renews the run's lease; a cancel from any server, or a lease it lost
 * (it stalled and the run was handed on), stops the run's thread. Several workers, on one machine or many, share the
 * queue; a worker killed mid-run leaves its runs to the reaper (server/queue/connection.ts).
 */
import { MessageChannel, type MessagePort } from 'node:worker_threads';
import { Piscina } from 'piscina';
import { WORKER_EXEC_ARGV } from '../workers/exec-argv.ts';
import type { RunRequest } from '../../shared/schema/run.ts';
import type { Store } from '../store/types.ts';
import { newId } from '../store/sqlite.ts';
import { RUN_NICENESS } from '../runs/jobs.ts';
import { storeCheckedRunResult } from '../runs/run-result.ts';
import { CANCEL_MESSAGE, type RunResult, type RunTask, type StoredDataset } from '../runs/types.ts';
import { LEASE_MS, QueueRedis, REAP_MS, RENEW_MS, type QueueSnapshot } from './connection.ts';

export interface QueueWorkerOptions {
  store: Store;
  url: string;
  prefix?: string;
  /** Absolute path of the run worker module. */
  workerFile: string;
  /** Runs at once (one thread each). */
  concurrency: number;
  /** Wall-clock limit of a run, ms (default none). */
  wallClockMs?: number;
  log?: (line: string) => void;
}

interface Held {
  id: string;
  abort: AbortController;
  port: MessagePort;
  /** Why the run is being stopped: a cancel, a lost lease, the wall-clock limit or the worker stopping. */
  stop: 'cancel' | 'lost' | 'timeout' | 'shutdown' | null;
  snapshot: QueueSnapshot;
  writes: Promise<void>;
}

export class QueueWorker {
  readonly id = newId('wkr_');
  private readonly opts: QueueWorkerOptions;
  private readonly log: (line: string) => void;
  private q: QueueRedis | null = null;
  private pool: Piscina | null = null;
  private readonly held = new Map<string, Held>();
  private timers: NodeJS.Timeout[] = [];
  private stopping = false;
  private claiming = false;

  constructor(opts: QueueWorkerOptions) {
    this.opts = opts;
    this.log = opts.log ?? ((l) => process.stderr.write(l + '\n'));
  }

  /** Connects, says it is alive, and starts taking runs. */
  async start(): Promise<void> {
    const q = await QueueRedis.connect(this.opts.url, { prefix: this.opts.prefix, log: this.log });
    this.q = q;
    q.sub.on('message', (channel: string, id: string) => {
      if (channel === q.key('cancel')) this.stopRun(id, 'cancel');
    });
    await q.sub.subscribe(q.key('cancel'));
    this.pool = new Piscina({
      filename: this.opts.workerFile,
      execArgv: WORKER_EXEC_ARGV,
      minThreads: 0,
      maxThreads: this.opts.concurrency,
      idleTimeout: 60_000,
      // See server/runs/jobs.ts: workerData must be an object; run threads run at a lowered priority.
      workerData: { niceness: RUN_NICENESS },
      resourceLimits: { maxOldGenerationSizeMb: 2048 },
    });
    this.pool.on('error', (e: Error) => this.log(`[${new Date().toISOString()}] run worker error: ${e.stack ?? e.message}`));
    await this.renew();
    const every = (ms: number, fn: () => Promise<void>) => {
      const t = setInterval(() => void fn().catch((e: unknown) => this.log(`[${new Date().toISOString()}] worker ${this.id}: ${(e as Error).message}`)), ms);
      this.timers.push(t);
    };
    every(RENEW_MS, () => this.renew());
    every(REAP_MS, () => q.reap(this.opts.store));
    every(250, () => this.claim());
    await this.claim();
  }

  private get queue(): QueueRedis {
    if (this.q === null) throw new Error('the worker is not connected');
    return this.q;
  }

  /** Runs held now (for tests and the log). */
  runningIds(): string[] {
    return [...this.held.keys()];
  }

  /** Renews the leases of the runs held and the heartbeat; stops the runs Redis says are no longer this worker's. */
  private async renew(): Promise<void> {
    const stop = (await this.queue.script('renew', [this.id, Date.now(), LEASE_MS, this.opts.concurrency, ...this.held.keys()])) as string[];
    for (let i = 0; i < stop.length; i += 2) this.stopRun(stop[i], stop[i + 1] === 'cancel' ? 'cancel' : 'lost');
  }

  /** Takes runs while a slot is free. */
  private async claim(): Promise<void> {
    if (this.claiming || this.stopping) return;
    this.claiming = true;
    try {
      while (!this.stopping && this.held.size < this.opts.concurrency) {
        const got = (await this.queue.script('claim', [this.id, Date.now(), LEASE_MS])) as [string, string, string] | null;
        if (got === null) break;
        this.begin(got[0], Number(got[1]), got[2]);
      }
    } finally {
      this.claiming = false;
    }
  }

  /** Stops a held run's thread (the cancel message first, so the pipeline stops between tiles). */
  private stopRun(id: string, why: NonNullable<Held['stop']>): void {
    const h = this.held.get(id);
    if (!h || h.stop !== null) return;
    h.stop = why;
    try {
      h.port.postMessage(CANCEL_MESSAGE);
    } catch {
      // the port may be closed already: the abort below still ends the run
    }
    h.abort.abort();
  }

  /** Records a state change: published at once for every server, written to the Store when `persist`. */
  private note(h: Held, patch: Partial<QueueSnapshot>, persist: boolean): Promise<void> {
    Object.assign(h.snapshot, patch);
    const s = { ...h.snapshot };
    h.writes = h.writes
      .then(async () => {
        if (persist) await this.opts.store.updateRun(h.id, { status: s.status, progress: s.progress, message: s.message });
        await this.queue.publish(s);
      })
      .catch((e: unknown) => this.log(`[${new Date().toISOString()}] run ${h.id}: could not record its state: ${(e as Error).message}`));
    return h.writes;
  }

  private begin(id: string, attempt: number, payloadJson: string): void {
    const { port1, port2 } = new MessageChannel();
    const h: Held = {
      id,
      abort: new AbortController(),
      port: port1,
      stop: null,
      snapshot: { id, status: 'running', progress: 0, message: 'starting' },
      writes: Promise.resolve(),
    };
    this.held.set(id, h);
    void this.note(h, { message: attempt > 1 ? `starting again (start ${attempt})` : 'starting' }, true);
    const wall = this.opts.wallClockMs;
    const timer = wall !== undefined && Number.isFinite(wall) ? setTimeout(() => this.stopRun(id, 'timeout'), wall) : null;
    let lastWrite = 0,
      lastPublish = 0;
    port1.on('message', (m: unknown) => {
      const msg = m as { type?: unknown; fraction?: unknown; message?: unknown };
      if (msg?.type !== 'progress' || h.stop !== null) return;
      const f = typeof msg.fraction === 'number' && Number.isFinite(msg.fraction) ? Math.min(1, Math.max(0, msg.fraction)) : h.snapshot.progress;
      const text = typeof msg.message === 'string' ? msg.message.slice(0, 500) : h.snapshot.message;
      // Published at most ten times a second, written to the Store at most four times a second.
      const now = Date.now();
      if (now - lastPublish < 100) return;
      lastPublish = now;
      const persist = now - lastWrite >= 250;
      if (persist) lastWrite = now;
      void this.note(h, { progress: Math.max(h.snapshot.progress, f), message: text }, persist);
    });
    const payload = JSON.parse(payloadJson) as { request: RunRequest; datasets: Record<string, StoredDataset> };
    const task: RunTask = { request: payload.request, datasets: payload.datasets, port: port2 };
    const settled = this.pool!.run(task, {
      signal: h.abort.signal,
      transferList: [port2] as unknown as NonNullable<Parameters<Piscina['run']>[1]>['transferList'],
    }) as Promise<RunResult>;
    void settled
      .then(
        (result) => this.end(h, result, null),
        (err: unknown) => this.end(h, null, err),
      )
      .catch((e: unknown) => this.log(`[${new Date().toISOString()}] run ${id}: could not record the outcome: ${(e as Error)?.stack ?? String(e)}`))
      .finally(() => {
        if (timer !== null) clearTimeout(timer);
        port1.close();
        this.held.delete(id);
        void this.claim().catch(() => undefined);
      });
  }

  /** Records how a run ended, unless it is no longer this worker's (then the worker that holds it records it). */
  private async end(h: Held, result: RunResult | null, err: unknown): Promise<void> {
    const q = this.queue;
    await h.writes;
    if (h.stop === 'lost' || h.stop === 'shutdown') return;
    const [holder, status] = await q.cmd.hmget(q.key(`run:${h.id}`), 'worker', 'status');
    if (holder !== this.id || status !== 'running') return;
    let end: QueueSnapshot;
    if (result !== null && h.stop === null) {
      try {
        await storeCheckedRunResult(this.opts.store, h.id, result);
        end = { id: h.id, status: 'done', progress: 1, message: 'done' };
      } catch (e) {
        end = { id: h.id, status: 'failed', progress: h.snapshot.progress, message: String((e as Error).message).slice(0, 2000) };
      }
    } else if (h.stop === 'cancel') {
      end = { id: h.id, status: 'cancelled', progress: h.snapshot.progress, message: 'cancelled' };
    } else if (h.stop === 'timeout') {
      const s = (this.opts.wallClockMs ?? 0) / 1000;
      end = {
        id: h.id,
        status: 'failed',
        progress: h.snapshot.progress,
        message: `the run took longer than the wall-clock limit (runWallClockSeconds = ${s} s) and was stopped; ask for fewer cells or realizations`,
      };
    } else {
      const e = err as { name?: string; message?: string; stack?: string };
      const userFault = e?.name === 'InputError' || /^InputError\b/.test(e?.stack ?? '');
      if (!userFault) this.log(`[${new Date().toISOString()}] run ${h.id} failed: ${e?.stack ?? e?.message ?? String(err)}`);
      end = { id: h.id, status: 'failed', progress: h.snapshot.progress, message: String(e?.message ?? err).slice(0, 2000) };
    }
    await this.opts.store.updateRun(h.id, { status: end.status, progress: end.progress, message: end.message });
    await q.publish(end);
    await q.script('finish', [h.id, this.id]);
  }

  /**
   * Stops taking runs and hands the held ones back to the queue at once (their start is not counted), then
   * disconnects. Used on SIGTERM; a SIGKILLed worker's runs are handed on by the reaper when their leases run out.
   */
  async stop(): Promise<void> {
    this.stopping = true;
    for (const t of this.timers) clearInterval(t);
    this.timers = [];
    const q = this.q;
    if (q !== null) {
      for (const id of this.held.keys()) {
        await q.cmd
          .multi()
          .hincrby(q.key(`run:${id}`), 'attempts', -1)
          .zadd(q.key('leases'), 0, id)
          .exec();
      }
    }
    for (const id of [...this.held.keys()]) this.stopRun(id, 'shutdown');
    while (this.held.size > 0) await new Promise((r) => setTimeout(r, 20));
    await this.pool?.destroy();
    this.pool = null;
    if (q !== null) {
      await q.cmd.zrem(q.key('workers'), this.id);
      await q.reap(this.opts.store).catch(() => undefined);
      await q.close();
    }
    this.q = null;
  }
}
