// The demo opens finished: with the demo run on (what `subtherm serve` does unless SUBTHERM_DEMO_RUN=0), the demo
// project's default run starts in the background, the project's state points at it, and it ends with depth to
// 300 °C (with P10/P90 from its realizations) and the isograds.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp('demo-run', { demoRun: true });
});
afterAll(() => t.close());

describe('the demo project on first start', () => {
  it('points at its default run, which ends with depth to 300 °C and isograds', async () => {
    const p = (await (await t.app.request('/api/projects/demo')).json()) as { state: { runId?: string; datasets: Record<string, string> } };
    expect(typeof p.state.runId).toBe('string');
    const runs = (await (await t.app.request('/api/projects/demo/runs')).json()) as { runs: { id: string }[] };
    expect(runs.runs.map((r) => r.id)).toEqual([p.state.runId]);
    const run = await t.waitEnd<{ status: string; message: string; layers: { name: string }[]; request: { realizations: number; isothermsC: number[] } }>(
      p.state.runId!,
    );
    expect(run.status, run.message).toBe('done');
    const names = run.layers.map((l) => l.name);
    expect(names).toEqual(expect.arrayContaining(['heat-flow', 'depth-300C', 'depth-500C', 'depth-300C.p10', 'depth-300C.p90', 'isograds']));
    expect(run.request.realizations).toBe(100);
    expect(run.request.isothermsC).toEqual([300, 500]);
  }, 300_000);

  it('finds the finished run again on the next start instead of recomputing it', async () => {
    const { startDemoRun } = await import('../../server/demo-run.ts');
    const before = (await (await t.app.request('/api/projects/demo')).json()) as { state: { runId: string }; revision: number };
    const ctx = {
      store: t.store,
      limits: t.app.limits,
      jobs: t.app.jobs,
      grids: null as never,
      compute: null as never,
      heatJobs: null as never,
      trustedProxies: new Set<string>(),
      workerFile: (await import('../../server/app.ts')).RUN_WORKER_FILE,
    };
    expect(await startDemoRun(ctx)).toBe(before.state.runId);
    const after = (await (await t.app.request('/api/projects/demo')).json()) as { revision: number };
    expect(after.revision).toBe(before.revision);
  });
});
