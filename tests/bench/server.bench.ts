// Server benchmark (fixed sizes, seeded PRNG; figures only, never a pass/fail on time), in-process:
//  1. POST /api/column for a model (no band) and for a run cell with the 200-realization band; GET /api/projects/:id.
//  2. POST /api/section, 200 × 100 cells.
//  3. the facies membership lookup (faciesIndexAt, used per cell by sections and grids) beside the full
//     classifyFacies (membership + distance to the nearest boundary) on the same points, as a ratio.
//  4. project saves (PUT, one SQLite transaction each) with synchronous = FULL (the server's setting) and NORMAL.
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { createApp } from '../../server/app.ts';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { loadDemo } from '../../server/demo.ts';
import { faciesIndexAt } from '../../shared/petrology/index.ts';
import { classifyFacies } from '../../shared/petrology/index.ts';
import { createStream } from '../../shared/random/index.ts';
import { runRequestSchema } from '../../shared/schema/run.ts';

const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-bench-'));
const store = new SqliteStore(join(dir, 'bench.sqlite'));
await loadDemo(store);
const app = createApp({ store, terrain: null, clientDir: null });
const rng = createStream(42, 0);
const post = async (path: string, body: unknown, method = 'POST', headers: Record<string, string> = {}) =>
  await app.request(path, { method, headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });

async function timeIt(name: string, n: number, f: (i: number) => Promise<unknown>): Promise<number> {
  for (let i = 0; i < Math.min(20, n); i++) await f(i); // warm-up
  const t0 = performance.now();
  for (let i = 0; i < n; i++) await f(i);
  const ms = (performance.now() - t0) / n;
  console.log(`${name.padEnd(48)} ${ms.toFixed(3).padStart(9)} ms/request  (${n} requests)`);
  return ms;
}

// A finished run with a 200 × 200 heat-flow grid (seeded values) and an sd grid, stored as the job system would.
const W = 200,
  H = 200;
const hf = Float32Array.from({ length: W * H }, () => 50 + 40 * rng.uniform());
const sd = new Float32Array(W * H).fill(6);
const meta = { width: W, height: H, west: -129, north: -37, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units: 'mW/m²' };
const now = new Date().toISOString();
await store.putRun({
  id: 'run_bench',
  cacheKey: 'bench',
  request: runRequestSchema.parse({ sites: 'demo-sites', model: 'demo-model', realizations: 200, seed: 1 }),
  status: 'done',
  progress: 1,
  message: 'done',
  layers: [],
  summary: {},
  warnings: [],
  model: null,
  grids: [],
  client: 'bench',
  createdAt: now,
  updatedAt: now,
});
await store.storeRunResult('run_bench', {
  files: [],
  grids: [
    { name: 'heatFlow', meta, values: hf },
    { name: 'heatFlowSd', meta, values: sd },
  ],
  record: { grids: ['heatFlow', 'heatFlowSd'] },
});

const points = Array.from({ length: 500 }, () => ({ lon: -129 + 0.02 + 1.96 * rng.uniform(), lat: -37 - 0.02 - 1.96 * rng.uniform() }));
await timeIt('column of a model (60 km, 0.5 km step)', 300, (i) =>
  post('/api/column', { model: 'demo-model', heatFlowMWm2: 50 + (i % 40) }).then((r) => r.text()),
);
await timeIt('column of a run cell, 200-realization band', 200, (i) =>
  post('/api/column', { runId: 'run_bench', ...points[i % points.length] }).then((r) => r.text()),
);
const { id, editToken } = (await (await post('/api/projects', { title: 'bench', state: { view: { zoom: 8 } } })).json()) as { id: string; editToken: string };
await timeIt('GET project', 1000, async () => (await app.request(`/api/projects/${id}`)).text());
await timeIt('section 200 × 100 through the run', 50, (i) =>
  post('/api/section', {
    runId: 'run_bench',
    line: [
      [points[i].lon, points[i].lat],
      [points[i + 1].lon, points[i + 1].lat],
    ],
  }).then((r) => r.text()),
);

// Facies lookup: the same 200,000 (T, P) points through both.
const NF = 200_000;
const tp = Float64Array.from({ length: 2 * NF }, (_, k) => (k % 2 === 0 ? 1100 * rng.uniform() : 25 * rng.uniform()));
let t0 = performance.now();
let agree = 0;
const fast = new Int8Array(NF);
for (let k = 0; k < NF; k++) fast[k] = faciesIndexAt(tp[2 * k], tp[2 * k + 1]);
const tFast = performance.now() - t0;
t0 = performance.now();
const names: (string | null)[] = new Array(NF);
for (let k = 0; k < NF; k++) names[k] = classifyFacies(tp[2 * k], tp[2 * k + 1]).facies;
const tRef = performance.now() - t0;
const { FACIES_NAMES } = await import('../../shared/petrology/index.ts');
for (let k = 0; k < NF; k++) if ((fast[k] === -1 ? null : FACIES_NAMES[fast[k]]) === names[k]) agree++;
console.log(
  `facies of ${NF} points: faciesIndexAt ${tFast.toFixed(1)} ms, classifyFacies ${tRef.toFixed(1)} ms, ratio ${(tRef / tFast).toFixed(1)}×, agreement ${agree}/${NF}`,
);

// Saves: synchronous FULL (the server) and NORMAL, same payload.
const put = (i: number) =>
  post(`/api/projects/${id}`, { state: { n: i, note: 'x'.repeat(500) } }, 'PUT', { authorization: `Bearer ${editToken}` }).then((r) => r.text());
const full = await timeIt('project save (PUT), synchronous = FULL', 300, put);
store.db.pragma('synchronous = NORMAL');
const normal = await timeIt('project save (PUT), synchronous = NORMAL', 300, put);
console.log(`save cost of FULL over NORMAL: ${(full / normal).toFixed(2)}×`);
await app.close();
await store.close();
rmSync(dir, { recursive: true, force: true });
