import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { directionalVariograms, variogramMap } from '../../shared/interp/directional-variogram.ts';
import { estimateAnisotropy } from '../../shared/interp/anisotropy.ts';
import { anisotropyMatrix, covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { InputError } from '../../shared/errors.ts';
import { prng } from '../helpers/prng.ts';
import { requireGstat } from '../helpers/gstat.ts';

// Directional semivariograms and the variogram map checked against R's gstat (Debian r-cran-gstat; Pebesma 2004;
// docs/sources.md#directional-variogram): variogram(z ~ 1, alpha = …, tol.hor = …, cutoff, width) and
// variogram(…, map = TRUE). gstat measures alpha clockwise from north (positive y), as our azimuths do, accepts a
// pair when |cos| of its angle to the direction is at least cos(tol.hor), and has no bandwidth. Its lag classes are
// closed on the right, ours on the left: the two differ only for a pair exactly on a class boundary, which random
// coordinates never give.

const N = 150;
function field(seed: number) {
  const r = prng(seed);
  const x = new Float64Array(N),
    y = new Float64Array(N),
    z = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    x[i] = r() * 100;
    y[i] = r() * 80;
    z[i] = 40 + 8 * Math.sin((x[i] + 2 * y[i]) / 15) + 3 * Math.cos(y[i] / 9) + 4 * (r() - 0.5);
  }
  return { x, y, z };
}
const DATA = field(4321);

function rscript(lines: string[], dir: string): string {
  writeFileSync(join(dir, 'run.R'), lines.join('\n'));
  const out = spawnSync('Rscript', [join(dir, 'run.R')], { encoding: 'utf8' });
  if (out.status !== 0) throw new Error(`Rscript failed: ${out.stderr}`);
  return out.stdout;
}

describe('directional semivariograms and the variogram map against R gstat', () => {
  let dir = '';
  beforeAll(() => {
    requireGstat();
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'aniso-gstat-'));
    writeFileSync(join(dir, 'pts.csv'), 'x,y,z\n' + Array.from(DATA.x, (xi, i) => `${xi},${DATA.y[i]},${DATA.z[i]}`).join('\n'));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const head = (d: string) => ['suppressMessages({library(sp); library(gstat)})', `p <- read.csv("${join(d, 'pts.csv')}"); coordinates(p) <- ~x+y`];

  for (const c of [
    { alpha: [0, 45, 90, 135], tol: 22.5, cutoff: 50, width: 5 },
    { alpha: [20, 110], tol: 10, cutoff: 60, width: 7.5 },
  ]) {
    it(`azimuths ${c.alpha.join(', ')}° ± ${c.tol}°, cutoff ${c.cutoff} km, width ${c.width} km: np, dist and γ to 1e-9`, () => {
      const out = rscript(
        [
          ...head(dir),
          `v <- variogram(z ~ 1, p, cutoff = ${c.cutoff}, width = ${c.width}, alpha = c(${c.alpha.join(',')}), tol.hor = ${c.tol})`,
          'for (i in seq_len(nrow(v))) cat(sprintf("%.17g %.17g %.17g %.17g\\n", v$dir.hor[i], v$np[i], v$dist[i], v$gamma[i]))',
        ],
        dir,
      );
      const ref = out
        .trim()
        .split('\n')
        .map((l) => l.trim().split(/\s+/).map(Number));
      const ours = directionalVariograms(DATA.x, DATA.y, DATA.z, { azimuthsDeg: c.alpha, toleranceDeg: c.tol, maxLagKm: c.cutoff, lagKm: c.width });
      const flat = ours.directions.flatMap((d) => d.lags.map((l) => [d.azimuthDeg, l.pairs, l.lagKm, l.gamma]));
      expect(flat.length).toBe(ref.length);
      expect(ref.length).toBeGreaterThan(10);
      ref.forEach((r, k) => {
        expect(flat[k][0]).toBe(r[0]);
        expect(flat[k][1]).toBe(r[1]);
        expect(Math.abs(flat[k][2] - r[2])).toBeLessThan(1e-9 * r[2]);
        expect(Math.abs(flat[k][3] - r[3])).toBeLessThan(1e-9 * r[3]);
      });
    });
  }

  it('variogram map (map = TRUE, cutoff 40 km, width 5 km): every cell’s np and γ to 1e-9', () => {
    const out = rscript(
      [
        ...head(dir),
        'm <- as.data.frame(variogram(z ~ 1, p, cutoff = 40, width = 5, map = TRUE)$map)',
        'for (i in seq_len(nrow(m))) cat(sprintf("%.17g %.17g %.17g %.17g\\n", m$dx[i], m$dy[i], m$np.var1[i], ifelse(is.na(m$var1[i]), -1, m$var1[i])))',
      ],
      dir,
    );
    const ref = out
      .trim()
      .split('\n')
      .map((l) => l.trim().split(/\s+/).map(Number));
    const map = variogramMap(DATA.x, DATA.y, DATA.z, { cutoffKm: 40, cellKm: 5 });
    expect(map.size).toBe(17);
    expect(ref.length).toBe(17 * 17);
    let filled = 0;
    for (const [dx, dy, np, g] of ref) {
      const col = Math.round((dx + 40) / 5),
        row = Math.round((40 - dy) / 5);
      const c = row * map.size + col;
      expect(map.pairs[c]).toBe(np);
      if (np === 0) expect(map.gamma[c]).toBeNull();
      else {
        filled++;
        expect(Math.abs(map.gamma[c]! - g)).toBeLessThan(1e-9 * g);
      }
    }
    expect(filled).toBeGreaterThan(200);
  });
});

