// File-format benchmark (fixed sizes, seeded field). Figures only: never a pass/fail on time.
//  1. Cloud-Optimized GeoTIFF write of a 4000 × 4000 Float32 grid (a smooth field with noise and NoData, as a
//     kriging surface), tiles compressed on worker threads, beside GDAL's own COG driver on the same grid:
//     `gdal_translate -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES` from an uncompressed raw copy (ENVI), so GDAL
//     pays only a plain read. Ratio = GDAL's time / ours (≥ 0.5 is the target: at least half GDAL's speed).
import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeGeoTiffFile, writeGeoTiff } from '../../server/io/geotiff.ts';
import { cogThreads } from '../../server/io/cog.ts';
import { prng } from '../helpers/prng.ts';

const out = (s: string) => process.stdout.write(s + '\n');
const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-bench-'));
const size = Number(process.env.FORMATS_BENCH_SIZE ?? 4000);

try {
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
  out(`COG write, ${size} × ${size} Float32 (${mbytes.toFixed(0)} MB): ${(best / 1000).toFixed(2)} s on ${cogThreads()} worker threads (best of 3), ${(oneThread / 1000).toFixed(2)} s on one thread (${((cpu1.user + cpu1.system) / 1e6).toFixed(2)} s CPU); file ${(statSync(ours).size / 2 ** 20).toFixed(1)} MB`);

  const raw = join(dir, 'raw.img');
  const nodataValues = Float32Array.from(values, (v) => (Number.isFinite(v) ? v : -9999));
  writeFileSync(raw, Buffer.from(nodataValues.buffer));
  writeFileSync(join(dir, 'raw.hdr'), `ENVI\nsamples = ${size}\nlines = ${size}\nbands = 1\nheader offset = 0\nfile type = ENVI Standard\ndata type = 4\ninterleave = bsq\nbyte order = 0\nmap info = {Geographic Lat/Lon, 1, 1, -140, -20, 0.005, 0.005, WGS-84}\ndata ignore value = -9999\n`);
  const gdal = join(dir, 'gdal.tif');
  let gbest = Infinity, gcpu = Infinity;
  for (let k = 0; k < 3; k++) {
    rmSync(gdal, { force: true });
    const t0 = performance.now();
    // bash's `time` reports the child's user and system CPU seconds on stderr.
    const r = spawnSync('bash', ['-c', 'TIMEFORMAT="%U %S"; time gdal_translate -q -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES "$0" "$1"', raw, gdal], { encoding: 'utf8' });
    const t = performance.now() - t0;
    if (r.status !== 0) throw new Error(`gdal_translate failed: ${r.stderr}`);
    const [u, sys] = r.stderr.trim().split(/\s+/).slice(-2).map(Number);
    gbest = Math.min(gbest, t);
    gcpu = Math.min(gcpu, u + sys);
  }
  out(`gdal_translate -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES, same grid: ${(gbest / 1000).toFixed(2)} s (best of 3; ${gcpu.toFixed(2)} s CPU), file ${(statSync(gdal).size / 2 ** 20).toFixed(1)} MB`);
  out(`CPU ratio on one thread (GDAL CPU / ours): ${(gcpu / ((cpu1.user + cpu1.system) / 1e6)).toFixed(2)}`);
  out(`COG write ratio (GDAL time / ours): ${(gbest / best).toFixed(2)}× GDAL's speed (target ≥ 0.5)`);
} finally {
  rmSync(dir, { recursive: true, force: true });
}
