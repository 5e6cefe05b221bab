/**
 * The bounds a run is checked against before it is queued, on this server's worker threads (server/runs/jobs.ts) or
 * on the Redis queue (server/queue/redis-jobs.ts, whose reservation script finds the bound): its cells ×
 * realizations (422), the client's runs and work in flight (429), the server's (503). Each refusal names the limit,
 * the value and what to do, worded the same whichever queue found it.
 */
import { InputError } from '../../shared/errors.ts';
import type { RunRequest } from '../../shared/schema/run.ts';

export interface RunBounds {
  maxPerClient: number;
  maxQueuedServer: number;
  maxRunWork: number;
  maxQueuedWorkPerClient: number;
  maxQueuedWorkServer: number;
}

/** What is in flight when a run of `work` cells × realizations asks to be queued. */
export interface InFlight {
  work: number;
  clientRuns: number;
  clientWork: number;
  serverRuns: number;
  serverWork: number;
}

/** A bound on what is in flight, by the name its refusal gives. */
export type FlightLimit = 'maxQueuedRunsPerClient' | 'maxQueuedWorkPerClient' | 'maxQueuedRunsServer' | 'maxQueuedWorkServer';

const fmt = (n: number) => n.toLocaleString('en');

/** Problem code, message and detail of each bound on what is in flight (a declarative table). */
const FLIGHT_LIMITS: Record<FlightLimit, { code: string; says: (v: number, max: number) => string; problem: (v: number, max: number) => string }> = {
  maxQueuedRunsPerClient: {
    code: 'too_many_runs',
    says: (v, max) =>
      `too many runs in flight: ${v} queued or running for this client (limit maxQueuedRunsPerClient = ${max}); wait for one to finish or cancel one`,
    problem: (_v, max) => `at most ${max} queued or running runs per client`,
  },
  maxQueuedWorkPerClient: {
    code: 'too_much_work',
    says: (v, max) =>
      `this client's runs in flight would total ${fmt(v)} cells × realizations (limit maxQueuedWorkPerClient = ${fmt(max)}); wait for a run to finish`,
    problem: (v, max) => `${fmt(v)} > maxQueuedWorkPerClient = ${fmt(max)}`,
  },
  maxQueuedRunsServer: {
    code: 'server_busy',
    says: (v, max) => `the server has ${v} runs queued or running (limit maxQueuedRunsServer = ${max}); try again later`,
    problem: (_v, max) => `at most ${max} runs in flight on the server`,
  },
  maxQueuedWorkServer: {
    code: 'server_busy',
    says: (v, max) => `the server's runs in flight would total ${fmt(v)} cells × realizations (limit maxQueuedWorkServer = ${fmt(max)}); try again later`,
    problem: (v, max) => `${fmt(v)} > maxQueuedWorkServer = ${fmt(max)}`,
  },
};

/** The refusal of a run that would pass `name`: `value` is what is in flight (runs) or would be (work). */
export function flightLimitError(name: FlightLimit, value: number, max: number): InputError {
  const L = FLIGHT_LIMITS[name];
  return new InputError(L.says(value, max), [{ field: name, problem: L.problem(value, max) }], L.code);
}

/**
 * The work of a run (cells × realizations, each at least 1); throws `run_too_large` over `maxRunWork`.
 * @param cells output grid cells of the run (null when not known before it starts)
 */
export function runWork(request: RunRequest, cells: number | null | undefined, maxRunWork: number): number {
  const realizations = request.realizations ?? 0;
  const n = cells ?? 0;
  const work = Math.max(1, n) * Math.max(1, realizations);
  if (work > maxRunWork)
    throw new InputError(
      `the run asks for ${fmt(n)} cells × ${realizations} realizations = ${fmt(work)} (limit maxRunCellRealizations = ${fmt(maxRunWork)}): use fewer realizations, a larger cellKm or a smaller bbox`,
      [{ field: 'maxRunCellRealizations', problem: `${fmt(work)} > maxRunCellRealizations = ${fmt(maxRunWork)}` }],
      'run_too_large',
    );
  return work;
}

/** Throws the InputError of the first bound on what is in flight that the run would pass. */
export function checkRunBounds(L: RunBounds, f: InFlight): void {
  if (f.clientRuns >= L.maxPerClient) throw flightLimitError('maxQueuedRunsPerClient', f.clientRuns, L.maxPerClient);
  if (f.clientWork + f.work > L.maxQueuedWorkPerClient) throw flightLimitError('maxQueuedWorkPerClient', f.clientWork + f.work, L.maxQueuedWorkPerClient);
  if (f.serverRuns >= L.maxQueuedServer) throw flightLimitError('maxQueuedRunsServer', f.serverRuns, L.maxQueuedServer);
  if (f.serverWork + f.work > L.maxQueuedWorkServer) throw flightLimitError('maxQueuedWorkServer', f.serverWork + f.work, L.maxQueuedWorkServer);
}
