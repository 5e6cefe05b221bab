// Load on loopback: 50 concurrent clients read projects and geotherm columns (of a model, and a Monte Carlo band
// at a point of a finished run) from a real server process. First for a few seconds on the idle server, as the
// baseline measured in the same test on the same machine; then for 20 s while heavy work is kept in flight (a
// heat-in-place job at its limit and a column band at the layer cap with 2000 realizations, each submitted again
// when it ends). Every light request must succeed in both phases, and the throughput under heavy work must stay
// above a fraction of the idle baseline: long work runs on its own lowered-priority threads (server/app.ts), so it
// may slow light requests but never hold them behind it. Latencies and throughputs are printed, not asserted. Run
// against the SQLite file and PostgreSQL (p50/p99 printed for each).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServerProcess, type RunningServer } from '../helpers/browser.ts';
import { TEST_DATABASES, type TestDatabase } from '../helpers/test-stores.ts';
import { columnAtLayerCap, finishedRun, heatInPlaceAtLimit, limitsOf, quantile, waitJob } from '../helpers/heavy.ts';

const CLIENTS = 50;
const IDLE_MS = 8_000;
const DURATION_MS = 20_000;
/**
 * Least throughput under heavy work, as a fraction of the idle baseline. Light work needs both cores when idle;
 * under heavy work it shares them with two busy threads at nice 10, which Linux's scheduler gives about 10 % of
 * a core each against nice-0 work (weights 110 vs 1024), so about 0.8 is expected; 0.4 leaves room for a machine
 * shared with other jobs whose load changes between the phases.
 */
const FLOOR_OF_IDLE = 0.4;
let server: RunningServer;
let base: string;
let projectIds: string[] = [];
let run: Awaited<ReturnType<typeof finishedRun>>;

/** Starts a server on `db` with 20 projects and one finished run to read. */
async function setUp(db: TestDatabase): Promise<void> {
  server = await startServerProcess(db.server);
  base = `http://127.0.0.1:${server.port}`;
  projectIds = [];
  for (let k = 0; k < 20; k++) {
    const res = await fetch(`${base}/api/projects`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ title: `load ${k}`, state: { view: { zoom: k }, layers: ['heat-flow', 'faults'] } }),
    });
    projectIds.push(((await res.json()) as { id: string }).id);
  }
  // One finished run, so columns are also read from a stored heat-flow grid (with its P10–P90 band).
  run = await finishedRun(base);
}

type Kind = 'project' | 'column' | 'runColumn';

/** 50 clients, each sending its next request when the last is answered, for `ms`; every answer is checked. */
async function load(ms: number): Promise<{ latencies: Record<Kind, number[]>; errors: string[]; seconds: number }> {
  const grid = run.grid;
  const latencies: Record<Kind, number[]> = { project: [], column: [], runColumn: [] };
  const errors: string[] = [];
  const t0 = performance.now();
  const end = Date.now() + ms;
  let seq = 0;
  const client = async (k: number) => {
    let i = 0;
    while (Date.now() < end) {
      const n = seq++;
      const t = performance.now();
      const kind = (['project', 'column', 'runColumn'] as const)[(k + i++) % 3];
      // Cell centres of the run's grid, walking through its inner cells.
      const col = 2 + (n % (grid.width - 4)),
        row = 2 + (Math.floor(n / grid.width) % (grid.height - 4));
      const at = { lon: grid.west + (col + 0.5) * grid.dx, lat: grid.north - (row + 0.5) * grid.dy };
      try {
        const res =
          kind === 'column'
            ? await fetch(`${base}/api/column`, {
                method: 'POST',
                headers: { 'content-type': 'application/json' },
                body: JSON.stringify({ model: 'demo-model', heatFlowMWm2: 50 + (n % 40), maxDepthKm: 40, stepKm: 0.5 }),
              })
            : kind === 'runColumn'
              ? await fetch(`${base}/api/column`, {
                  method: 'POST',
                  headers: { 'content-type': 'application/json' },
                  body: JSON.stringify({ runId: run.id, ...at, maxDepthKm: 40, stepKm: 0.5 }),
                })
              : await fetch(`${base}/api/projects/${projectIds[n % projectIds.length]}`);
        const body = (await res.json()) as { profile?: unknown[]; title?: string; monteCarlo?: unknown; error?: { code: string } };
        // A point in a no-data cell of the run (outside the data) is a correct 422, not a server error.
        const ok =
          kind === 'project'
            ? res.status === 200 && body.title !== undefined
            : (res.status === 200 && body.profile?.length === 81 && (kind === 'column' || body.monteCarlo !== null)) ||
              (kind === 'runColumn' && body.error?.code === 'no_data_here');
        if (!ok) errors.push(`${kind} ${res.status} ${JSON.stringify(body).slice(0, 160)}`);
      } catch (e) {
        errors.push(`${kind} ${String(e)}`);
      }
      latencies[kind].push(performance.now() - t);
    }
  };
  await Promise.all(Array.from({ length: CLIENTS }, (_, k) => client(k)));
  return { latencies, errors, seconds: (performance.now() - t0) / 1000 };
}

