// File-format benchmark (fixed sizes, seeded field). Figures only: never a pass/fail on time.
//  1. Cloud-Optimized GeoTIFF write of a 4000 × 4000 Float32 grid (a smooth field with noise and NoData, as a
//     kriging surface), tiles compressed on worker threads, beside GDAL's own COG driver on the same grid:
//     `gdal_translate -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES` from an uncompressed raw copy (ENVI), so GDAL
//     pays only a plain read. Ratio = GDAL's time / ours (≥ 0.5 is the target: at least half GDAL's speed).
//  2. A continental run end to end: 100,000 invented sites (open ocean, seeded) → `subtherm interpolate --method
//     kriging --size 4000x4000 --workers 2` with its sd grid, the automatic variogram with cross-validation, and
//     both COGs written; run as its own process under `/usr/bin/time -v` for the peak resident memory, with the
//     CLI's own stage times, CPU seconds and the load average (targets: ≤ 60 s, ≤ 1.5 GiB). Beside it, GDAL's
//     nearest-neighbour-limited inverse distance (`gdal_grid -a invdistnn:power=2:max_points=16:radius=1`, 1° ≈ 100 km
//     search) on the same sites, on a 500 × 500 grid scaled ×64 by cells, as a reference for a 16-neighbour grid
//     pass (an IDW, not kriging).
//  3. The isotherm products of that continental heat-flow grid: `subtherm isotherms --heat-flow continental.tif
//     --model fixtures/demo/model.json --depths-km 5,10` (depth to 300 and 500 °C, temperature at 5 and 10 km, facies,
//     base heat flow, solidus and melt-onset depths, contours, every grid a COG) as its own process under
//     `/usr/bin/time -v`: wall, CPU, peak resident memory and the verb's stage times. Then 20,000 seeded cells are
//     solved one by one in this process (the per-cell solve, no heat-flow table) and compared with the written
//     grids: the largest differences and the per-cell time scaled to the whole grid.
//     FORMATS_BENCH_SITES and FORMATS_BENCH_CONT_SIZE shrink it; FORMATS_BENCH_PARTS=cog, =continental or
//     =isotherms picks one; FORMATS_BENCH_HEAT_FLOW=G.tif gives the isotherms part its grid (no kriging run).
import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { readGeoTiff, writeGeoTiffFile, writeGeoTiff } from '../../server/io/geotiff.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { computeThermalGrids } from '../../shared/products/thermal-grids.ts';
import { compileModel, nominalModel } from '../../shared/thermal/index.ts';
import { cogThreads } from '../../server/io/cog.ts';
import { prng } from '../helpers/prng.ts';

const out = (s: string) => process.stdout.write(s + '\n');
const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-bench-'));
const size = Number(process.env.FORMATS_BENCH_SIZE ?? 4000);
const parts = process.env.FORMATS_BENCH_PARTS ?? 'cog,continental,isotherms';
const load = () =>
  loadavg()
    .map((v) => v.toFixed(1))
    .join(' ');

try {
  if (parts.includes('cog')) await cogWrite();
  const given = process.env.FORMATS_BENCH_HEAT_FLOW;
  const heatFlow = parts.includes('continental') || (parts.includes('isotherms') && given === undefined) ? continental() : given;
  if (parts.includes('isotherms')) await isotherms(heatFlow!);
} finally {
  rmSync(dir, { recursive: true, force: true });
}

