/**
 * What both run queues share (server/runs/jobs.ts: worker threads of this server; server/queue/redis-jobs.ts: the
 * Redis queue and `subtherm worker` processes): the live state a run reports while queued or running, and the events
 * that tell subscribers (GET /api/runs/:id/events) of each change. A finished run is read from the store.
 */
import { EventEmitter } from 'node:events';
import type { RunStatus, Store } from '../store/types.ts';
import { tokenMatches } from '../security.ts';

/** What GET /api/runs/:id and the event stream report while a run is live. */
export interface RunSnapshot {
  id: string;
  status: RunStatus;
  progress: number;
  message: string;
  /** While queued: 1-based place in the fair (round-robin) start order. */
  position?: number;
  /**
   * While queued or running: seconds until the run should end, from the work ahead of it (cells × realizations)
   * and the rate of runs finished by this server; null until a run has finished to measure the rate.
   */
  estimateSeconds?: number | null;
}

const TERMINAL: ReadonlySet<RunStatus> = new Set(['done', 'failed', 'cancelled']);
export const isTerminal = (s: RunStatus) => TERMINAL.has(s);

export abstract class LiveRuns {
  private readonly events = new EventEmitter();

  constructor(protected readonly store: Store) {
    this.events.setMaxListeners(0);
  }

  /** The live state of a queued or running run (null once it has ended: read the store then). */
  abstract live(id: string): RunSnapshot | null;

  /** The SHA-256 of a live run's token and the project it was started through; null when the run is not live. */
  protected abstract cancelKeys(id: string): Promise<{ tokenHash: string; projectId: string | null } | null>;

  /**
   * Whether `token` may cancel the live run `id`: its run token, or the edit token of the project it was started
   * through (`projectTokenHash` looks that hash up). 'missing' without a token, 'wrong' for any other token, null
   * when the run is not live.
   */
  async authorizeCancel(
    id: string,
    token: string | null,
    projectTokenHash: (projectId: string) => Promise<string | null>,
  ): Promise<'ok' | 'missing' | 'wrong' | null> {
    const keys = await this.cancelKeys(id);
    if (!keys) return null;
    if (token === null) return 'missing';
    if (tokenMatches(token, keys.tokenHash)) return 'ok';
    if (keys.projectId !== null) {
      const h = await projectTokenHash(keys.projectId);
      if (h !== null && tokenMatches(token, h)) return 'ok';
    }
    return 'wrong';
  }

  /** Current state from memory or the store; null for an unknown id. */
  async snapshot(id: string): Promise<RunSnapshot | null> {
    const l = this.live(id);
    if (l) return l;
    const r = await this.store.getRun(id);
    return r ? { id, status: r.status, progress: r.progress, message: r.message } : null;
  }

  /** Calls `fn` on every change of the run until it ends; returns the unsubscribe function. */
  subscribe(id: string, fn: (s: RunSnapshot) => void): () => void {
    this.events.on(id, fn);
    return () => this.events.off(id, fn);
  }

  /** Tells the run's subscribers of its new state (each gets its own copy). */
  protected emit(snap: RunSnapshot): void {
    this.events.emit(snap.id, { ...snap });
  }
}
