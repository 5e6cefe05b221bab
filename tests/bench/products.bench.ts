// Grid-products benchmark (fixed sizes, seeded PRNG). Figures only: never a pass/fail on time.
//  1. Demo region at 500 × 500 cells: kriging of heat flow (fixtures/demo/sites.geojson), depth to two isotherms
//     (fixtures/demo/model.json) and their contours (1 km), end to end in this thread (target ≤ 3 s).
//  2. 2,000 × 2,000 cells from a heat-flow grid (seeded smooth field), depth to two isotherms, plus contours
//     (target ≤ 4 s of computation; rss printed against the output size). File writing timed separately.
//  Beside each, the reference: d3-contour's own polygon output on the same grid (what the products cut into lines).
import { readFileSync, mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { contours as d3contours } from 'd3-contour';
import { createStream } from '../../shared/random/index.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { contourGrid } from '../../shared/grid/contours.ts';
import { pointsFromGeoJson } from '../../shared/schema/interp.ts';
import { interpolateGrid } from '../../shared/interp/interpolate.ts';
import { compileModel, nominalModel } from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { computeThermalGrids } from '../../shared/products/thermal-grids.ts';
import { buildProvenance } from '../../shared/products/provenance.ts';
import { geotiffBytes, sha256Hex } from '../../server/io/export.ts';

const root = new URL('../../', import.meta.url);
const model = parseModelText(readFileSync(new URL('fixtures/demo/model.json', root), 'utf8')).model;
const cm = compileModel(nominalModel(model), { maxDepthKm: 60 });
const mb = (b: number) => (b / 2 ** 20).toFixed(0);
const out = (s: string) => process.stdout.write(s + '\n');

// 1. Demo, 500 × 500.
{
  const { points } = pointsFromGeoJson(JSON.parse(readFileSync(new URL('fixtures/demo/sites.geojson', root), 'utf8')), 'heatFlowMWm2');
  const t0 = performance.now();
  const k = interpolateGrid(points, { method: 'kriging', grid: { size: [500, 500] }, units: 'mW/m²', crossValidation: false });
  const t1 = performance.now();
  const grids = computeThermalGrids({ heatFlow: k.grid, models: [cm], isothermsC: [150, 300], depthsKm: [], maxDepthKm: 60, solidus: false });
  const t2 = performance.now();
  let lines = 0;
  for (const v of grids.isothermDepthKm) lines += contourGrid({ ...k.grid, values: v, units: 'km' }, { interval: 1 }).features.length;
  const t3 = performance.now();
  const d3t = performance.now();
  d3contours()
    .size([500, 500])
    .thresholds(Array.from({ length: 40 }, (_, i) => i + 1))(Array.from(grids.isothermDepthKm[0]));
  const d3ms = performance.now() - d3t;
  out(
    `demo 500 × 500 (${(250000).toLocaleString()} cells, ${points.ids.length} sites): kriging + sd ${((t1 - t0) / 1000).toFixed(2)} s, ` +
      `2 isotherm depths ${((t2 - t1) / 1000).toFixed(3)} s, contours (${lines} lines) ${((t3 - t2) / 1000).toFixed(3)} s; end to end ${((t3 - t0) / 1000).toFixed(2)} s (target ≤ 3 s)`,
  );
  out(
    `  reference d3-contour polygons of one depth grid, 40 levels: ${(d3ms / 1000).toFixed(3)} s; products' contours of both grids ÷ that: ${((t3 - t2) / d3ms).toFixed(2)}×`,
  );
}

// 2. 2,000 × 2,000 from a heat-flow grid.
{
  const W = 2000,
    H = 2000;
  const rng = createStream(42, 0);
  const a = Array.from({ length: 6 }, () => [rng.uniform() * 6, rng.uniform() * 6, rng.uniform() * 6.28, 4 + 8 * rng.uniform()]);
  const values = new Float32Array(W * H);
  for (let r = 0; r < H; r++)
    for (let c = 0; c < W; c++) {
      let v = 62;
      for (const [fx, fy, ph, amp] of a) v += amp * Math.sin(((fx * c) / W) * 6.28 + ((fy * r) / H) * 6.28 + ph);
      values[r * W + c] = v;
    }
  const hf: Grid<Float32Array> = { width: W, height: H, values, west: -129, north: -37, dx: 0.001, dy: 0.001, crs: 'EPSG:4326', units: 'mW/m²' };
  const rss0 = process.memoryUsage().rss;
  const t0 = performance.now();
  const grids = computeThermalGrids({ heatFlow: hf, models: [cm], isothermsC: [150, 300], depthsKm: [], maxDepthKm: 60, solidus: false });
  const t1 = performance.now();
  let lines = 0;
  for (const v of grids.isothermDepthKm) lines += contourGrid({ ...hf, values: v, units: 'km' }, { interval: 1 }).features.length;
  const t2 = performance.now();
  const rss1 = process.memoryUsage().rss;
  const outputBytes = 2 * 4 * W * H;
  out(
    `grid 2000 × 2000 (${(W * H).toLocaleString()} cells): 2 isotherm depths ${((t1 - t0) / 1000).toFixed(2)} s, contours (${lines} lines) ${((t2 - t1) / 1000).toFixed(2)} s; ` +
      `computation ${((t2 - t0) / 1000).toFixed(2)} s (target ≤ 4 s)`,
  );
  out(
    `  memory: rss ${mb(rss1)} MB (grew ${mb(rss1 - rss0)} MB during the products) for ${mb(outputBytes)} MB of depth grids (+ ${mb(4 * W * H * 4)} MB of base-flow, flag, status and input grids)`,
  );
  const dir = mkdtempSync(join(tmpdir(), 'products-bench-'));
  const prov = buildProvenance({ method: 'bench', model, inputs: {}, parameters: {} }, sha256Hex);
  const t3 = performance.now();
  writeFileSync(join(dir, 'depth-150C.tif'), geotiffBytes({ ...hf, values: grids.isothermDepthKm[0], units: 'km' }, 'bench', prov));
  const t4 = performance.now();
  out(
    `  file writing (separate): one 2000 × 2000 Float32 GeoTIFF ${((t4 - t3) / 1000).toFixed(2)} s (${((t4 - t3) / 1000 / 4).toFixed(2)} s per million cells, the geotiff package's writer)`,
  );
  rmSync(dir, { recursive: true, force: true });
}
