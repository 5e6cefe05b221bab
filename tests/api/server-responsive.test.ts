// The request thread stays responsive while the heaviest work the limits allow is in progress, on a real server
// process: a heat-in-place job at its limit, a column at the layer cap with the most realizations, a run's spread
// layer (built from its realizations on a worker thread) and a run at the cells × realizations limit. A health probe every 100 ms must always answer, none later than 2 s (a bound far
// above the 250 ms goal that `npm run bench -- server-responsive` measures, so the test is not flaky on a busy
// machine). The server's run limit is lowered for the test so the maximal run fits a shared test machine's memory.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { dirname } from 'node:path';
import { startServerProcess, type RunningServer } from '../helpers/browser.ts';
import { columnAtLayerCap, finishedRun, heatInPlaceAtLimit, limitsOf, maximalRun, probeHealth, spreadLayer, waitJob } from '../helpers/heavy.ts';

let server: RunningServer;
let base: string;

beforeAll(async () => {
  server = await startServerProcess({ env: { SUBTHERM_MAX_RUN_CELL_REALIZATIONS: '20000000' } });
  base = `http://127.0.0.1:${server.port}`;
}, 180_000);
afterAll(async () => {
  await server?.stop();
  if (server) rmSync(dirname(server.dbPath), { recursive: true, force: true });
});

describe('responsiveness under the heaviest allowed work', () => {
  it('answers every health probe within 2 s while a heat-in-place job, a capped column, a spread layer and a maximal run are in progress', async () => {
    const limits = await limitsOf(base);
    const run = await finishedRun(base);
    const big = await maximalRun(base, limits);
    const job = await heatInPlaceAtLimit(base, run, limits);
    const column = columnAtLayerCap(base);
    const spread = spreadLayer(base, run.id);
    // Probe while the job, the column and the layer are in progress (the maximal run goes on far longer: cancelled below).
    const work = Promise.all([waitJob(base, job.url), column, spread]);
    const probes = await probeHealth(base, work, 100);
    const [jobRes, colRes, spreadRes] = await work;
    const status = (await fetch(`${base}/api/runs/${big.id}`).then((r) => r.json())) as { status: string };
    await fetch(`${base}/api/runs/${big.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${big.runToken}` } });
    const worst = Math.max(...probes.latencies);
    console.log(
      `${probes.latencies.length} probes, worst ${worst.toFixed(1)} ms; event-loop delay ${JSON.stringify(probes.loopDelay)}; heat in place ${job.realizations} realizations → ${jobRes.status}; column → ${colRes.status}; spread layer → ${spreadRes.status}; maximal run ${big.cells} cells × ${big.realizations} was ${status.status}`,
    );
    expect(probes.failures).toEqual([]);
    expect(probes.latencies.length).toBeGreaterThan(5);
    expect(worst).toBeLessThan(2000);
    expect(jobRes.status).toBe(200);
    expect(spreadRes.status).toBe(200);
    // The column finishes, or meets its stated deadline (503 naming computeDeadlineSeconds): never a stall.
    expect([200, 503]).toContain(colRes.status);
    expect(status.status).toMatch(/queued|running/);
  }, 300_000);
});
