// Interpolation benchmarks (fixed sizes, seeded PRNG), each side by side with a reference library in the same run.
// Run: npm run bench -- interp     (BENCH_FULL=1 also runs the slow reference at N = 2000)
import turfInterpolate from '@turf/interpolate';
import kriging from '@sakitam-gis/kriging';
import { interpolateGrid, prepareInterpolation, finishGrid, type PointData } from '../../shared/interp/interpolate.ts';
import { createInterpPool, computeGridParallel } from '../../server/workers/interp-worker.ts';
import { kmPerDegree } from '../../shared/interp/projection.ts';
import { prng } from '../helpers/prng.ts';

/** n invented sites in a 1° square at 38° S (about 88 × 111 km), a smooth field plus noise. */
function sites(n: number, seed: number): PointData {
  const r = prng(seed);
  const lon = new Float64Array(n),
    lat = new Float64Array(n),
    values = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    lon[i] = -128.5 + r();
    lat[i] = -38.5 + r();
    values[i] = 60 + 20 * Math.sin(lon[i] * 9) * Math.cos(lat[i] * 7) + 3 * (r() - 0.5);
  }
  return { ids: Array.from({ length: n }, (_, i) => `b${i}`), lon, lat, values };
}
const BBOX: [number, number, number, number] = [-128.5, -38.5, -127.5, -37.5];
const ms = (t0: number) => performance.now() - t0;
const f1 = (v: number) => v.toFixed(1);
const line = (s: string) => process.stdout.write(s + '\n');

// 1. IDW, 5000 points → 500 × 500, 12 neighbours, vs @turf/interpolate (all points, haversine).
{
  const p = sites(5000, 1);
  let t = performance.now();
  const ours = interpolateGrid(p, { method: 'idw', neighbors: 12, grid: { bbox: BBOX, size: [500, 500] }, crossValidation: false });
  const oursMs = ms(t);
  const fc = {
    type: 'FeatureCollection' as const,
    features: Array.from(p.lon, (lo, i) => ({
      type: 'Feature' as const,
      geometry: { type: 'Point' as const, coordinates: [lo, p.lat[i]] },
      properties: { v: p.values[i] },
    })),
  };
  // turf on a 50 × 50 point grid (cell = 1/50 of the box), scaled linearly by cells (its cost is cells × points).
  const k = kmPerDegree(-38);
  t = performance.now();
  const ref = turfInterpolate(fc, (1 / 50) * k.lat, { gridType: 'point', property: 'v', units: 'kilometers', bbox: BBOX });
  const turfMs = ms(t);
  const turfCells = ref.features.length;
  const turfScaled = (turfMs * 250_000) / turfCells;
  t = performance.now();
  interpolateGrid(p, { method: 'idw', neighbors: 'all', grid: { bbox: BBOX, size: [100, 100] }, crossValidation: false });
  const allMs = (ms(t) * 250_000) / 10_000;
  line(`IDW 5000 pts → 500×500, k=12: ours ${f1(oursMs)} ms (${ours.grid.values.length} cells)`);
  line(`  @turf/interpolate (all points): ${f1(turfMs)} ms on ${turfCells} cells, scaled ×${(250_000 / turfCells).toFixed(1)} → ${f1(turfScaled)} ms`);
  line(`  ratio turf / ours(k=12): ${f1(turfScaled / oursMs)}×   (target ≥ 50×)`);
  line(`  ours all-points IDW: ${f1(allMs)} ms (run on 100×100, scaled ×25); ratio turf / ours(all): ${f1(turfScaled / allMs)}×`);
}