describe('directional classes: bandwidth and symmetry (worked by hand)', () => {
  // Points (0,0), (10,0), (10,3) km with values 0, 2, 5: lag vectors (10,0) az 90°, (10,3) az 73.3° at 3 km off the
  // 90° line, (0,3) az 0°. Direction 90° ± 22.5° takes the first two; a 2 km bandwidth keeps only the first.
  const x = [0, 10, 10],
    y = [0, 0, 3],
    z = [0, 2, 5];
  it('without a bandwidth: γ̂ = (2² + 5²) / (2·2) in one lag class of mean distance (10 + √109) / 2', () => {
    const d = directionalVariograms(x, y, z, { azimuthsDeg: [90], toleranceDeg: 22.5, maxLagKm: 20, lagKm: 20 }).directions[0];
    expect(d.pairs).toBe(2);
    expect(d.lags[0].gamma).toBeCloseTo(29 / 4, 12);
    expect(d.lags[0].lagKm).toBeCloseTo((10 + Math.sqrt(109)) / 2, 12);
  });
  it('a 2 km bandwidth leaves only the pair on the line; the opposite azimuth 270° is the same class', () => {
    for (const az of [90, 270]) {
      const d = directionalVariograms(x, y, z, { azimuthsDeg: [az], toleranceDeg: 22.5, bandwidthKm: 2, maxLagKm: 20, lagKm: 20 }).directions[0];
      expect(d.pairs).toBe(1);
      expect(d.lags[0].gamma).toBeCloseTo(2, 12);
    }
  });
});

// Recovery of a known geometric anisotropy (docs/sources.md#geometric-anisotropy). The field is Gaussian with a spherical covariance (sill 1, nugget 0.05,
// major range 80 km at azimuth 30°, ratio 0.4, through anisotropyMatrix — the convention of --anisotropy), drawn at
// 900 random points of a 450 km square by a dense Cholesky factor (ml-matrix), K = 12 independent draws. One draw's
// estimate scatters (the semivariances of one realization fluctuate: with these sizes, about 5° in angle and 0.1
// in ratio); the tolerance is three standard errors of the mean over the draws, SE = SD/√K from the draws
// themselves, with the SD bounded so that an estimator that ignores the data (angles uniform on 180°, SD 52°)
// fails.
describe('estimated geometric anisotropy recovers a known angle and ratio', () => {
  const M = 900,
    K = 12,
    S = 450;
  const truth = { angleDeg: 30, ratio: 0.4 };
  const model: VariogramModel = { model: 'spherical', nugget: 0.05, partialSill: 1, rangeKm: 80 };
  const estimates: { angle: number; ratio: number }[] = [];
  beforeAll(() => {
    const r = prng(7);
    const x = Float64Array.from({ length: M }, () => r() * S);
    const y = Float64Array.from({ length: M }, () => r() * S);
    const A = anisotropyMatrix(truth);
    const C = new Matrix(M, M);
    for (let i = 0; i < M; i++)
      for (let j = 0; j < M; j++) {
        const dx = x[i] - x[j],
          dy = y[i] - y[j];
        C.set(i, j, i === j ? model.nugget + model.partialSill : covariance(model, Math.hypot(A[0] * dx + A[1] * dy, A[2] * dx + A[3] * dy)));
      }
    const L = new CholeskyDecomposition(C).lowerTriangularMatrix;
    const g = prng(99);
    const normal = () => Math.sqrt(-2 * Math.log(g() || 1e-300)) * Math.cos(2 * Math.PI * g());
    for (let k = 0; k < K; k++) {
      const zk = L.mmul(Matrix.columnVector(Array.from({ length: M }, normal))).getColumn(0);
      const e = estimateAnisotropy(x, y, zk, { model: 'spherical', maxLagKm: 150 });
      estimates.push({ angle: e.angleDeg, ratio: e.ratio });
    }
  }, 120_000);

  const stats = (v: number[]) => {
    const m = v.reduce((s, a) => s + a, 0) / v.length;
    const sd = Math.sqrt(v.reduce((s, a) => s + (a - m) ** 2, 0) / (v.length - 1));
    return { m, sd, se: sd / Math.sqrt(v.length) };
  };
  it('angle: mean within 3 SE of 30°, SD under 10°', () => {
    const a = stats(estimates.map((e) => e.angle));
    expect(a.sd).toBeLessThan(10);
    expect(Math.abs(a.m - truth.angleDeg)).toBeLessThan(3 * a.se);
  });
  it('ratio: mean within 3 SE of 0.4, SD under 0.15, every draw below 0.75', () => {
    const q = stats(estimates.map((e) => e.ratio));
    expect(q.sd).toBeLessThan(0.15);
    expect(Math.abs(q.m - truth.ratio)).toBeLessThan(3 * q.se);
    for (const e of estimates) expect(e.ratio).toBeLessThan(0.75);
  });
});

describe('estimating anisotropy from too few pairs', () => {
  it('names the direction and its pair count', () => {
    const r = prng(3);
    const x = Array.from({ length: 8 }, () => r() * 50),
      y = Array.from({ length: 8 }, () => r() * 50),
      z = Array.from({ length: 8 }, () => r());
    let err: unknown;
    try {
      estimateAnisotropy(x, y, z);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).message).toMatch(/direction \d+° \(± 22\.5°\) has \d+ pair\(s\) in \d+ lag class\(es\)/);
    expect((err as InputError).details[0].field).toBe('anisotropy');
  });
});
