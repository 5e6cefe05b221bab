/**
 * The server's side of the Redis run queue (SUBTHERM_QUEUE_URL): the same contract as the in-process job system
 * (server/runs/jobs.ts: submit, live state, events, cancel) over a queue that every server and `subtherm worker`
 * process shares. A server records the run in the Store, reserves its place in the per-client and total bounds and
 * queues it in Redis (server/queue/scripts.ts, atomically, so the bounds hold across servers); workers take runs in
 * round-robin order across clients. Every state change is published on one channel, so the event stream of a run
 * reaches its browser from whichever server it is connected to; a cancel from any server reaches the worker running
 * the run. Runs outlive the server that queued them: closing a server cancels nothing.
 */
import { InputError } from '../../shared/errors.ts';
import type { Store } from '../store/types.ts';
import { newId } from '../store/sqlite.ts';
import { hashToken, newEditToken } from '../security.ts';
import { LiveRuns, isTerminal, type RunSnapshot } from '../runs/live-runs.ts';
import { flightLimitError, runWork, type FlightLimit } from '../runs/run-bounds.ts';
import { queuedRecord, type RunSubmission } from '../runs/run-job.ts';
import { QueueRedis, REAP_MS, type QueueSnapshot } from './connection.ts';

export interface RedisRunJobsOptions {
  store: Store;
  /** redis://… of the queue. */
  url: string;
  /** Key prefix (one queue per prefix; default `subtherm:`). */
  prefix?: string;
  /** Runs queued or running per client and in all, across every server (the same limits as in-process). */
  maxQueuedPerClient: number;
  maxQueuedServer?: number;
  /** Cells × realizations of one run; queued or running per client, and in all. */
  maxRunWork?: number;
  maxQueuedWorkPerClient?: number;
  maxQueuedWorkServer?: number;
  log?: (line: string) => void;
}

export class RedisRunJobs extends LiveRuns {
  readonly kind = 'redis' as const;
  /** Resolves once connected, subscribed and holding the state of every live run (rejects when Redis is unreachable). */
  readonly ready: Promise<void>;
  private readonly opts: RedisRunJobsOptions;
  private readonly log: (line: string) => void;
  private q: QueueRedis | null = null;
  /** Live (queued or running) runs of every server, as the events channel tells them. */
  private readonly snapshots = new Map<string, RunSnapshot>();
  private timer: NodeJS.Timeout | null = null;
  private cached = { queued: 0, running: 0, workers: { processes: 0, slots: 0 } };
  private closed = false;

  constructor(opts: RedisRunJobsOptions) {
    super(opts.store);
    this.opts = opts;
    this.log = opts.log ?? ((l) => process.stderr.write(l + '\n'));
    this.ready = this.init();
    // A failed start is reported by whoever awaits `ready`; never as an unhandled rejection.
    this.ready.catch(() => undefined);
  }

  private async init(): Promise<void> {
    const q = await QueueRedis.connect(this.opts.url, { prefix: this.opts.prefix, log: this.log });
    this.q = q;
    q.sub.on('message', (channel: string, text: string) => {
      if (channel !== q.key('events')) return;
      try {
        this.onEvent(JSON.parse(text) as QueueSnapshot);
      } catch {
        // not one of ours
      }
    });
    await q.sub.subscribe(q.key('events'));
    // Runs queued or running before this server started.
    for (const id of await q.cmd.smembers(q.key('live'))) {
      const [status, progress, message] = await q.cmd.hmget(q.key(`run:${id}`), 'status', 'progress', 'message');
      if (status === 'queued' || status === 'running') this.snapshots.set(id, { id, status, progress: Number(progress ?? 0), message: message ?? status });
    }
    await this.tick();
    this.timer = setInterval(() => void this.tick(), REAP_MS);
    this.timer.unref();
  }

  private get queue(): QueueRedis {
    if (this.q === null) throw new Error('the run queue is not connected');
    return this.q;
  }

  private onEvent(s: QueueSnapshot): void {
    if (typeof s?.id !== 'string') return;
    const snap: RunSnapshot = { id: s.id, status: s.status, progress: s.progress, message: s.message };
    if (isTerminal(snap.status)) this.snapshots.delete(s.id);
    else this.snapshots.set(s.id, snap);
    this.emit(snap);
  }

  /** Hands on the runs of dead workers (any server or worker may) and refreshes the counts /api/health reports. */
  private async tick(): Promise<void> {
    try {
      const q = this.queue;
      await q.reap(this.store);
      const [total, running, workers] = await Promise.all([q.cmd.hget(q.key('inflight'), '*'), q.cmd.zcard(q.key('leases')), q.workers()]);
      this.cached = { queued: Math.max(0, Number(total ?? 0) - running), running, workers };
    } catch (e) {
      this.log(`[${new Date().toISOString()}] run queue: ${(e as Error).message}`);
    }
  }

