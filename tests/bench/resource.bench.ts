// Heat-in-place benchmark (fixed sizes, seeded PRNG). Figures only: never a pass/fail on time.
//  1. Monte Carlo: a polygon covering 250,000 cells (500 × 500 lon/lat grid), 500 realizations, uncertain model,
//     kriging sd, uncertain Rg and ηu, on two worker threads (piscina); target ≤ 10 s.
//  2. Per-cell cost of a table lookup against the direct column integral (solve + Gauss–Legendre), same process.
//  3. Ellipsoidal cell area against geographiclib-geodesic's polygon area (the reference library), same process.
import { fileURLToPath } from 'node:url';
import Piscina from 'piscina';
import { WORKER_EXEC_ARGV } from '../../server/workers/exec-argv.ts';
import geodesic from 'geographiclib-geodesic';
import { createStream } from '../../shared/random/index.ts';
import { gridRowAreasM2, lonLatCellAreaM2 } from '../../shared/geodesy/index.ts';
import {
  ColumnHeatScratch,
  SUM_BLOCK,
  allocateResourceOutput,
  areaTotals,
  buildHeatTable,
  columnHeat,
  combineSums,
  emptyColumnHeat,
  lonLatGridPolygonMask,
  lookupHeatTable,
  prepareResource,
  type ResourceSpec,
} from '../../shared/resource/index.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { ColumnState, compileModel, nominalModel } from '../../shared/thermal/index.ts';

const MODEL: ThermalModelInput = {
  surfaceTemperatureC: { dist: 'uniform', min: 10, max: 14 },
  layers: [
    {
      name: 'sediments',
      bottomKm: 4,
      conductivityWmK: { dist: 'normal', mean: 2.2, sd: 0.2 },
      conductivityTempCoeffPerK: 1e-3,
      heatProductionUWm3: 1.2,
      densityKgM3: 2400,
    },
    {
      name: 'upper crust',
      bottomKm: 16,
      conductivityWmK: { dist: 'truncnormal', mean: 3.1, sd: 0.3, min: 2.4, max: 3.8 },
      conductivityTempCoeffPerK: 1.5e-3,
      heatProductionUWm3: { dist: 'triangular', min: 1.5, mode: 2.5, max: 3.5 },
      heatProductionDecayKm: { dist: 'uniform', min: 8, max: 12 },
      densityKgM3: 2700,
    },
    { name: 'lower crust', bottomKm: 36, conductivityWmK: 2.6, conductivityTempCoeffPerK: 1e-4, heatProductionUWm3: 0.5, densityKgM3: 2900 },
    { name: 'mantle', bottomKm: 60, conductivityWmK: 3.3, heatProductionUWm3: 0.02, densityKgM3: 3300 },
  ],
};

const W = 500,
  H = 500,
  cells = W * H,
  R = 500;
const grid = { width: W, height: H, west: -129, north: -37, dx: 0.004, dy: 0.004, crs: 'EPSG:4326' };
const rng = createStream(21, 0);
const q = new Float32Array(new SharedArrayBuffer(cells * 4));
const sd = new Float32Array(new SharedArrayBuffer(cells * 4));
for (let c = 0; c < cells; c++) {
  q[c] = 60 + 50 * rng.uniform();
  sd[c] = 3 + 5 * rng.uniform();
}
// A polygon a little larger than the grid: every one of the 250,000 cell centres is inside.
const poly = [
  [
    [-129.01, -36.99],
    [-126.99, -36.99],
    [-126.99, -39.01],
    [-129.01, -39.01],
    [-129.01, -36.99],
  ],
];
const maskLocal = lonLatGridPolygonMask(grid, [poly]);
const mask = new Uint8Array(new SharedArrayBuffer(cells));
mask.set(maskLocal);
let inside = 0;
for (let c = 0; c < cells; c++) inside += mask[c];

const spec: ResourceSpec = {
  models: [MODEL],
  heatFlowMWm2: q,
  heatFlowSdMWm2: sd,
  heatFlowErrorCorrelation: 'full',
  width: W,
  rowAreaM2: gridRowAreasM2(grid).rowAreaM2,
  polygonMask: mask,
  window: { topKm: 3, bottomKm: 7, minTempC: 150, refTempC: 15 },
  parameters: {
    rhoCMJm3K: 2.7,
    recoveryFactor: { dist: 'triangular', min: 0.05, mode: 0.1, max: 0.2 },
    utilizationEfficiency: { dist: 'uniform', min: 0.35, max: 0.45 },
    lifeYears: 30,
  },
  realizations: R,
  seed: 7,
};

