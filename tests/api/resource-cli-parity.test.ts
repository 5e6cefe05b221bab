// The same heat in place from the web and from the command line: a run made from the demo sites with a seed, then a
// heat-in-place job over it, gives the same P10/P50/P90 of every total as `subtherm heat-in-place --points` with
// the same sites, model, grid, options and seed. Both paths simulate the heat-flow fields through one function
// (server/runs/heat-flow-simulation.ts) and draw the model parameters from the same streams, so the totals agree to
// floating-point rounding. This is a consistency check between two ways into the program, not a check of the values:
// those are checked against a dense block-kriging solve in tests/unit/resource-simulated-totals.test.ts.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { runCliJson } from '../helpers/cli.ts';
import { DEMO_DIR } from '../../server/demo.ts';

let t: TestApp;
const SEED = 11,
  N = 24,
  CELL_KM = 12,
  MIN_TEMP_C = 100;
const modelPath = join(DEMO_DIR, 'model-uncertain.json');

type Total = { nominal: number; p10: number; p50: number; p90: number; mean: number };
type Report = { heatInPlaceEJ: Total; electricMWe: Total; cells: number; monteCarlo: { seed: number; realizations: number } };

beforeAll(async () => {
  t = await startTestApp('hip-parity');
}, 60_000);
afterAll(() => t.close());

async function cli(args: string[]): Promise<Report> {
  const { code, json } = await runCliJson(['heat-in-place', ...args]);
  expect(code).toBe(0);
  return json as Report;
}

async function webJob(runId: string, options: Record<string, unknown>): Promise<Report> {
  const hip = await t.post(`/api/runs/${runId}/heat-in-place`, { options });
  expect(hip.status).toBe(202);
  const { url } = (await hip.json()) as { url: string };
  let res: Response = await t.app.request(url);
  for (let i = 0; i < 6000 && res.status === 202; i++) {
    await new Promise((r) => setTimeout(r, 20));
    res = await t.app.request(url);
  }
  expect(res.status).toBe(200);
  return (await res.json()) as Report;
}

describe('heat in place: web job and CLI from the same inputs and seed', () => {
  it('give the same P10/P50/P90 and mean of every total', async () => {
    const model = JSON.parse(readFileSync(modelPath, 'utf8')) as unknown;
    const res = await t.post('/api/runs', { sites: 'demo-sites', model, realizations: N, seed: SEED, grid: { cellKm: CELL_KM } });
    expect(res.status).toBe(202);
    const runId = ((await res.json()) as { id: string }).id;
    const run = await t.waitEnd<{ status: string; message: string }>(runId);
    expect(run.status, run.message).toBe('done');
    const web = await webJob(runId, { realizations: N, minTempC: MIN_TEMP_C });
    const line = await cli([
      '--points',
      join(DEMO_DIR, 'sites.geojson'),
      '--model',
      modelPath,
      '--cell-km',
      String(CELL_KM),
      '--realizations',
      String(N),
      '--seed',
      String(SEED),
      '--min-temp-c',
      String(MIN_TEMP_C),
      '--json',
    ]);
    expect(web.monteCarlo.seed).toBe(SEED);
    expect(line.monteCarlo.realizations).toBe(N);
    expect(line.cells).toBe(web.cells);
    for (const key of ['heatInPlaceEJ', 'electricMWe'] as const) {
      for (const q of ['p10', 'p50', 'p90', 'mean', 'nominal'] as const) {
        const a = web[key][q],
          b = line[key][q];
        expect(Number.isFinite(a)).toBe(true);
        // Same fields, same draws: equal up to summation rounding.
        expect(Math.abs(a - b), `${key}.${q}: web ${a}, CLI ${b}`).toBeLessThanOrEqual(1e-9 * Math.abs(a));
      }
    }
    // The spread is a real one (the check would be empty on a constant total).
    expect(web.heatInPlaceEJ.p90).toBeGreaterThan(web.heatInPlaceEJ.p10 * 1.001);
  }, 300_000);

  it('agree when the anisotropy is estimated on direction classes of their own (the kriged nominal map takes them too)', async () => {
    const model = JSON.parse(readFileSync(modelPath, 'utf8')) as unknown;
    const interpolation = { method: 'kriging', anisotropy: 'auto', directions: { azimuthsDeg: [20, 110], toleranceDeg: 30 } };
    const res = await t.post('/api/runs', { sites: 'demo-sites', model, realizations: N, seed: SEED, grid: { cellKm: CELL_KM }, interpolation });
    expect(res.status).toBe(202);
    const runId = ((await res.json()) as { id: string }).id;
    const run = await t.waitEnd<{ status: string; message: string }>(runId);
    expect(run.status, run.message).toBe('done');
    const web = await webJob(runId, { realizations: N, minTempC: MIN_TEMP_C });
    const args = ['--points', join(DEMO_DIR, 'sites.geojson'), '--model', modelPath, '--cell-km', String(CELL_KM), '--realizations', String(N)];
    const common = [...args, '--seed', String(SEED), '--min-temp-c', String(MIN_TEMP_C), '--anisotropy', 'auto', '--json'];
    const line = await cli([...common, '--directions', '20,110', '--angle-tolerance', '30']);
    for (const key of ['heatInPlaceEJ', 'electricMWe'] as const)
      for (const q of ['p10', 'p50', 'p90', 'mean', 'nominal'] as const) {
        const a = web[key][q],
          b = line[key][q];
        expect(Math.abs(a - b), `${key}.${q}: web ${a}, CLI ${b}`).toBeLessThanOrEqual(1e-9 * Math.abs(a));
      }
    // The classes matter on these data: the default classes give another nominal total (else the check is empty).
    const byDefault = await cli(common);
    expect(Math.abs(byDefault.heatInPlaceEJ.nominal - web.heatInPlaceEJ.nominal)).toBeGreaterThan(1e-6 * web.heatInPlaceEJ.nominal);
  }, 300_000);
});
