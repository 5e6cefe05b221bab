// Test double of the run worker contract (server/runs/types.ts: RunTask → RunResult), used to exercise the job
// system's queue, progress, cancel and failure isolation with behaviours the real pipeline never shows on demand.
// The request's `title` picks the behaviour:
//   "fail"  → throws an Error (a failing run)         "crash" → the worker thread exits mid-run
//   "slow"  → 40 progress steps of 50 ms, stopping between steps ("tiles") once the cancel message arrives
//   other   → a small heat-flow grid by inverse-distance weighting of the sites (Shepard 1968, power 2),
//             a constant sd grid, a GeoJSON isograd line and a CSV, with progress posted along the way.
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { cancelSignal, type RunResult, type RunTask } from '../../server/runs/types.ts';
import { groundCellKmRange } from '../../shared/geodesy/ground-cell.ts';
import { TOOL_NAME, VERSION } from '../../shared/version.ts';

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

export default async function runDouble(task: RunTask): Promise<RunResult> {
  const { request, datasets, port } = task;
  const cancel = cancelSignal(port); // the real worker's cancel path
  const cancelled = () => cancel.signal.aborted;
  const progress = (fraction: number, message: string) => port.postMessage({ type: 'progress', fraction, message });
  progress(0.05, 'reading data sets');
  if (request.title === 'fail') throw new Error('the test double was asked to fail');
  if (request.title === 'crash') {
    await sleep(20);
    process.exit(3); // in a worker thread this ends the thread only
  }
  if (request.title === 'slow') {
    for (let i = 1; i <= 40; i++) {
      if (cancelled()) throw new Error('cancelled');
      await sleep(50);
      progress(i / 40, `tile ${i} of 40`);
    }
  }
  const sites = JSON.parse(datasets[request.sites].body) as { features: { geometry: { coordinates: number[] }; properties: { heatFlowMWm2: number } }[] };
  const xs = sites.features.map((f) => f.geometry.coordinates[0]);
  const ys = sites.features.map((f) => f.geometry.coordinates[1]);
  const qs = sites.features.map((f) => f.properties.heatFlowMWm2);
  const [w, s, e, n] = request.grid.bbox ?? [Math.min(...xs), Math.min(...ys), Math.max(...xs), Math.max(...ys)];
  const [width, height] = request.grid.size ?? [24, 20];
  const dx = (e - w) / width,
    dy = (n - s) / height;
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const x = w + (c + 0.5) * dx,
        y = n - (r + 0.5) * dy;
      let num = 0,
        den = 0;
      for (let k = 0; k < xs.length; k++) {
        const d2 = (xs[k] - x) ** 2 + (ys[k] - y) ** 2;
        const wt = 1 / Math.max(d2, 1e-12);
        num += wt * qs[k];
        den += wt;
      }
      values[r * width + c] = num / den;
    }
    progress(0.1 + (0.8 * (r + 1)) / height, `row ${r + 1} of ${height}`);
  }
  const sd = new Float32Array(width * height).fill(5);
  const grid = { width, height, west: w, north: n, dx, dy, crs: 'EPSG:4326', units: 'mW/m²', values };
  const tif = new Uint8Array(writeGeoTiff(grid));
  const midLat = (s + n) / 2;
  const isograds = {
    type: 'FeatureCollection',
    features: [
      {
        type: 'Feature',
        id: 'garnet-in',
        geometry: {
          type: 'LineString',
          coordinates: [
            [(w + e) / 2, s],
            [(w + e) / 2, n],
          ],
        },
        properties: { zone: 'garnet' },
      },
    ],
  };
  const csv = `# test double\nlongitude,latitude,heatFlowMWm2\n${w},${midLat},${values[0]}\n`;
  progress(1, 'writing layers');
  return {
    layers: [
      {
        info: { name: 'heat-flow', kind: 'raster', units: 'mW/m²', title: 'Surface heat flow', legend: null, formats: ['tif', 'csv'] },
        files: [
          { ext: 'tif', bytes: tif },
          { ext: 'csv', bytes: new TextEncoder().encode(csv) },
        ],
      },
      {
        info: { name: 'isograds', kind: 'vector', units: '', title: 'Isograds', legend: null, formats: ['geojson'] },
        files: [{ ext: 'geojson', bytes: new TextEncoder().encode(JSON.stringify(isograds)) }],
      },
    ],
    summary: {
      grid: {
        width,
        height,
        cells: width * height,
        west: w,
        north: n,
        dx,
        dy,
        crs: 'EPSG:4326',
        cellKm: dy * 111.195,
        groundCellKmRange: groundCellKmRange({ width, height, west: w, north: n, dx, dy }, (x, y) => [x, y]),
      },
      interpolation: { method: 'idw', variogram: null },
      crossValidation: null,
      isothermsC: request.isothermsC,
      depthsKm: request.depthsKm,
      faciesDepthKm: 10,
      maxDepthKm: 60,
      overrides: [],
      inconsistent: { inconsistent: 0, heatFlowExhausted: 0, conductivityUndefined: 0, nonPositiveHeatFlow: 0, meltOnset: 0, noData: 0 },
      monteCarlo: null,
      layers: { 'heat-flow': null, isograds: null },
      provenance: { tool: TOOL_NAME, version: VERSION, contentHash: 'test-double', inputs: { sites: `${xs.length} sites` } },
      timingsMs: {},
    },
    grids: { heatFlow: grid, heatFlowSd: { ...grid, values: sd } },
    model: typeof request.model === 'string' ? JSON.parse(datasets[request.model].body) : request.model,
    warnings: [],
  };
}
