// Load on loopback: 50 concurrent clients read projects and geotherm columns (of a model, and of a finished run) from a real server process for 20 s
// (a bounded loop that stops by itself). Every request must succeed; p50/p99 latencies are printed, not asserted.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { dirname } from 'node:path';
import { startServerProcess, type RunningServer } from '../helpers/browser.ts';

const CLIENTS = 50;
const DURATION_MS = 20_000;
let server: RunningServer;
const projectIds: string[] = [];
let run: { id: string; west: number; north: number; dx: number; dy: number; width: number; height: number };

beforeAll(async () => {
  server = await startServerProcess();
  for (let k = 0; k < 20; k++) {
    const res = await fetch(`http://127.0.0.1:${server.port}/api/projects`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ title: `load ${k}`, state: { view: { zoom: k }, layers: ['heat-flow', 'faults'] } }) });
    projectIds.push(((await res.json()) as { id: string }).id);
  }
  // One finished run, so columns are also read from a stored heat-flow grid (with its P10–P90 band).
  const base = `http://127.0.0.1:${server.port}`;
  const r = await fetch(`${base}/api/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ sites: 'demo-sites', model: 'demo-model', realizations: 20, seed: 2, grid: { cellKm: 8 } }) });
  const id = ((await r.json()) as { id: string }).id;
  for (;;) {
    const s = (await (await fetch(`${base}/api/runs/${id}`)).json()) as { status: string; summary: { grid?: { west: number; north: number; dx: number; dy: number; width: number; height: number } } };
    if (s.status === 'done') {
      run = { id, ...s.summary.grid! };
      break;
    }
    if (s.status !== 'queued' && s.status !== 'running') throw new Error(`load-test run ${s.status}`);
    await new Promise((res) => setTimeout(res, 50));
  }
}, 180_000);
afterAll(async () => {
  await server?.stop();
  if (server) rmSync(dirname(server.dbPath), { recursive: true, force: true });
});

function percentile(sorted: number[], p: number): number {
  // Type-7 quantile (Hyndman & Fan 1996), as everywhere in the project.
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  return sorted[lo] + (h - lo) * ((sorted[Math.min(lo + 1, sorted.length - 1)] ?? sorted[lo]) - sorted[lo]);
}

describe('load on loopback', () => {
  it(`serves ${CLIENTS} concurrent clients for ${DURATION_MS / 1000} s with zero errors`, async () => {
    const base = `http://127.0.0.1:${server.port}`;
    const latencies = { project: [] as number[], column: [] as number[], runColumn: [] as number[] };
    const errors: string[] = [];
    const end = Date.now() + DURATION_MS;
    let seq = 0;
    const client = async (k: number) => {
      let i = 0;
      while (Date.now() < end) {
        const n = seq++;
        const t0 = performance.now();
        const kind = (['project', 'column', 'runColumn'] as const)[(k + i++) % 3];
        // Cell centres of the run's grid, walking through its inner cells.
        const col = 2 + (n % (run.width - 4)), row = 2 + (Math.floor(n / run.width) % (run.height - 4));
        const at = { lon: run.west + (col + 0.5) * run.dx, lat: run.north - (row + 0.5) * run.dy };
        try {
          const res =
            kind === 'column'
              ? await fetch(`${base}/api/column`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ model: 'demo-model', heatFlowMWm2: 50 + (n % 40), maxDepthKm: 40, stepKm: 0.5 }) })
              : kind === 'runColumn'
                ? await fetch(`${base}/api/column`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ runId: run.id, ...at, maxDepthKm: 40, stepKm: 0.5 }) })
                : await fetch(`${base}/api/projects/${projectIds[n % projectIds.length]}`);
          const body = (await res.json()) as { profile?: unknown[]; title?: string; band?: unknown; error?: { code: string } };
          // A point in a no-data cell of the run (outside the data) is a correct 422, not a server error.
          const ok = kind === 'project' ? res.status === 200 && body.title !== undefined : (res.status === 200 && body.profile?.length === 81) || (kind === 'runColumn' && body.error?.code === 'no_data_here');
          if (!ok) errors.push(`${kind} ${res.status} ${JSON.stringify(body).slice(0, 160)}`);
        } catch (e) {
          errors.push(`${kind} ${String(e)}`);
        }
        latencies[kind].push(performance.now() - t0);
      }
    };
    await Promise.all(Array.from({ length: CLIENTS }, (_, k) => client(k)));
    for (const [name, list] of Object.entries(latencies)) {
      const s = list.slice().sort((a, b) => a - b);
      console.log(`load ${name}: ${s.length} requests, p50 ${percentile(s, 0.5).toFixed(1)} ms, p99 ${percentile(s, 0.99).toFixed(1)} ms (${CLIENTS} clients, ${DURATION_MS / 1000} s, 127.0.0.1)`);
    }
    expect(errors.slice(0, 5)).toEqual([]);
    expect(latencies.column.length + latencies.project.length + latencies.runColumn.length).toBeGreaterThan(CLIENTS * 10);
    expect((await fetch(`${base}/api/health`)).status).toBe(200);
  }, 90_000);
});