// 2. Global ordinary kriging, 200 × 200, estimate only, vs @sakitam-gis/kriging train + predict (not the same
//    estimator — it is a Bayesian-flavoured fit with its own variogram — so a speed reference only).
const full = process.env.BENCH_FULL === '1';
const vg = { model: 'exponential' as const, nugget: 1, partialSill: 150, rangeKm: 40 };
let sak1000 = NaN;
for (const n of [1000, 2000]) {
  const p = sites(n, 2);
  let t = performance.now();
  interpolateGrid(p, { method: 'kriging', neighbors: 'all', variogram: vg, sd: false, crossValidation: false, grid: { bbox: BBOX, size: [200, 200] } });
  const oursMs = ms(t);
  // Exact variance: one triangular solve (N²/2) per cell; run on 50 × 50 and scaled ×16 by cells.
  t = performance.now();
  interpolateGrid(p, { method: 'kriging', neighbors: 'all', variogram: vg, sd: true, crossValidation: false, grid: { bbox: BBOX, size: [50, 50] } });
  const sdMs = ms(t) * 16;
  let sakMs: number, note: string;
  if (n === 1000 || full) {
    t = performance.now();
    const model = kriging.train(Array.from(p.values), Array.from(p.lon), Array.from(p.lat), 'exponential', 0, 100);
    const out = new Float64Array(40_000);
    for (let r = 0; r < 200; r++)
      for (let c = 0; c < 200; c++) out[r * 200 + c] = kriging.predict(BBOX[0] + (c + 0.5) * 0.005, BBOX[3] - (r + 0.5) * 0.005, model);
    sakMs = ms(t);
    note = 'measured';
    if (n === 1000) sak1000 = sakMs;
  } else {
    sakMs = sak1000 * 8; // its train is O(N³): ×8 from N = 1000 to 2000
    note = 'extrapolated ×8 from N = 1000 (set BENCH_FULL=1 to measure)';
  }
  line(
    `Global OK N=${n} → 200×200, estimate only: ours ${f1(oursMs)} ms (one core); @sakitam-gis/kriging train+predict ${f1(sakMs)} ms (${note}); ratio ${f1(sakMs / oursMs)}×   (target ≥ 5×)`,
  );
  // The same grid on two worker threads, as the server computes it (rows split between workers).
  {
    const pool = createInterpPool(2);
    const prep = prepareInterpolation(p, {
      method: 'kriging',
      neighbors: 'all',
      variogram: vg,
      sd: false,
      crossValidation: false,
      grid: { bbox: BBOX, size: [200, 200] },
    });
    await computeGridParallel(pool, prep.plan); // warm the workers (tsx start-up, factorization cache)
    const t2 = performance.now();
    const prep2 = prepareInterpolation(p, {
      method: 'kriging',
      neighbors: 'all',
      variogram: vg,
      sd: false,
      crossValidation: false,
      grid: { bbox: BBOX, size: [200, 200] },
    });
    await computeGridParallel(pool, prep2.plan);
    const parMs = ms(t2);
    await pool.destroy();
    line(`  ours on two worker threads (prepare + rows): ${f1(parMs)} ms; ratio ${f1(sakMs / parMs)}×`);
  }
  line(`  ours with exact kriging variance: ${f1(sdMs)} ms (run on 50×50, scaled ×16)`);
}

// 3. Local ordinary kriging, 10,000 points → 1000 × 1000, 16 neighbours, with sd, two piscina workers.
{
  const p = sites(10_000, 3);
  const pool = createInterpPool(2);
  let t = performance.now();
  const prep = prepareInterpolation(p, {
    method: 'kriging',
    neighbors: 16,
    variogram: vg,
    sd: true,
    crossValidation: false,
    grid: { bbox: BBOX, size: [1000, 1000] },
  });
  const prepMs = ms(t);
  t = performance.now();
  const r = await computeGridParallel(pool, prep.plan);
  const gridMs = ms(t);
  const res = finishGrid(prep, r.values, r.sd, r.stats, gridMs);
  await pool.destroy();
  let nan = 0;
  for (let i = 0; i < res.grid.values.length; i++) if (!Number.isFinite(res.grid.values[i]) || !Number.isFinite(res.sd!.values[i])) nan++;
  const rss = process.memoryUsage().rss / 2 ** 20;
  line(
    `Local OK 10,000 pts → 1000×1000, k=16, with sd, 2 workers: ${f1(prepMs + gridMs)} ms (prepare ${f1(prepMs)}, grid ${f1(gridMs)}); ${r.stats.factorizations} factorizations for ${r.stats.cells} cells; ${nan} non-finite cells   (target ≤ 6000 ms)`,
  );
  line(`  main-thread rss ${f1(rss)} MiB (workers are threads of this process, so rss includes them; target ≤ 1024 MiB)`);
}