function report(phase: string, r: Awaited<ReturnType<typeof load>>): number {
  let total = 0;
  for (const [name, list] of Object.entries(r.latencies)) {
    const s = list.slice().sort((a, b) => a - b);
    total += s.length;
    console.log(
      `load ${phase} ${name}: ${s.length} requests, p50 ${quantile(s, 0.5).toFixed(1)} ms, p99 ${quantile(s, 0.99).toFixed(1)} ms (${CLIENTS} clients, ${r.seconds.toFixed(1)} s, 127.0.0.1)`,
    );
  }
  const all = Object.values(r.latencies)
    .flat()
    .sort((a, b) => a - b);
  console.log(
    `load ${phase}: ${(total / r.seconds).toFixed(1)} requests/s, p99 ${quantile(all, 0.99).toFixed(1)} ms over all requests, ${r.errors.length} errors`,
  );
  return total / r.seconds;
}

describe.each(TEST_DATABASES)('load on loopback (%s)', (name, start) => {
  let db: TestDatabase;
  beforeAll(async () => {
    db = start();
    await setUp(db);
  }, 180_000);
  afterAll(async () => {
    await server?.stop();
    db?.stop();
  });

  it(`serves ${CLIENTS} concurrent clients with zero errors while heavy work is in flight, at a throughput near the idle one`, async () => {
    const limits = await limitsOf(base);
    // Warm up first (the short pool's threads start on first use), so the baseline measures serving, not start-up.
    await load(1_000);
    const idle = await load(IDLE_MS);
    const idleRate = report(`${name} idle`, idle);
    // Heavy work kept in flight for the whole loaded phase: each is submitted again as soon as it ends.
    let stop = false;
    const heavy = { jobs: 0, columns: 0, busyAtEnd: null as null | { long: number; heatInPlace: number } };
    const keepJob = (async () => {
      for (let seed = 1; !stop; seed++) {
        const job = await heatInPlaceAtLimit(base, run, limits, seed);
        heavy.jobs++;
        await waitJob(base, job.url);
      }
    })();
    const keepColumn = (async () => {
      while (!stop) {
        heavy.columns++;
        await (await columnAtLayerCap(base)).arrayBuffer();
      }
    })();
    await new Promise((r) => setTimeout(r, 500));
    const busy = await load(DURATION_MS);
    heavy.busyAtEnd = ((await (await fetch(`${base}/api/health`)).json()) as { computeTasks: { long: number; heatInPlace: number } }).computeTasks;
    stop = true;
    const busyRate = report(`${name} under heavy work`, busy);
    console.log(
      `load: throughput under heavy work ${(busyRate / idleRate).toFixed(2)} of idle (floor ${FLOOR_OF_IDLE}); heavy tasks submitted: ${heavy.jobs} heat-in-place job(s) at the limit, ${heavy.columns} column(s) of ${100} layers × 2000 realizations; in flight at the end ${JSON.stringify(heavy.busyAtEnd)}`,
    );
    expect(idle.errors.slice(0, 5)).toEqual([]);
    expect(busy.errors.slice(0, 5)).toEqual([]);
    // The heavy work was still in progress when the loaded phase ended (else the phase measured nothing heavy).
    expect(heavy.busyAtEnd.long + heavy.busyAtEnd.heatInPlace).toBeGreaterThan(0);
    expect(busyRate).toBeGreaterThan(FLOOR_OF_IDLE * idleRate);
    expect((await fetch(`${base}/api/health`)).status).toBe(200);
    // The heavy tasks are abandoned, not awaited: the server is stopped after the test.
    void keepJob.catch(() => {});
    void keepColumn.catch(() => {});
  }, 120_000);
});