async function cogWrite(): Promise<void> {
  const rnd = prng(7);
  const values = new Float32Array(size * size);
  for (let r = 0; r < size; r++) for (let c = 0; c < size; c++) values[r * size + c] = 65 + 20 * Math.sin(r / 300) * Math.cos(c / 230) + 0.5 * rnd();
  for (let i = 0; i < values.length; i += 101) values[i] = NaN;
  const grid = { width: size, height: size, values, west: -140, north: -20, dx: 0.005, dy: 0.005, crs: 'EPSG:4326', units: 'mW/m²' };
  const mbytes = (size * size * 4) / 2 ** 20;

  const ours = join(dir, 'ours.tif');
  let best = Infinity;
  for (let k = 0; k < 3; k++) {
    const t0 = performance.now();
    await writeGeoTiffFile(ours, grid, { description: 'bench' });
    best = Math.min(best, performance.now() - t0);
  }
  const c0 = process.cpuUsage();
  const t1 = performance.now();
  writeGeoTiff(grid, { description: 'bench' });
  const oneThread = performance.now() - t1;
  const cpu1 = process.cpuUsage(c0);
  out(
    `COG write, ${size} × ${size} Float32 (${mbytes.toFixed(0)} MB): ${(best / 1000).toFixed(2)} s on ${cogThreads()} worker threads (best of 3), ${(oneThread / 1000).toFixed(2)} s on one thread (${((cpu1.user + cpu1.system) / 1e6).toFixed(2)} s CPU); file ${(statSync(ours).size / 2 ** 20).toFixed(1)} MB`,
  );

  const raw = join(dir, 'raw.img');
  const nodataValues = Float32Array.from(values, (v) => (Number.isFinite(v) ? v : -9999));
  writeFileSync(raw, Buffer.from(nodataValues.buffer));
  writeFileSync(
    join(dir, 'raw.hdr'),
    `ENVI\nsamples = ${size}\nlines = ${size}\nbands = 1\nheader offset = 0\nfile type = ENVI Standard\ndata type = 4\ninterleave = bsq\nbyte order = 0\nmap info = {Geographic Lat/Lon, 1, 1, -140, -20, 0.005, 0.005, WGS-84}\ndata ignore value = -9999\n`,
  );
  const gdal = join(dir, 'gdal.tif');
  let gbest = Infinity,
    gcpu = Infinity;
  for (let k = 0; k < 3; k++) {
    rmSync(gdal, { force: true });
    const t0 = performance.now();
    // bash's `time` reports the child's user and system CPU seconds on stderr.
    const r = spawnSync('bash', ['-c', 'TIMEFORMAT="%U %S"; time gdal_translate -q -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES "$0" "$1"', raw, gdal], {
      encoding: 'utf8',
    });
    const t = performance.now() - t0;
    if (r.status !== 0) throw new Error(`gdal_translate failed: ${r.stderr}`);
    const [u, sys] = r.stderr.trim().split(/\s+/).slice(-2).map(Number);
    gbest = Math.min(gbest, t);
    gcpu = Math.min(gcpu, u + sys);
  }
  out(
    `gdal_translate -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES, same grid: ${(gbest / 1000).toFixed(2)} s (best of 3; ${gcpu.toFixed(2)} s CPU), file ${(statSync(gdal).size / 2 ** 20).toFixed(1)} MB`,
  );
  out(`CPU ratio on one thread (GDAL CPU / ours): ${(gcpu / ((cpu1.user + cpu1.system) / 1e6)).toFixed(2)}`);
  out(`COG write ratio (GDAL time / ours): ${(gbest / best).toFixed(2)}× GDAL's speed (target ≥ 0.5)`);
}

/** Seconds of a `/usr/bin/time -v` report's field. */
function timeField(report: string, name: string): number {
  const m = new RegExp(`${name.replace(/[()]/g, '\\$&')}: ([\\d.:]+)`).exec(report);
  if (!m) return NaN;
  const parts = m[1].split(':').map(Number);
  return parts.reduce((a, v) => a * 60 + v, 0);
}