  /** Same contract as RunJobs.submit (server/runs/jobs.ts); the bounds hold across every server of the queue. */
  async submit(input: RunSubmission): Promise<{ id: string; cached: boolean; runToken?: string }> {
    await this.ready;
    if (this.closed) throw new InputError('the server is shutting down', [], 'shutting_down');
    const q = this.queue;
    const existing = await this.store.findRunByCacheKey(input.cacheKey, ['queued', 'running', 'done']);
    if (existing && (existing.status === 'done' || (await q.cmd.sismember(q.key('live'), existing.id)) === 1)) return { id: existing.id, cached: true };
    const work = runWork(input.request, input.cells, this.opts.maxRunWork ?? Infinity);
    const id = newId('run_');
    const runToken = newEditToken();
    const bound = (n: number | undefined) => (n === undefined || !Number.isFinite(n) ? -1 : n);
    const limits = {
      maxQueuedRunsPerClient: this.opts.maxQueuedPerClient,
      maxQueuedWorkPerClient: bound(this.opts.maxQueuedWorkPerClient),
      maxQueuedRunsServer: bound(this.opts.maxQueuedServer),
      maxQueuedWorkServer: bound(this.opts.maxQueuedWorkServer),
    };
    const payload = JSON.stringify({ request: input.request, datasets: input.datasets });
    const reserved = (await q.script('reserve', [
      id,
      input.client,
      work,
      limits.maxQueuedRunsPerClient,
      limits.maxQueuedWorkPerClient,
      limits.maxQueuedRunsServer,
      limits.maxQueuedWorkServer,
      input.cacheKey,
      hashToken(runToken),
      input.projectId ?? '',
      payload,
    ])) as string[];
    if (reserved[0] === 'twin') return { id: reserved[1], cached: true };
    if (reserved[0] !== 'ok') {
      const name = reserved[0] as FlightLimit;
      throw flightLimitError(name, Number(reserved[1]), limits[name]);
    }
    const rec = queuedRecord(id, input);
    try {
      await this.store.putRun(rec);
    } catch (e) {
      await q.script('finish', [id, '']);
      throw e;
    }
    this.snapshots.set(id, { id, status: 'queued', progress: 0, message: 'queued' });
    await q.script('enqueue', [id]);
    await q.publish({ id, status: 'queued', progress: 0, message: 'queued' });
    return { id, cached: false, runToken };
  }

  protected async cancelKeys(id: string): Promise<{ tokenHash: string; projectId: string | null } | null> {
    const q = this.queue;
    const [tokenHash, projectId, status] = await q.cmd.hmget(q.key(`run:${id}`), 'tokenHash', 'projectId', 'status');
    if (tokenHash === null || (status !== 'queued' && status !== 'running')) return null;
    return { tokenHash, projectId: projectId === null || projectId === '' ? null : projectId };
  }

  /** The live state of a queued or running run, as the last event told it (null once it has ended). */
  live(id: string): RunSnapshot | null {
    const s = this.snapshots.get(id);
    return s ? { ...s } : null;
  }

  /** A queued run leaves the queue now; a running one is stopped by its worker, which records the end. */
  async cancel(id: string): Promise<RunSnapshot | null> {
    const q = this.queue;
    const was = (await q.script('cancel', [id])) as string | null;
    if (was === 'queued') {
      const snap: RunSnapshot = { id, status: 'cancelled', progress: this.live(id)?.progress ?? 0, message: 'cancelled before it started' };
      await this.store.updateRun(id, { status: snap.status, progress: snap.progress, message: snap.message });
      await q.publish({ id, status: snap.status, progress: snap.progress, message: snap.message });
      await q.script('finish', [id, '']);
      return snap;
    }
    if (was === 'running') return { ...(this.live(id) ?? { id, progress: 0 }), status: 'cancelled', message: 'cancelled' };
    return this.snapshot(id);
  }

  /** Runs queued and running on every server's queue (refreshed every REAP_MS). */
  counts(): { queued: number; running: number } {
    return { queued: this.cached.queued, running: this.cached.running };
  }

  /** What /api/health says of the queue: its kind, the run slots of the workers heard from lately, and how many workers. */
  health(): { queue: 'redis'; workers: number; workerProcesses: number } {
    return { queue: 'redis', workers: this.cached.workers.slots, workerProcesses: this.cached.workers.processes };
  }

  /** Resolves when no run is queued or running on the queue. */
  async idle(): Promise<void> {
    await this.ready;
    const q = this.queue;
    while ((await q.cmd.scard(q.key('live'))) > 0) await new Promise((r) => setTimeout(r, 50));
  }

  /** Stops listening; queued and running runs go on (workers and other servers carry them). */
  async close(): Promise<void> {
    this.closed = true;
    if (this.timer !== null) clearInterval(this.timer);
    this.timer = null;
    await this.ready.catch(() => undefined);
    await this.q?.close();
    this.q = null;
  }
}
