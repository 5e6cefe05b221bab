/**
 * The bounds a run is checked against before it is queued on this server's worker threads: its cells ×
 * realizations (422), the client's runs and work in flight (429), the server's (503). Each refusal names the limit,
 * the value and what to do.
 */
import { InputError } from '../../shared/errors.ts';

export interface RunBounds {
  maxPerClient: number;
  maxQueuedServer: number;
  maxRunWork: number;
  maxQueuedWorkPerClient: number;
  maxQueuedWorkServer: number;
}

/** What is in flight when a run of `work` cells × realizations asks to be queued. */
export interface InFlight {
  cells: number;
  realizations: number;
  work: number;
  clientRuns: number;
  clientWork: number;
  serverRuns: number;
  serverWork: number;
}

const fmt = (n: number) => n.toLocaleString('en');
const over = (limit: string, value: number, max: number, message: string, code: string) =>
  new InputError(message, [{ field: limit, problem: `${fmt(value)} > ${limit} = ${fmt(max)}` }], code);

/** Throws the InputError of the first bound the run would pass. */
export function checkRunBounds(L: RunBounds, f: InFlight): void {
  if (f.work > L.maxRunWork)
    throw over(
      'maxRunCellRealizations',
      f.work,
      L.maxRunWork,
      `the run asks for ${fmt(f.cells)} cells × ${f.realizations} realizations = ${fmt(f.work)} (limit maxRunCellRealizations = ${fmt(L.maxRunWork)}): use fewer realizations, a larger cellKm or a smaller bbox`,
      'run_too_large',
    );
  if (f.clientRuns >= L.maxPerClient)
    throw new InputError(
      `too many runs in flight: ${f.clientRuns} queued or running for this client (limit maxQueuedRunsPerClient = ${L.maxPerClient}); wait for one to finish or cancel one`,
      [{ field: 'maxQueuedRunsPerClient', problem: `at most ${L.maxPerClient} queued or running runs per client` }],
      'too_many_runs',
    );
  if (f.clientWork + f.work > L.maxQueuedWorkPerClient)
    throw over(
      'maxQueuedWorkPerClient',
      f.clientWork + f.work,
      L.maxQueuedWorkPerClient,
      `this client's runs in flight would total ${fmt(f.clientWork + f.work)} cells × realizations (limit maxQueuedWorkPerClient = ${fmt(L.maxQueuedWorkPerClient)}); wait for a run to finish`,
      'too_much_work',
    );
  if (f.serverRuns >= L.maxQueuedServer)
    throw new InputError(
      `the server has ${f.serverRuns} runs queued or running (limit maxQueuedRunsServer = ${L.maxQueuedServer}); try again later`,
      [{ field: 'maxQueuedRunsServer', problem: `at most ${L.maxQueuedServer} runs in flight on the server` }],
      'server_busy',
    );
  if (f.serverWork + f.work > L.maxQueuedWorkServer)
    throw over(
      'maxQueuedWorkServer',
      f.serverWork + f.work,
      L.maxQueuedWorkServer,
      `the server's runs in flight would total ${fmt(f.serverWork + f.work)} cells × realizations (limit maxQueuedWorkServer = ${fmt(L.maxQueuedWorkServer)}); try again later`,
      'server_busy',
    );
}
