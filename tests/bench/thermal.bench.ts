// Thermal engine benchmark (fixed sizes, seeded PRNG). Figures only: never a pass/fail on time.
//  1. depth to two isotherms + one temperature for 1,000,000 cells, four layers, k(T), exponential A, one core;
//     beside it the same columns by a numerical reference (RK4 of dT/dz = q/k(T) + bisection) on a sample, as a ratio.
//  2. Monte Carlo, 200 realizations × 250,000 cells, two isotherms, on two worker threads (piscina).
import { fileURLToPath } from 'node:url';
import Piscina from 'piscina';
import { WORKER_EXEC_ARGV } from '../../server/workers/exec-argv.ts';
import { createStream } from '../../shared/random/index.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { allocateGridMonteCarloOutput, compileModel, geothermGrid, nominalModel, type GridMonteCarloSpec } from '../../shared/thermal/index.ts';

const MODEL: ThermalModelInput = {
  surfaceTemperatureC: 10,
  layers: [
    {
      name: 'sediments',
      bottomKm: 3,
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
    {
      name: 'lower crust',
      bottomKm: 36,
      conductivityWmK: 2.6,
      conductivityTempCoeffPerK: 1e-4,
      heatProductionUWm3: 0.5,
      heatProductionDecayKm: 20,
      densityKgM3: 2900,
    },
    { name: 'mantle', bottomKm: 60, conductivityWmK: 3.3, conductivityTempCoeffPerK: 2e-4, heatProductionUWm3: 0.02, densityKgM3: 3300 },
  ],
};

function heatFlow(n: number, seed: number): Float32Array {
  const rng = createStream(seed, 0);
  return Float32Array.from({ length: n }, () => 55 + 40 * rng.uniform());
}

// 1. deterministic grid
const cm = compileModel(nominalModel(MODEL), { maxDepthKm: 60 });
const N1 = 1_000_000;
const q1 = heatFlow(N1, 1);
const out = { isothermDepthKm: [new Float32Array(N1), new Float32Array(N1)], temperatureC: [] as Float32Array[] };
geothermGrid(cm, q1.subarray(0, 50_000), { isothermsC: [150, 300], depthsKm: [] }, { isothermDepthKm: out.isothermDepthKm, temperatureC: [] }); // warm-up
let best = Infinity;
for (let rep = 0; rep < 3; rep++) {
  const t = performance.now();
  geothermGrid(cm, q1, { isothermsC: [150, 300], depthsKm: [], maxDepthKm: 60 }, out);
  best = Math.min(best, performance.now() - t);
}
process.stdout.write(
  `grid: 2 isotherms × ${N1.toLocaleString()} cells, 4 layers, k(T), exponential A: ${(best / 1000).toFixed(3)} s (best of 3, one core; target ≤ 0.5 s)\n`,
);

// Numerical reference: RK4 (10 m steps) + linear interpolation of the crossing, same model, on 200 cells.
{
  const m = nominalModel(MODEL);
  const nRef = 200;
  const t = performance.now();
  let maxErr = 0;
  for (let c = 0; c < nRef; c++) {
    let T = m.surfaceTemperatureC,
      z = 0,
      q = q1[c],
      top = 0,
      found150 = NaN;
    for (const L of m.layers) {
      const b = L.conductivityTempCoeffPerK ?? 0,
        D = L.heatProductionDecayKm ?? 0,
        A0 = L.heatProductionUWm3 ?? 0,
        qt = q;
      const qz = (zz: number) => qt - (D > 0 ? A0 * D * (1 - Math.exp(-(zz - top) / D)) : A0 * (zz - top));
      const f = (zz: number, tt: number) => (qz(zz) * (1 + b * tt)) / L.conductivityWmK;
      const h = 0.01,
        n = Math.round((L.bottomKm - top) / h);
      for (let s = 0; s < n; s++) {
        const k1 = f(z, T),
          k2 = f(z + h / 2, T + (h / 2) * k1),
          k3 = f(z + h / 2, T + (h / 2) * k2),
          k4 = f(z + h, T + h * k3);
        const Tn = T + (h / 6) * (k1 + 2 * k2 + 2 * k3 + k4);
        if (found150 !== found150 && Tn >= 150) found150 = z + (h * (150 - T)) / (Tn - T);
        T = Tn;
        z += h;
      }
      q = qz(L.bottomKm);
      top = L.bottomKm;
    }
    maxErr = Math.max(maxErr, Math.abs(found150 - out.isothermDepthKm[0][c]));
  }
  const perCellRef = (performance.now() - t) / nRef;
  const perCell = best / N1;
  process.stdout.write(
    `reference RK4 (10 m steps): ${(perCellRef * 1000).toFixed(1)} µs/cell vs closed form ${(perCell * 1000).toFixed(3)} µs/cell: ratio ${(perCellRef / perCell).toFixed(0)}×; max |Δ depth 150 °C| ${(maxErr * 1000).toFixed(2)} m\n`,
  );
}

// 2. Monte Carlo on two worker threads
{
  const cells = 250_000,
    R = 200;
  const qsab = new Float32Array(new SharedArrayBuffer(cells * 4));
  qsab.set(heatFlow(cells, 2));
  const sd = new Float32Array(new SharedArrayBuffer(cells * 4)).fill(5);
  const spec: GridMonteCarloSpec = {
    models: [MODEL],
    heatFlowMWm2: qsab,
    heatFlowSdMWm2: sd,
    heatFlowErrorCorrelation: 'full',
    isothermsC: [150, 300],
    depthsKm: [],
    maxDepthKm: 60,
    realizations: R,
    seed: 11,
  };
  const mcOut = allocateGridMonteCarloOutput(cells, 2, 0, true);
  const pool = new Piscina({
    filename: fileURLToPath(new URL('./thermal-worker.ts', import.meta.url)),
    execArgv: WORKER_EXEC_ARGV,
    minThreads: 2,
    maxThreads: 2,
  });
  const chunk = 12_500;
  const t = performance.now();
  const tasks: Promise<number>[] = [];
  for (let s = 0; s < cells; s += chunk) tasks.push(pool.run({ spec, key: 'bench', out: mcOut, start: s, end: Math.min(cells, s + chunk) }));
  const inWorker = (await Promise.all(tasks)).reduce((a, b) => a + b, 0);
  const wall = performance.now() - t;
  await pool.destroy();
  let filled = 0;
  for (let i = 0; i < cells; i++) if (Number.isFinite(mcOut.isotherms[0].p50[i])) filled++;
  process.stdout.write(
    `Monte Carlo: ${R} realizations × ${cells.toLocaleString()} cells, 2 isotherms, 2 worker threads: ${(wall / 1000).toFixed(2)} s wall ` +
      `(${(inWorker / 1000).toFixed(2)} s of kernel time summed over workers; target ≤ 20 s); ${filled.toLocaleString()} cells with a P50\n`,
  );
}