/** Runs the continental kriging; returns the heat-flow COG it wrote. */
function continental(): string {
  const nSites = Number(process.env.FORMATS_BENCH_SITES ?? 100_000);
  const cells = Number(process.env.FORMATS_BENCH_CONT_SIZE ?? 4000);
  // Invented sites over 36° × 30° of open ocean (a smooth regional field, a shorter wave and noise), seeded.
  const rnd = prng(11);
  const lines = ['id,longitude,latitude,heatFlowMWm2'];
  for (let i = 0; i < nSites; i++) {
    const lon = -150 + 36 * rnd(),
      lat = -48 + 30 * rnd();
    const v = 65 + 20 * Math.sin(lon / 3) * Math.cos(lat / 2.3) + 8 * Math.sin(lon * 1.7 + lat) + 4 * (rnd() - 0.5);
    lines.push(`s${i},${lon.toFixed(5)},${lat.toFixed(5)},${v.toFixed(2)}`);
  }
  const csv = join(dir, 'sites.csv');
  writeFileSync(csv, lines.join('\n') + '\n');
  const tif = join(dir, 'continental.tif');
  const bin = new URL('../../bin/subtherm.mjs', import.meta.url).pathname;
  const load0 = load();
  const r = spawnSync(
    '/usr/bin/time',
    [
      '-v',
      process.execPath,
      bin,
      'interpolate',
      '--points',
      csv,
      '--method',
      'kriging',
      '--size',
      `${cells}x${cells}`,
      '--workers',
      '2',
      '--out',
      tif,
      '--json',
    ],
    { encoding: 'utf8', maxBuffer: 64 * 2 ** 20 },
  );
  if (r.status !== 0) throw new Error(`interpolate failed: ${r.stderr}`);
  const body = JSON.parse(r.stdout) as { timingsMs: Record<string, number>; grid: { nx: number; ny: number; cellKm: number }; variogram: { model: string } };
  const wall = timeField(r.stderr, 'Elapsed (wall clock) time (h:mm:ss or m:ss)');
  const cpu = timeField(r.stderr, 'User time (seconds)') + timeField(r.stderr, 'System time (seconds)');
  const rssGiB = timeField(r.stderr, 'Maximum resident set size (kbytes)') / 2 ** 20;
  const t = body.timingsMs;
  const stages = ['read', 'prepare', 'variogram', 'crossValidation', 'grid', 'write']
    .filter((k) => t[k] !== undefined)
    .map((k) => `${k} ${(t[k] / 1000).toFixed(1)} s`)
    .join(', ');
  const sizes = `${(statSync(tif).size / 2 ** 20).toFixed(0)} + ${(statSync(tif.replace(/\.tif$/, '.sd.tif')).size / 2 ** 20).toFixed(0)} MB`;
  out(
    `Continental kriging run, ${nSites.toLocaleString('en')} sites → ${body.grid.nx} × ${body.grid.ny} cells (${body.grid.cellKm.toFixed(2)} km) with sd, ${body.variogram.model} variogram (auto, cross-validated), two COGs (${sizes}):`,
  );
  out(
    `  wall ${wall.toFixed(1)} s (target ≤ 60), CPU ${cpu.toFixed(1)} s, peak resident ${rssGiB.toFixed(2)} GiB (target ≤ 1.5); load average ${load0} before, ${load()} after`,
  );
  out(`  stages: ${stages}`);
  // Reference: GDAL's 16-neighbour inverse distance on 500 × 500 cells over the same box, scaled by cells.
  const ref = Math.min(500, cells);
  const vrt = join(dir, 'sites.vrt');
  writeFileSync(
    vrt,
    `<OGRVRTDataSource><OGRVRTLayer name="sites"><SrcDataSource>${csv}</SrcDataSource><GeometryType>wkbPoint</GeometryType><LayerSRS>EPSG:4326</LayerSRS><GeometryField encoding="PointFromColumns" x="longitude" y="latitude" z="heatFlowMWm2"/></OGRVRTLayer></OGRVRTDataSource>`,
  );
  const g0 = performance.now();
  const g = spawnSync(
    'bash',
    [
      '-c',
      'TIMEFORMAT="%U %S"; time gdal_grid -q -a invdistnn:power=2:max_points=16:radius=1 -txe -151.8 -112.2 -tye -49.5 -16.5 -outsize "$0" "$0" -ot Float32 -of GTiff -l sites "$1" "$2"',
      String(ref),
      vrt,
      join(dir, 'gdal-grid.tif'),
    ],
    { encoding: 'utf8' },
  );
  const gWall = (performance.now() - g0) / 1000;
  if (g.status !== 0) {
    out(`  gdal_grid reference failed: ${g.stderr.trim()}`);
    return tif;
  }
  const [gu, gs] = g.stderr.trim().split(/\s+/).slice(-2).map(Number);
  const scale = (cells * cells) / (ref * ref);
  out(
    `  reference: gdal_grid invdistnn (16 neighbours, one thread) ${ref} × ${ref}: ${gWall.toFixed(1)} s wall, ${(gu + gs).toFixed(1)} s CPU; ×${scale.toFixed(0)} by cells → ${(gWall * scale).toFixed(0)} s wall, ${((gu + gs) * scale).toFixed(0)} s CPU for ${cells} × ${cells} (ours, whole run with kriging sd: ${cpu.toFixed(0)} s CPU)`,
  );
  return tif;
}