{
  const t0 = performance.now();
  const prep = prepareResource(spec); // main thread: the layout and, afterwards, the totals
  const tPrep = performance.now() - t0;
  const out = allocateResourceOutput(prep, true);
  const pool = new Piscina({
    filename: fileURLToPath(new URL('./resource-worker.ts', import.meta.url)),
    execArgv: WORKER_EXEC_ARGV,
    minThreads: 2,
    maxThreads: 2,
  });
  const chunk = 32 * SUM_BLOCK;
  const t = performance.now();
  const tasks: Promise<number>[] = [];
  for (let s = 0; s < cells; s += chunk) tasks.push(pool.run({ spec, key: 'bench', out, start: s, end: Math.min(cells, s + chunk) }));
  const kernel = (await Promise.all(tasks)).reduce((a, b) => a + b, 0);
  const tTot = performance.now();
  const totals = areaTotals(prep, combineSums(prep, out));
  const wall = performance.now() - t;
  await pool.destroy();
  const p = totals[1];
  process.stdout.write(
    `Monte Carlo: ${R} realizations × ${inside.toLocaleString()} cells in the polygon, 2 worker threads: ${(wall / 1000).toFixed(2)} s wall ` +
      `(tables + cells; ${(kernel / 1000).toFixed(2)} s of kernel time summed over workers; totals ${(performance.now() - tTot).toFixed(0)} ms; ` +
      `main-thread preparation ${(tPrep / 1000).toFixed(2)} s before; target ≤ 10 s)\n` +
      `  polygon: heat in place P10/P50/P90 ${[p.heatInPlaceEJ.p10, p.heatInPlaceEJ.p50, p.heatInPlaceEJ.p90].map((v) => v!.toFixed(0)).join(' / ')} EJ; ` +
      `electric ${[p.electricMWe.p10, p.electricMWe.p50, p.electricMWe.p90].map((v) => v!.toFixed(0)).join(' / ')} MWe\n`,
  );
}

// 2. Table lookup against the direct column integral.
{
  const cm = compileModel(nominalModel(MODEL), { maxDepthKm: 7 });
  const st = new ColumnState(cm.nLayers),
    sc = new ColumnHeatScratch(),
    ch = emptyColumnHeat();
  const table = buildHeatTable(cm, cm.surfaceTemperatureC, spec.window, 20, 200, st, sc);
  const n = 200_000,
    o = new Float64Array(3);
  let acc = 0;
  let t = performance.now();
  for (let i = 0; i < n; i++) {
    lookupHeatTable(table, q[i], o);
    acc += o[0];
  }
  const tLookup = (performance.now() - t) / n;
  t = performance.now();
  for (let i = 0; i < n / 10; i++) {
    columnHeat(cm, q[i], cm.surfaceTemperatureC, spec.window, st, sc, ch);
    acc -= ch.heatKm;
  }
  const tDirect = (performance.now() - t) / (n / 10);
  process.stdout.write(
    `per cell: table lookup ${(tLookup * 1e6).toFixed(0)} ns vs direct solve + Gauss–Legendre ${(tDirect * 1e6).toFixed(0)} ns: ratio ${(tDirect / tLookup).toFixed(0)}× (checksum ${acc.toExponential(2)})\n`,
  );
}

// 3. Cell areas against geographiclib-geodesic (reference library).
{
  const n = 20_000;
  let t = performance.now();
  let a = 0;
  for (let i = 0; i < n; i++) a += lonLatCellAreaM2(-38 - i * 1e-4, -38 - i * 1e-4 + 0.004, 0.004);
  const tOurs = (performance.now() - t) / n;
  const WGS84 = geodesic.Geodesic.WGS84;
  t = performance.now();
  let b = 0,
    worst = 0;
  for (let i = 0; i < n / 20; i++) {
    const s = -38 - i * 1e-4,
      nn = s + 0.004;
    const p = WGS84.Polygon(false);
    // Parallels densified (64 points an edge) so geodesic edges follow them.
    for (let k = 0; k <= 64; k++) p.AddPoint(s, (0.004 * k) / 64);
    for (let k = 0; k <= 64; k++) p.AddPoint(nn, 0.004 - (0.004 * k) / 64);
    const ref = Math.abs(p.Compute(false, true).area ?? NaN);
    b += ref;
    worst = Math.max(worst, Math.abs(lonLatCellAreaM2(s, nn, 0.004) / ref - 1));
  }
  const tRef = (performance.now() - t) / (n / 20);
  process.stdout.write(
    `cell area: authalic formula ${(tOurs * 1e6).toFixed(0)} ns vs geographiclib polygon ${(tRef * 1e6).toFixed(0)} ns: ratio ${(tRef / tOurs).toFixed(0)}×; max relative difference ${worst.toExponential(2)} (checksum ${(a + b).toExponential(3)})\n`,
  );
}
