// Benchmark of the well-temperature path: the weighted line fit against ml-matrix's normal equations (the
// reference library) on the same data, and the whole per-well analysis. Fixed sizes, seeded PRNG.
import { Matrix, solve } from 'ml-matrix';
import { RandomStream } from '../../shared/random/prng.ts';
import { fitLine } from '../../shared/wells/linear-fit.ts';
import { analyzeWells } from '../../shared/wells/analyze-all.ts';
import type { WellInput } from '../../shared/wells/checks.ts';

const FITS = 20_000;
const N = 40;
const rng = new RandomStream(20261201, 7);
const xs: Float64Array[] = [];
const ys: Float64Array[] = [];
const sds: Float64Array[] = [];
for (let f = 0; f < FITS; f++) {
  const x = new Float64Array(N),
    y = new Float64Array(N),
    sd = new Float64Array(N);
  const g = 20 + 20 * rng.uniform();
  for (let i = 0; i < N; i++) {
    x[i] = 0.1 + 3 * rng.uniform();
    sd[i] = 0.3 + rng.uniform();
    y[i] = 10 + g * x[i] + sd[i] * rng.normal();
  }
  xs.push(x);
  ys.push(y);
  sds.push(sd);
}

function time(label: string, fn: () => number): number {
  fn(); // warm-up
  const t0 = performance.now();
  const check = fn();
  const ms = performance.now() - t0;
  process.stdout.write(`${label.padEnd(44)} ${ms.toFixed(1).padStart(8)} ms   (checksum ${check.toFixed(6)})\n`);
  return ms;
}

const ours = time(`fitLine, ${FITS} weighted fits of ${N} points`, () => {
  let s = 0;
  for (let f = 0; f < FITS; f++) s += fitLine(xs[f], ys[f], sds[f], 'birge')!.slope;
  return s / FITS;
});
const ref = time(`ml-matrix normal equations, same fits`, () => {
  let s = 0;
  for (let f = 0; f < FITS; f++) {
    const X = new Matrix(N, 2);
    const wy = new Matrix(N, 1);
    for (let i = 0; i < N; i++) {
      const w = 1 / sds[f][i];
      X.set(i, 0, w);
      X.set(i, 1, w * xs[f][i]);
      wy.set(i, 0, w * ys[f][i]);
    }
    s += solve(X.transpose().mmul(X), X.transpose().mmul(wy)).get(1, 0);
  }
  return s / FITS;
});
process.stdout.write(`ratio ml-matrix / fitLine: ${(ref / ours).toFixed(1)}×\n`);

const WELLS = 2000;
const wells: WellInput[] = [];
for (let w = 0; w < WELLS; w++) {
  const g = 15 + 30 * rng.uniform();
  const ms = [] as WellInput['measurements'];
  for (let i = 0; i < 30; i++) {
    const z = 100 + 3000 * rng.uniform();
    ms.push({ depthM: z, temperatureC: 12 + (g * z) / 1000 + 0.3 * rng.normal(), kind: 'log' });
  }
  for (const dt of [6, 10, 16])
    ms.push({ depthM: 3200, temperatureC: 12 + g * 3.2 - 12 * Math.log10((4 + dt) / dt), kind: 'bht', hoursSinceCirculation: dt, circulationHours: 4 });
  wells.push({
    id: `B-${w}`,
    lonLat: [0, 0],
    measurements: ms,
    conductivityColumn: [
      { topM: 0, bottomM: 1500, conductivityWmK: 2.2 },
      { topM: 1500, bottomM: 3500, conductivityWmK: 3.0 },
    ],
    flags: [],
  });
}
time(`analyzeWells, ${WELLS} wells × 33 measurements`, () => {
  const a = analyzeWells(wells, { surfaceTemperatureC: 12 });
  return a.sites.features.reduce((s, f) => s + f.properties.heatFlowMWm2, 0) / a.sites.features.length;
});