/** The isotherm products of a heat-flow grid, timed as their own process, then checked against the per-cell solve. */
async function isotherms(heatFlowTif: string): Promise<void> {
  const modelPath = new URL('../../fixtures/demo/model.json', import.meta.url).pathname;
  const outDir = join(dir, 'isotherms');
  const bin = new URL('../../bin/subtherm.mjs', import.meta.url).pathname;
  const load0 = load();
  const args = ['isotherms', '--heat-flow', heatFlowTif, '--model', modelPath, '--depths-km', '5,10', '--out-dir', outDir, '--json'];
  const r = spawnSync('/usr/bin/time', ['-v', process.execPath, bin, ...args], { encoding: 'utf8', maxBuffer: 64 * 2 ** 20 });
  if (r.status !== 0) throw new Error(`isotherms failed: ${r.stderr}`);
  const body = JSON.parse(r.stdout) as { timingsMs: Record<string, number>; cpuMs: Record<string, number>; grid: { width: number; height: number } };
  const wall = timeField(r.stderr, 'Elapsed (wall clock) time (h:mm:ss or m:ss)');
  const cpu = timeField(r.stderr, 'User time (seconds)') + timeField(r.stderr, 'System time (seconds)');
  const rssGiB = timeField(r.stderr, 'Maximum resident set size (kbytes)') / 2 ** 20;
  const t = body.timingsMs;
  const stages = ['read', 'prepare', 'thermal', 'contours', 'write']
    .filter((k) => t[k] !== undefined)
    .map((k) => `${k} ${(t[k] / 1000).toFixed(1)} s`)
    .join(', ');
  const { width, height } = body.grid;
  out(`Isotherm products of a ${width} × ${height} heat-flow grid (depth to 300/500 °C, temperature at 5/10 km, facies, limits, contours; every grid a COG):`);
  out(
    `  wall ${wall.toFixed(1)} s, CPU ${cpu.toFixed(1)} s, peak resident ${rssGiB.toFixed(2)} GiB (target ≤ 1.5); load average ${load0} before, ${load()} after`,
  );
  out(`  stages: ${stages}`);
  const c = body.cpuMs;
  out(`  CPU of the process: read ${(c.read / 1000).toFixed(1)} s, compute ${(c.compute / 1000).toFixed(1)} s, write ${(c.write / 1000).toFixed(1)} s`);
  await perCellCheck(heatFlowTif, modelPath, outDir, width * height);
}

/** 20,000 seeded cells solved one by one, against the written grids: largest differences and the per-cell time. */
async function perCellCheck(heatFlowTif: string, modelPath: string, outDir: string, cells: number): Promise<void> {
  const hf = (await readGeoTiff(readFileSync(heatFlowTif))).grid;
  const rnd = prng(5);
  const sample = Array.from({ length: Math.min(20_000, cells) }, () => Math.floor(rnd() * cells));
  const model = compileModel(nominalModel(parseModelText(readFileSync(modelPath, 'utf8'), modelPath).model), { maxDepthKm: 60 });
  const values = Float32Array.from(sample, (i) => hf.values[i]);
  const row = { ...hf, width: sample.length, height: 1, values };
  const t0 = performance.now();
  const exact = computeThermalGrids({
    heatFlow: row,
    models: [model],
    isothermsC: [300, 500],
    depthsKm: [5, 10],
    faciesDepthKm: 10,
    maxDepthKm: 60,
    tableNodes: null,
  });
  const perCell = (performance.now() - t0) / sample.length;
  const grids: [string, Float32Array, string][] = [
    ['depth-300C', exact.isothermDepthKm[0], 'km'],
    ['depth-500C', exact.isothermDepthKm[1], 'km'],
    ['temperature-5km', exact.temperatureC[0], '°C'],
    ['temperature-10km', exact.temperatureC[1], '°C'],
    ['melt-onset', exact.meltOnsetKm!, 'km'],
    ['solidus-depth', exact.solidusDepthKm!, 'km'],
  ];
  const diffs: string[] = [];
  for (const [name, e, units] of grids) {
    const written = (await readGeoTiff(readFileSync(join(outDir, `${name}.tif`)))).grid.values;
    let worst = 0,
      missing = 0;
    sample.forEach((i, k) => {
      const a = written[i],
        b = e[k];
      if (Number.isNaN(a) !== Number.isNaN(b)) missing++;
      else if (!Number.isNaN(a)) worst = Math.max(worst, Math.abs(a - b));
    });
    diffs.push(`${name} ${worst.toExponential(1)} ${units}${missing > 0 ? ` (${missing} cells missing in one only)` : ''}`);
  }
  out(`  against the per-cell solve at ${sample.length.toLocaleString('en')} seeded cells: largest difference ${diffs.join(', ')}`);
  out(
    `  per-cell solve ${(perCell * 1000).toFixed(0)} µs a cell here → ${((perCell * cells) / 1000).toFixed(0)} s for the whole grid on one thread (the table's thermal stage above)`,
  );
}
