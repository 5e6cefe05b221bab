// Conditional simulation benchmark: 200 realizations of a 500 × 500 grid of 1 km cells from 2,000 sites
// (spherical variogram, range 50 km, nugget 10 % of the sill, 16 conditioning neighbours) with per-cell mean, sd
// and P10/P50/P90; side by side in the same run, R's gstat (Debian r-cran-gstat, installed here with apt-get when
// missing) simulating the same field (sequential Gaussian simulation, 16 neighbours) for 10 realizations.
// Run: npm run bench -- simulate      (targets: ours ≤ 15 s and ≤ 1.5 GiB; time per realization ≥ 5× lower)
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { createConditionalSimulator } from '../../shared/interp/simulation.ts';
import { summarizeTargets } from '../../shared/interp/targetSummaries.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';
import { prng } from '../helpers/prng.ts';

const line = (s: string) => process.stdout.write(s + '\n');
const f1 = (v: number) => v.toFixed(1);
const N = 2000,
  NX = 500,
  NY = 500,
  R = 200,
  R_REF = 10;
const model: VariogramModel = { model: 'spherical', nugget: 0.1, partialSill: 0.9, rangeKm: 50 };

// Invented sites in a 500 × 500 km square (local km), a smooth field plus noise.
const r = prng(15);
const x = new Float64Array(N),
  y = new Float64Array(N),
  z = new Float64Array(N);
for (let i = 0; i < N; i++) {
  x[i] = r() * NX;
  y[i] = r() * NY;
  z[i] = Math.sin(x[i] / 40) * Math.cos(y[i] / 55) + 0.3 * (r() - 0.5);
}
const T = NX * NY;
const tx = new Float64Array(T),
  ty = new Float64Array(T);
for (let j = 0; j < NY; j++)
  for (let i = 0; i < NX; i++) {
    tx[j * NX + i] = i + 0.5;
    ty[j * NX + i] = NY - (j + 0.5);
  }

// Ours: setup (lattice spectrum + shared kriging weights), 200 realizations into a Float32 R × cells store, summaries.
const cpu0 = process.cpuUsage();
const t0 = performance.now();
const sim = createConditionalSimulator({ x, y, z, tx, ty, model, neighbors: 16, sampler: 'lattice', latticeKm: 1 });
const tSetup = performance.now() - t0;
const store = new Float32Array(R * T);
sim.run(42, 0, R, (k, v) => store.set(v, k * T));
const tReal = performance.now() - t0 - tSetup;
const s = summarizeTargets(store, R, T);
const oursMs = performance.now() - t0;
const cpu = process.cpuUsage(cpu0);
const cpuS = (cpu.user + cpu.system) / 1e6;
const peakMiB = process.resourceUsage().maxRSS / 1024;
let meanSd = 0;
for (let i = 0; i < T; i++) meanSd += s.sd[i] / T;
line(
  `ours: ${R} conditional realizations of ${NX}×${NY} cells from ${N} sites + per-cell mean/sd/P10/P50/P90: ${f1(oursMs / 1000)} s (setup ${f1(tSetup)} ms, realizations ${f1(tReal)} ms, summaries ${f1(oursMs - tSetup - tReal)} ms); peak RSS ${f1(peakMiB)} MiB   (targets ≤ 15 s, ≤ 1536 MiB)`,
);
line(`  CPU time of this process ${f1(cpuS)} s (wall time above; on a shared machine the CPU time is the load-independent figure)`);
line(`  sampler ${sim.sampler} torus ${sim.samplerInfo.torusNx}×${sim.samplerInfo.torusNy}; mean per-cell sd ${meanSd.toFixed(3)} (sill 1)`);
const oursPer = oursMs / R;
line(`  time per realization (all included): ${f1(oursPer)} ms`);

// Reference: R gstat, sequential Gaussian simulation (krige with nsim, nmax = 16) of the same field.
function haveGstat(): boolean {
  return spawnSync('Rscript', ['-e', 'suppressMessages(library(gstat))'], { stdio: 'ignore' }).status === 0;
}
if (!haveGstat()) {
  line('  installing r-cran-gstat with apt-get ...');
  spawnSync('apt-get', ['install', '-y', 'r-cran-gstat'], { stdio: 'ignore' });
}
if (!haveGstat()) {
  line('  R gstat not available (apt-get install -y r-cran-gstat failed): no reference figure');
} else {
  const dir = mkdtempSync(join(process.env.TMPDIR ?? '/tmp', 'sim-bench-'));
  try {
    writeFileSync(join(dir, 'sites.csv'), 'x,y,z\n' + Array.from(x, (v, i) => `${v},${y[i]},${z[i]}`).join('\n') + '\n');
    const script = `suppressMessages({library(sp); library(gstat)})
d <- read.csv("${join(dir, 'sites.csv')}"); coordinates(d) <- ~x+y
g <- expand.grid(x = seq(0.5, ${NX - 0.5}, by = 1), y = seq(0.5, ${NY - 0.5}, by = 1)); gridded(g) <- ~x+y
m <- vgm(psill = ${model.partialSill}, model = "Sph", range = ${model.rangeKm}, nugget = ${model.nugget})
set.seed(1)
t <- system.time(s <- krige(z ~ 1, d, g, model = m, nsim = ${R_REF}, nmax = 16, debug.level = 0))
cat(t[["elapsed"]], mean(apply(as.matrix(s@data), 1, sd)), "\\n")
`;
    writeFileSync(join(dir, 'sim.R'), script);
    const t1 = performance.now();
    const out = spawnSync('Rscript', [join(dir, 'sim.R')], { encoding: 'utf8' });
    const wall = performance.now() - t1;
    const [elapsedS, refSd] = out.stdout.trim().split(/\s+/).map(Number);
    if (out.status !== 0 || !Number.isFinite(elapsedS)) line(`  gstat failed: ${out.stderr.slice(0, 500)}`);
    else {
      const refPer = (elapsedS * 1000) / R_REF;
      line(
        `gstat (R, krige nsim=${R_REF}, nmax=16, sequential Gaussian simulation): ${f1(elapsedS)} s (process ${f1(wall / 1000)} s); per realization ${f1(refPer)} ms; mean per-cell sd ${refSd.toFixed(3)}`,
      );
      line(`  ratio gstat / ours per realization: ${f1(refPer / oursPer)}×   (target ≥ 5×)`);
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
