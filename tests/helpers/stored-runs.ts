// Finished runs put straight into a store, as a server leaves them when a run ends (for tests of what is asked of a
// finished run: heat-in-place jobs, columns, sections, samples), and the wait for a job to finish.
import type { RunRecord, RunResultWrite, StoredGridMeta } from '../../server/store/types.ts';
import type { TestApp } from './app.ts';

/**
 * Stores the run `id` as finished (status done, no layers, an empty summary); `o` gives its model and anything else
 * that differs (the request defaults to the demo's sites and model, the cache key to `key-<id>`).
 */
export async function putDoneRun(store: { putRun(run: RunRecord): Promise<void> }, id: string, o: Partial<RunRecord> & { model: unknown }): Promise<void> {
  const now = new Date().toISOString();
  await store.putRun({
    id,
    cacheKey: `key-${id}`,
    request: { sites: 'demo-sites', model: 'demo-model' },
    status: 'done',
    progress: 1,
    message: 'done',
    layers: [],
    summary: {},
    warnings: [],
    grids: [],
    client: 'test',
    createdAt: now,
    updatedAt: now,
    ...o,
  });
}

/** Stores the run's heat-flow grid and its standard deviation (mW/m²) on `meta`, as a finished run holds them. */
export async function storeHeatFlowGrids(
  store: { storeRunResult(runId: string, result: RunResultWrite): Promise<void> },
  id: string,
  meta: StoredGridMeta,
  heatFlow: Float32Array,
  sd: Float32Array,
): Promise<void> {
  await store.storeRunResult(id, {
    files: [],
    grids: [
      { name: 'heatFlow', meta, values: heatFlow },
      { name: 'heatFlowSd', meta, values: sd },
    ],
    record: { grids: ['heatFlow', 'heatFlowSd'] },
  });
}

/** Polls a job's URL every 20 ms until it stops answering 202 (at most `tries` times). */
export async function waitJob(t: TestApp, url: string, tries = 1500): Promise<Response> {
  for (let i = 0; i < tries; i++) {
    const r = await t.app.request(url);
    if (r.status !== 202) return r;
    await new Promise((res) => setTimeout(res, 20));
  }
  throw new Error(`job ${url} did not finish`);
}
