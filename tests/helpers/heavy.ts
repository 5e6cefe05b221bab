// Heavy work against a running server, for the responsiveness test and benchmark: a finished run to work on, a
// heat-in-place job at its limit, a column at the layer cap with the most realizations, the run's spread layer, and
// a run at the server's cells × realizations limit, plus a health probe every 100 ms.
import { MODEL_BOUNDS } from '../../shared/schema/model.ts';

export interface Limit {
  name: string;
  value: number;
}
const json = { 'content-type': 'application/json' };

export async function limitsOf(base: string): Promise<Record<string, number>> {
  const l = (await (await fetch(`${base}/api/limits`)).json()) as { limits: Limit[] };
  return Object.fromEntries(l.limits.map((x) => [x.name, x.value]));
}

/** Starts a small demo run (cellKm 8, 20 realizations) and waits for it; returns its id and grid. */
export async function finishedRun(
  base: string,
): Promise<{ id: string; grid: { west: number; north: number; dx: number; dy: number; width: number; height: number } }> {
  const r = await fetch(`${base}/api/runs`, {
    method: 'POST',
    headers: json,
    body: JSON.stringify({ sites: 'demo-sites', model: 'demo-model', realizations: 20, seed: 2, grid: { cellKm: 8 } }),
  });
  const id = ((await r.json()) as { id: string }).id;
  for (;;) {
    const s = (await (await fetch(`${base}/api/runs/${id}`)).json()) as {
      status: string;
      summary: { grid?: { west: number; north: number; dx: number; dy: number; width: number; height: number } };
    };
    if (s.status === 'done') return { id, grid: s.summary.grid! };
    if (s.status !== 'queued' && s.status !== 'running') throw new Error(`run ${s.status}`);
    await new Promise((res) => setTimeout(res, 100));
  }
}

/** A heat-in-place job over the run with as many realizations as the limits allow; resolves to the job's URL. */
export async function heatInPlaceAtLimit(
  base: string,
  run: { id: string; grid: { width: number; height: number } },
  limits: Record<string, number>,
  seed = 1,
): Promise<{ url: string; realizations: number }> {
  const cells = run.grid.width * run.grid.height;
  const realizations = Math.min(limits.maxHeatInPlaceRealizations, Math.floor(limits.maxHeatInPlaceCellRealizations / cells));
  const res = await fetch(`${base}/api/runs/${run.id}/heat-in-place`, {
    method: 'POST',
    headers: json,
    body: JSON.stringify({ options: { realizations, seed } }),
  });
  if (res.status !== 202) throw new Error(`heat-in-place job refused: ${res.status} ${await res.text()}`);
  return { url: ((await res.json()) as { url: string }).url, realizations };
}

/** A column of a model at the layer cap with the most realizations the route takes (2000). */
export function columnAtLayerCap(base: string): Promise<Response> {
  const n = MODEL_BOUNDS.maxLayers;
  const layers = Array.from({ length: n }, (_, i) => ({
    name: `layer ${i + 1}`,
    bottomKm: ((i + 1) * 60) / n,
    conductivityWmK: { dist: 'normal', mean: 2.8, sd: 0.2 },
    heatProductionUWm3: 1,
    densityKgM3: 2750,
  }));
  return fetch(`${base}/api/column`, {
    method: 'POST',
    headers: json,
    body: JSON.stringify({ model: { surfaceTemperatureC: 10, layers }, heatFlowMWm2: 65, heatFlowSdMWm2: 5, realizations: 2000, seed: 1 }),
  });
}

/** The spread layer of the depth to `isothermC` over a finished run's realizations (computed on first request). */
export function spreadLayer(base: string, runId: string, isothermC = 300): Promise<Response> {
  return fetch(`${base}/api/runs/${runId}/spread?isothermC=${isothermC}`);
}

/** A run whose cells × realizations equal the server's maxRunCellRealizations; returns its id and run token. */
export async function maximalRun(base: string, limits: Record<string, number>): Promise<{ id: string; runToken: string; cells: number; realizations: number }> {
  const realizations = 1000;
  const cells = Math.floor(limits.maxRunCellRealizations / realizations);
  const nx = Math.max(2, Math.floor(Math.sqrt(cells * 2))),
    ny = Math.max(2, Math.floor(cells / nx));
  const res = await fetch(`${base}/api/runs`, {
    method: 'POST',
    headers: json,
    body: JSON.stringify({ sites: 'demo-sites', model: 'demo-model', realizations, seed: 9, grid: { size: [nx, ny] } }),
  });
  if (res.status !== 202) throw new Error(`maximal run refused: ${res.status} ${await res.text()}`);
  return { ...((await res.json()) as { id: string; runToken: string }), cells: nx * ny, realizations };
}

/** Probes GET /api/health every `everyMs` until `stop()` resolves; returns each probe's latency (ms) and failures. */
export async function probeHealth(
  base: string,
  until: Promise<unknown>,
  everyMs = 100,
): Promise<{ latencies: number[]; failures: string[]; loopDelay: { p50: number; p99: number; max: number } | null }> {
  let done = false;
  void until.finally(() => (done = true));
  const latencies: number[] = [];
  const failures: string[] = [];
  const pending: Promise<void>[] = [];
  let loopDelay: { p50: number; p99: number; max: number } | null = null;
  while (!done) {
    const t0 = performance.now();
    pending.push(
      fetch(`${base}/api/health`, { signal: AbortSignal.timeout(10_000) })
        .then(async (r) => {
          const b = (await r.json()) as { ok?: boolean; eventLoopDelayMs?: { p50: number; p99: number; max: number } };
          latencies.push(performance.now() - t0);
          if (r.status !== 200 || b.ok !== true) failures.push(`status ${r.status}`);
          if (b.eventLoopDelayMs) loopDelay = b.eventLoopDelayMs;
        })
        .catch((e: unknown) => void failures.push(String(e))),
    );
    await new Promise((res) => setTimeout(res, everyMs));
  }
  await Promise.all(pending);
  return { latencies, failures, loopDelay };
}

/** Polls a heat-in-place job until it is no longer 202. */
export async function waitJob(base: string, url: string): Promise<Response> {
  for (;;) {
    const r = await fetch(`${base}${url}`);
    if (r.status !== 202) return r;
    await r.arrayBuffer();
    await new Promise((res) => setTimeout(res, 200));
  }
}

/** Type-7 quantile of sorted values (Hyndman & Fan 1996). */
export function quantile(sorted: number[], p: number): number {
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  return sorted[lo] + (h - lo) * ((sorted[Math.min(lo + 1, sorted.length - 1)] ?? sorted[lo]) - sorted[lo]);
}
