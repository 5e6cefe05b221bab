// Isograd benchmark (fixed sizes, seeded PRNG): 5,000 graded samples in a 500 × 500 km square, five zone
// boundaries, 500 × 500 indicator grids (1-km cells) with five fault barriers; then the lines, leave-one-out
// misfits and the fault reports. Budget: ≤ 5 s for the isograds. Side by side: the interpolation engine's own IDW
// predictor (shared/interp/idw.ts) run once per boundary on the same grid with the same barrier — the reference the
// shared-neighbour kernel must equal (tests/unit/structure-isograds.test.ts) and beat.
// Run: npm run bench -- structure
import { createStream } from '../../shared/random/prng.ts';
import { IdwPredictor } from '../../shared/interp/idw.ts';
import { FaultBarrier } from '../../shared/interp/barriers.ts';
import { buildTrace, computeIsogradsKm, faultReport, findMisfits, tracePieces, type SampleGrade } from '../../shared/structure/index.ts';

const N = 5000,
  SIZE = 500,
  CELL = 1;
const rng = createStream(20261201);
const x = new Float64Array(N),
  y = new Float64Array(N);
const grades: SampleGrade[] = [];
// A dome of grade centred in the square (rank falls 1 per 40 km), so all five isograds are closed curves.
for (let i = 0; i < N; i++) {
  x[i] = SIZE * rng.uniform();
  y[i] = SIZE * rng.uniform();
  const r = Math.hypot(x[i] - 250, y[i] - 250);
  const rank = Math.max(0, Math.min(5, Math.floor(5.99 - r / 40)));
  grades.push({ id: `b${i}`, lo: rank, hi: rank, source: 'zone', zone: null, series: 'barrovian', label: null });
}
const traces = [0, 1, 2, 3, 4].map((k) => {
  const pts: number[][] = [];
  const x0 = 60 + 90 * k;
  for (let s = 0; s <= 50; s++) pts.push([x0 + 20 * Math.sin(s / 8), 40 + 8.4 * s]);
  return buildTrace(`F${k + 1}`, [pts]).trace;
});
const pieces = tracePieces(traces);

const t0 = performance.now();
const res = computeIsogradsKm(x, y, grades, pieces, { cellKm: CELL, gridSize: [SIZE, SIZE] });
const t1 = performance.now();
const misfits = findMisfits(res.field, res.loo, grades, res.lines);
const reports = traces.map((t) => faultReport({ trace: t }, res.field, { supportKm: res.supportKm }));
const t2 = performance.now();

console.log(`samples ${N}, grid ${res.grid.width} × ${res.grid.height} (${CELL} km), boundaries 5, fault pieces ${pieces.length / 4}`);
console.log(`isograds total       ${(t1 - t0).toFixed(0)} ms   (budget 5000 ms)`);
for (const [k, v] of Object.entries(res.timingsMs)) console.log(`  ${k.padEnd(18)} ${v.toFixed(0)} ms`);
console.log(`  barrier searches   ${res.field.barrierSearches} of ${SIZE * SIZE} cells`);
console.log(`  line count         ${res.lines.length} (${res.lines.reduce((s, l) => s + l.lengthKm, 0).toFixed(0)} km)`);
console.log(
  `misfits + fault reports ${(t2 - t1).toFixed(0)} ms (${misfits.length} misfits, ${reports.reduce((s, r) => s + r.separations.length, 0)} separations)`,
);

// Reference: the engine's IdwPredictor, one boundary, same neighbours, power and barrier, every cell.
const z = Float64Array.from(grades, (g) => (g.lo >= 3 ? 1 : 0));
const ref = new IdwPredictor(res.field.x, res.field.y, z, { neighbors: 12, visibility: new FaultBarrier(pieces, res.field.x, res.field.y) });
const t3 = performance.now();
let maxDiff = 0;
const W = res.grid.width,
  NN = W * res.grid.height;
for (let r = 0; r < res.grid.height; r++)
  for (let c = 0; c < W; c++) {
    const v = ref.predict(res.grid.x0 + c * CELL, res.grid.y0 + r * CELL);
    const ours = res.indicators[2 * NN + r * W + c];
    if (Number.isFinite(ours)) maxDiff = Math.max(maxDiff, Math.abs(v - ours));
  }
const t4 = performance.now();
const refMs = t4 - t3;
console.log(`reference IdwPredictor, 1 boundary: ${refMs.toFixed(0)} ms → 5 boundaries ≈ ${(5 * refMs).toFixed(0)} ms`);
console.log(
  `ratio (engine IDW × 5) / shared-neighbour kernel: ${((5 * refMs) / res.timingsMs.indicatorGrids).toFixed(2)}; max |difference| staurolite-in ${maxDiff.toExponential(2)}`,
);
if (t1 - t0 > 5000) {
  console.log('OVER BUDGET');
  process.exitCode = 1;
}
