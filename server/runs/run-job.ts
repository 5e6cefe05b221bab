/** A run queued or running on this server's worker threads (server/runs/jobs.ts), and how a new one is made. */
import type { RunRequest } from '../../shared/schema/run.ts';
import type { RunRecord } from '../store/types.ts';
import { newId } from '../store/ids.ts';
import type { RunSnapshot } from './live-runs.ts';

export interface Job {
  id: string;
  cacheKey: string;
  client: string;
  /** Project the run was started through (its edit token may cancel it). */
  projectId: string | null;
  /** SHA-256 of the run token. */
  tokenHash: string;
  /** Cells × realizations (at least the cells). */
  work: number;
  startedAt: number;
  timedOut: boolean;
  request: RunRequest;
  datasets: Record<string, { kind: string; body: string }>;
  abort: AbortController;
  snapshot: RunSnapshot;
  /** The run's store writes, chained so they land in the order they were made. */
  writes: Promise<void>;
}

/** What a caller asks to queue: the run, its data sets, its cache key and who asks. */
export interface RunSubmission {
  request: RunRequest;
  datasets: Record<string, { kind: string; body: string }>;
  cacheKey: string;
  client: string;
  /** Output grid cells of the run (null when not known before it starts). */
  cells?: number | null;
  projectId?: string;
}

/** The Store record of a run just queued (both queues write it before the run may start). */
export function queuedRecord(id: string, input: Pick<RunSubmission, 'cacheKey' | 'request' | 'client'>): RunRecord {
  const now = new Date().toISOString();
  return {
    id,
    cacheKey: input.cacheKey,
    request: input.request,
    status: 'queued',
    progress: 0,
    message: 'queued',
    layers: [],
    summary: null,
    warnings: [],
    model: null,
    grids: [],
    client: input.client,
    createdAt: now,
    updatedAt: now,
  };
}

/** A new run's record and its job, queued (the caller reserves its bounds and writes the record). */
export function newJob(input: RunSubmission & { tokenHash: string; work: number }): { rec: RunRecord; job: Job } {
  const id = newId('run_');
  const rec = queuedRecord(id, input);
  const job: Job = {
    id,
    cacheKey: input.cacheKey,
    client: input.client,
    projectId: input.projectId ?? null,
    tokenHash: input.tokenHash,
    work: input.work,
    startedAt: 0,
    timedOut: false,
    request: input.request,
    datasets: input.datasets,
    abort: new AbortController(),
    snapshot: { id, status: 'queued', progress: 0, message: 'queued' },
    writes: Promise.resolve(),
  };
  return { rec, job };
}
