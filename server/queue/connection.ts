/**
 * What servers and workers share about the Redis run queue (server/queue/scripts.ts describes its keys): the
 * connection, the scripts, the snapshot channel, and the reaper that hands on the runs of dead workers. A run's
 * lease lasts LEASE_MS and its worker renews it every RENEW_MS, so a worker killed mid-run loses it within
 * LEASE_MS + REAP_MS; the run then starts again on another worker, at most MAX_ATTEMPTS times in all, and after that
 * ends failed with the reason (never left as running).
 */
import { Redis } from 'ioredis';
import type { RunStatus, Store } from '../store/types.ts';
import { CANCEL, CLAIM, ENQUEUE, FINISH, REAP, RENEW, RESERVE } from './scripts.ts';
import { redactUrl } from '../security.ts';

/** How long a worker's hold on a run lasts without renewal, ms. */
export const LEASE_MS = 10_000;
/** How often a worker renews its leases and heartbeat, ms. */
export const RENEW_MS = 2_000;
/** How often servers and workers look for runs whose lease ran out, ms. */
export const REAP_MS = 1_000;
/** Starts of one run before it is failed (its first start and two more after workers died). */
export const MAX_ATTEMPTS = 3;
/** A worker not heard from for this long is not counted by /api/health, ms. */
export const WORKER_SEEN_MS = 3 * RENEW_MS + 1_000;

const SCRIPTS = { reserve: RESERVE, enqueue: ENQUEUE, claim: CLAIM, renew: RENEW, reap: REAP, cancel: CANCEL, finish: FINISH } as const;
type ScriptName = keyof typeof SCRIPTS;

/** A run's state as events carry it between processes (the fields of the event stream). */
export interface QueueSnapshot {
  id: string;
  status: RunStatus;
  progress: number;
  message: string;
}

/** The message of a failed run whose workers all stopped before it finished. */
export function deadWorkerReason(attempts: number): string {
  return `the run was started ${attempts} time${attempts === 1 ? '' : 's'} and each worker running it stopped (killed, restarted or out of memory) before it finished; submit it again, perhaps with fewer cells or realizations`;
}

export class QueueRedis {
  /** Commands and scripts. */
  readonly cmd: Redis;
  /** Subscriptions (a subscribed connection takes no other commands). */
  readonly sub: Redis;
  readonly prefix: string;
  private readonly log: (line: string) => void;

  private constructor(cmd: Redis, sub: Redis, prefix: string, log: (line: string) => void) {
    this.cmd = cmd;
    this.sub = sub;
    this.prefix = prefix;
    this.log = log;
  }

  /** Connects twice (commands, subscriptions); a Redis that cannot be reached rejects with its URL (password hidden). */
  static async connect(url: string, opts: { prefix?: string; log?: (line: string) => void } = {}): Promise<QueueRedis> {
    if (!/^rediss?:\/\//.test(url)) throw new Error(`the queue URL must start with redis:// or rediss://, got ${redactUrl(url)}`);
    const log = opts.log ?? ((l: string) => process.stderr.write(l + '\n'));
    const make = () => {
      const r = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 20, enableOfflineQueue: true });
      // A dropped connection is retried by the client; say so once per fault instead of crashing.
      r.on('error', (e: Error) => log(`[${new Date().toISOString()}] queue connection error: ${e.message}`));
      return r;
    };
    const cmd = make(),
      sub = make();
    try {
      await cmd.connect();
      await sub.connect();
    } catch (e) {
      cmd.disconnect();
      sub.disconnect();
      throw new Error(`cannot reach the run queue at ${redactUrl(url)}: ${(e as Error).message}`, { cause: e });
    }
    return new QueueRedis(cmd, sub, opts.prefix ?? 'subtherm:', log);
  }

  key(name: string): string {
    return this.prefix + name;
  }

  /** Runs one of the queue's scripts (atomically, in Redis) with the prefix as its first argument. */
  async script(name: ScriptName, args: (string | number)[]): Promise<unknown> {
    return this.cmd.eval(SCRIPTS[name], 0, this.prefix, ...args.map(String));
  }

  /** Tells every server a run's new state; the run's hash keeps it for servers that start later. */
  async publish(s: QueueSnapshot): Promise<void> {
    const tx = this.cmd.multi();
    // An ended run's hash is about to go: writing it would bring it back.
    if (s.status === 'queued' || s.status === 'running') tx.hset(this.key(`run:${s.id}`), 'progress', String(s.progress), 'message', s.message);
    await tx.publish(this.key('events'), JSON.stringify(s)).exec();
  }

  /**
   * Hands on the runs whose lease ran out, recording each outcome in the Store and telling every server: a retried
   * run goes back to queued, a run out of attempts ends failed with the reason. Then settles the runs a reaper marked
   * ended but could not record (it stopped in between).
   */
  async reap(store: Store): Promise<void> {
    const out = (await this.script('reap', [Date.now(), MAX_ATTEMPTS, deadWorkerReason(MAX_ATTEMPTS)])) as string[];
    for (let i = 0; i < out.length; i += 3) {
      const [id, what, attempts] = [out[i], out[i + 1], Number(out[i + 2])];
      if (what === 'retry') {
        const message = `the worker running it stopped (start ${attempts} of ${MAX_ATTEMPTS}); waiting for another worker`;
        this.log(`[${new Date().toISOString()}] run ${id}: ${message}`);
        await store.updateRun(id, { status: 'queued', message });
        await this.publish({ id, status: 'queued', progress: 0, message });
      }
    }
    for (const id of await this.cmd.smembers(this.key('ending'))) {
      const [status, reason, progress] = await this.cmd.hmget(this.key(`run:${id}`), 'status', 'reason', 'progress');
      if (status !== 'failed' && status !== 'cancelled') continue;
      const snap: QueueSnapshot = { id, status, progress: Number(progress ?? 0), message: status === 'cancelled' ? 'cancelled' : (reason ?? 'failed') };
      await store.updateRun(id, { status: snap.status, progress: snap.progress, message: snap.message });
      await this.publish(snap);
      await this.script('finish', [id, '']);
    }
  }

  /** Live worker processes and their run slots (heartbeats newer than WORKER_SEEN_MS). */
  async workers(): Promise<{ processes: number; slots: number }> {
    const ids = await this.cmd.zrangebyscore(this.key('workers'), Date.now() - WORKER_SEEN_MS, '+inf');
    if (ids.length === 0) return { processes: 0, slots: 0 };
    const slots = await this.cmd.mget(...ids.map((id) => this.key(`worker:${id}`)));
    return { processes: ids.length, slots: slots.reduce((a, s) => a + Number(s ?? 0), 0) };
  }

  async close(): Promise<void> {
    await Promise.allSettled([this.cmd.quit(), this.sub.quit()]);
  }
}
