import { createStream, type RandomStream } from '../random/prng.ts';
import { FaultBarrier } from './barriers.ts';
import { Fft, fft2d, nextFftSize } from './fft.ts';
import { KrigingPredictor } from './kriging.ts';
import { choleskyInPlace } from './linalg.ts';
import { driftFrame, externalDriftFrame, type DriftKind } from './drift.ts';
import { anisotropyMatrix, correlation, modelCode, checkVariogram, type Anisotropy, type VariogramModel } from './variogram.ts';

/**
 * Conditional Gaussian simulation by kriging the residuals of unconditional realizations (Journel 1974; Journel &
 * Huijbregts 1978, §VII.C; Chilès & Delfiner 2012, §7.3.1):
 *   Z_cs(x) = Z_u(x) + Σᵢ λᵢ(x)·(zᵢ − Z_u(xᵢ)),
 * with Z_u an unconditional realization with the model covariance at the data and the targets, and λ(x) the
 * ordinary-kriging weights of target x from the data. The weights depend on the geometry only, so they are solved
 * once and shared by every realization. With a global neighbourhood the realizations at the targets have exactly
 * the ordinary-kriging estimate as mean, the ordinary-kriging variance as variance and the ordinary-kriging error
 * covariance between targets (not the simple-kriging conditional covariance, which these weights do not give).
 * With a drift (a polynomial in the coordinates, drift.ts) the weights are universal-kriging weights: Z_u then
 * simulates the residual (its covariance is the residual variogram's) and the drift comes back through the
 * weights' unbiasedness conditions Σλᵢf(xᵢ) = f(x), so the realizations' mean is the universal-kriging estimate and
 * their variance the universal-kriging variance (Chilès & Delfiner 2012, §7.3.1, conditioning by universal kriging).
 *
 * Unconditional fields come from one of two samplers:
 * - `cholesky` (the LU method, Davis 1987): the joint covariance matrix of all distinct sites is factored once,
 *   C = L·Lᵀ, and each realization is L·ε; exact, for up to `MAX_CHOLESKY_SITES` sites;
 * - `lattice` (circulant embedding, Wood & Chan 1994; Dietrich & Newsam 1997): a regular lattice of spacing h km
 *   is embedded in a periodic torus (sides 2^a·3^b·5^c) whose covariance matrix is circulant, so its
 *   eigenvalues are the FFT of its first row; Y = FFT(√(λ/M)·(ε₁ + iε₂)) then gives two independent realizations
 *   (real and imaginary parts). Data and targets take the value of their nearest lattice node (an approximation
 *   of at most h/√2 km in position); the nugget is added as independent white noise per distinct site.
 *   Negative eigenvalues (an embedding too small for the covariance) trigger a larger torus; any remainder is
 *   clipped to zero and reported.
 * Streams: realization r draws from `createStream(seed, r)` (the lattice's ε₁ and ε₂ of realizations 2p and 2p+1
 * come from streams 2p and 2p+1, nugget noise from `createStream(seed, r, 1)`), so results do not depend on how
 * realizations are split among threads.
 */

export const MAX_CHOLESKY_SITES = 3000;
/** Largest torus (nodes) of the lattice sampler: 2048 × 2048. */
export const MAX_LATTICE_NODES = 2048 * 2048;

export interface SimulationSetup {
  /** Data in local km (untransformed) and their values in the simulated (Gaussian) space. */
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** Targets in local km (untransformed). */
  tx: Float64Array;
  ty: Float64Array;
  model: VariogramModel;
  anisotropy?: Anisotropy | null;
  /** Conditioning neighbours per target; Infinity = all data. Default 16. */
  neighbors?: number;
  /** Largest global kriging system. Default 5000. */
  maxGlobal?: number;
  sampler?: 'auto' | 'cholesky' | 'lattice';
  /** Lattice spacing (km) for the lattice sampler; default: the extent / 512. */
  latticeKm?: number;
  /**
   * Measurement-error variances of the data (simulated space, units²): on the conditioning kriging diagonal, and
   * added as independent noise to the unconditional values at the data, so realizations are of the true field.
   */
  errorVariance?: Float64Array | null;
  /**
   * Fault pieces in local km (untransformed), flat [x1, y1, x2, y2, …]: a datum does not condition a target when the
   * straight path between them crosses a piece (barriers.ts, the same test and neighbourhoods as kriging's); the
   * unconditional field itself stays continuous, so across a fault a target keeps only the variogram's spread.
   */
  faults?: Float64Array | null;
  /** Drift of the mean: universal-kriging conditioning (default none: ordinary kriging). */
  trend?: DriftKind;
  /** An external drift's covariate at the data and at the targets (trend 'external'). */
  covariate?: { atData: Float64Array; atTargets: Float64Array } | null;
}

export interface ConditioningWeights {
  /** CSR offsets per target (length targets + 1). */
  offsets: Int32Array;
  ids: Int32Array;
  lambda: Float64Array;
  /** Targets without a usable neighbour set (NaN). */
  empty: number;
}

/** Distinct sites: data first, then targets; coincident locations (< 1 mm) share a site. */
interface Sites {
  sx: Float64Array;
  sy: Float64Array;
  dataSite: Int32Array;
  targetSite: Int32Array;
}

function buildSites(x: Float64Array, y: Float64Array, tx: Float64Array, ty: Float64Array): Sites {
  const key = new Map<string, number>();
  const sx: number[] = [],
    sy: number[] = [];
  const q = (v: number) => Math.round(v * 1e6); // 1 mm cells
  const site = (a: number, b: number): number => {
    const k = `${q(a)},${q(b)}`;
    let s = key.get(k);
    if (s === undefined) {
      s = sx.length;
      key.set(k, s);
      sx.push(a);
      sy.push(b);
    }
    return s;
  };
  const dataSite = new Int32Array(x.length),
    targetSite = new Int32Array(tx.length);
  for (let i = 0; i < x.length; i++) dataSite[i] = site(x[i], y[i]);
  for (let i = 0; i < tx.length; i++) targetSite[i] = site(tx[i], ty[i]);
  return { sx: Float64Array.from(sx), sy: Float64Array.from(sy), dataSite, targetSite };
}

/**
 * Standard normal draws by Marsaglia's polar method (Marsaglia & Bray 1964): pairs (u, v) uniform in the square
 * from one 32-bit output each, kept when s = u² + v² ∈ (0, 1), giving u·√(−2 ln s / s) and v·√(−2 ln s / s);
 * one logarithm per two draws and no trigonometry. Multiplies draw k by `scale[k]` (or 1) and adds it to out[k]
 * when `add`, else stores it.
 */
export function fillNormals(rng: RandomStream, out: Float64Array, scale: Float64Array | null, scalar: number, add: boolean): void {
  const n = out.length;
  const K = 2 / 4294967296;
  for (let k = 0; k < n; k += 2) {
    let u: number, v: number, q: number;
    do {
      u = rng.nextUint32() * K - 1;
      v = rng.nextUint32() * K - 1;
      q = u * u + v * v;
    } while (q >= 1 || q === 0);
    const f = Math.sqrt((-2 * Math.log(q)) / q) * scalar;
    const a = u * f,
      b = v * f;
    if (scale !== null) {
      if (add) {
        out[k] += a * scale[k];
        if (k + 1 < n) out[k + 1] += b * scale[k + 1];
      } else {
        out[k] = a * scale[k];
        if (k + 1 < n) out[k + 1] = b * scale[k + 1];
      }
    } else if (add) {
      out[k] += a;
      if (k + 1 < n) out[k + 1] += b;
    } else {
      out[k] = a;
      if (k + 1 < n) out[k + 1] = b;
    }
  }
}

/** Samples unconditional values at the distinct sites: realization r into `out`. */
interface Sampler {
  readonly kind: 'cholesky' | 'lattice';
  readonly warnings: string[];
  readonly info: Record<string, number>;
  /** Fills `outA` with realization r and, when given, `outB` with realization r + 1 (the lattice's pair). */
  sample(seed: number, r: number, outA: Float64Array, outB: Float64Array | null): void;
  /** True when one call gives two realizations. */
  readonly pairs: boolean;
}

/** The covariance of the structured part (no nugget) at a lag (dx, dy) km, anisotropy applied. */
function structuredCov(model: VariogramModel, m: [number, number, number, number]): (dx: number, dy: number) => number {
  const code = modelCode(model.model);
  const a = model.rangeKm,
    c = model.partialSill;
  return (dx, dy) => {
    const u = m[0] * dx + m[1] * dy,
      v = m[2] * dx + m[3] * dy;
    const h = Math.sqrt(u * u + v * v);
    return h > 0 ? c * correlation(code, a, h) : c;
  };
}

class CholeskySampler implements Sampler {
  readonly kind = 'cholesky' as const;
  readonly warnings: string[] = [];
  readonly info: Record<string, number>;
  readonly pairs = false;
  private readonly L: Float64Array;
  private readonly n: number;
  private readonly eps: Float64Array;
  private readonly rng: RandomStream = createStream(0);

  constructor(s: Sites, model: VariogramModel, m: [number, number, number, number]) {
    const n = s.sx.length;
    const cov = structuredCov(model, m);
    const sill = model.nugget + model.partialSill;
    const L = new Float64Array(n * n);
    let jitter = 0,
      ok = false;
    for (let attempt = 0; attempt < 5 && !ok; attempt++) {
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < i; j++) L[i * n + j] = cov(s.sx[i] - s.sx[j], s.sy[i] - s.sy[j]);
        L[i * n + i] = sill + jitter;
      }
      ok = choleskyInPlace(L, n, n, 0);
      if (!ok) jitter = sill * Math.pow(10, -12 + 2 * attempt);
    }
    if (!ok) throw new RangeError('the joint covariance matrix of the data and targets is not positive definite');
    if (jitter > 0) this.warnings.push(`the joint covariance matrix needed a diagonal regularization of ${jitter.toExponential(1)} (value units²)`);
    this.L = L;
    this.n = n;
    this.eps = new Float64Array(n);
    this.info = { sites: n, jitter };
  }

  sample(seed: number, r: number, out: Float64Array): void {
    const { L, n, eps } = this;
    fillNormals(this.rng.reset(seed, r), eps, null, 1, false);
    for (let i = 0; i < n; i++) {
      const ri = i * n;
      let s = 0;
      for (let k = 0; k <= i; k++) s += L[ri + k] * eps[k];
      out[i] = s;
    }
  }
}

class LatticeSampler implements Sampler {
  readonly kind = 'lattice' as const;
  readonly warnings: string[] = [];
  readonly info: Record<string, number>;
  readonly pairs = true;
  private readonly mx: number;
  private readonly my: number;
  private readonly sqrtLam: Float64Array;
  private readonly re: Float64Array;
  private readonly im: Float64Array;
  private readonly fx: Fft;
  private readonly fy: Fft;
  private readonly node: Int32Array;
  private readonly nuggetSd: number;
  private readonly rng: RandomStream = createStream(0);

  constructor(s: Sites, model: VariogramModel, m: [number, number, number, number], h: number) {
    if (!(h > 0 && Number.isFinite(h))) throw new RangeError(`lattice spacing must be > 0 km, got ${h}`);
    let x0 = Infinity,
      x1 = -Infinity,
      y0 = Infinity,
      y1 = -Infinity;
    for (let i = 0; i < s.sx.length; i++) {
      x0 = Math.min(x0, s.sx[i]);
      x1 = Math.max(x1, s.sx[i]);
      y0 = Math.min(y0, s.sy[i]);
      y1 = Math.max(y1, s.sy[i]);
    }
    const nx = Math.round((x1 - x0) / h) + 1,
      ny = Math.round((y1 - y0) / h) + 1;
    // Correlation length (km): the range for the spherical model (exactly 0 beyond), twice the practical range for
    // the others (correlation e^−6 ≈ 0.25 %); the major axis carries the longest range, so anisotropy never adds.
    const reach = (model.model === 'spherical' ? 1 : 2) * model.rangeKm;
    const cov = structuredCov(model, m);
    // Start from the smaller of "lattice + correlation length" and twice the lattice (enough when the covariance
    // is smooth at the lattice's scale, Dietrich & Newsam 1997); grow while eigenvalues come out negative.
    const pad = Math.ceil(reach / h);
    let mx = nextFftSize(Math.max(2, Math.min(nx + pad, 2 * nx))),
      my = nextFftSize(Math.max(2, Math.min(ny + pad, 2 * ny)));
    let lam: Float64Array | null = null;
    let negMass = 0,
      total = 0;
    for (let attempt = 0; attempt < 3; attempt++) {
      if (mx * my > MAX_LATTICE_NODES) {
        throw new RangeError(`the simulation lattice would need a ${mx} × ${my} torus (spacing ${h.toPrecision(3)} km), above ${MAX_LATTICE_NODES} nodes`);
      }
      const re = new Float64Array(mx * my),
        im = new Float64Array(mx * my);
      for (let j = 0; j < my; j++) {
        const dy = Math.min(j, my - j) * h;
        for (let i = 0; i < mx; i++) {
          // Symmetric torus lag: min(i, M − i) per axis with both signs of the cross term averaged for anisotropy.
          const dx = Math.min(i, mx - i) * h;
          const sx = i <= mx - i ? 1 : -1,
            sy = j <= my - j ? 1 : -1;
          re[j * mx + i] = cov(sx * dx, sy * dy);
        }
      }
      fft2d(re, im, mx, my, new Fft(mx), new Fft(my, mx));
      negMass = 0;
      total = 0;
      for (let k = 0; k < re.length; k++) {
        const v = re[k];
        if (v < 0) negMass -= v;
        total += Math.abs(v);
      }
      lam = re;
      // Grow while more than 0.1 % of the spectrum's mass is negative (clipping that little changes variances by
      // about as much; Chan & Wood 1997 approximate embedding).
      if (!(negMass > 1e-3 * total) || attempt === 2) break;
      if (mx * my * 4 > MAX_LATTICE_NODES) break;
      mx *= 2;
      my *= 2;
    }
    if (negMass > 1e-6 * total)
      this.warnings.push(
        `circulant embedding: negative eigenvalues (${((100 * negMass) / total).toPrecision(2)} % of the spectrum) were set to zero; the simulated variance is slightly off`,
      );
    const M = mx * my;
    this.sqrtLam = new Float64Array(M);
    for (let k = 0; k < M; k++) this.sqrtLam[k] = lam![k] > 0 ? Math.sqrt(lam![k] / M) : 0;
    this.mx = mx;
    this.my = my;
    this.re = new Float64Array(M);
    this.im = new Float64Array(M);
    this.fx = new Fft(mx);
    this.fy = new Fft(my, mx);
    this.node = new Int32Array(s.sx.length);
    for (let i = 0; i < s.sx.length; i++) {
      const c = Math.round((s.sx[i] - x0) / h),
        r = Math.round((s.sy[i] - y0) / h);
      this.node[i] = r * mx + c;
    }
    this.nuggetSd = Math.sqrt(model.nugget);
    this.info = { latticeNx: nx, latticeNy: ny, latticeKm: h, torusNx: mx, torusNy: my, clippedSpectrumFraction: total > 0 ? negMass / total : 0 };
  }

  sample(seed: number, r: number, outA: Float64Array, outB: Float64Array | null): void {
    const { re, im, sqrtLam, node } = this;
    fillNormals(this.rng.reset(seed, r), re, sqrtLam, 1, false);
    fillNormals(this.rng.reset(seed, r + 1), im, sqrtLam, 1, false);
    fft2d(re, im, this.mx, this.my, this.fx, this.fy);
    const ns = node.length;
    for (let i = 0; i < ns; i++) outA[i] = re[node[i]];
    if (outB !== null) for (let i = 0; i < ns; i++) outB[i] = im[node[i]];
    if (this.nuggetSd > 0) {
      fillNormals(this.rng.reset(seed, r, 1), outA, null, this.nuggetSd, true);
      if (outB !== null) fillNormals(this.rng.reset(seed, r + 1, 1), outB, null, this.nuggetSd, true);
    }
  }
}

/** The fault barrier in the anisotropy-transformed space of the data (dx, dy); null without faults. */
function barrierIn(faults: Float64Array | null, m: [number, number, number, number], dx: Float64Array, dy: Float64Array): FaultBarrier | null {
  if (faults === null || faults.length === 0) return null;
  const tf = new Float64Array(faults.length);
  for (let i = 0; i < faults.length; i += 2) {
    tf[i] = m[0] * faults[i] + m[1] * faults[i + 1];
    tf[i + 1] = m[2] * faults[i] + m[3] * faults[i + 1];
  }
  return new FaultBarrier(tf, dx, dy);
}

/** Ordinary-kriging weights of every target from the data (shared by all realizations). */
export function conditioningWeights(
  p: KrigingPredictor,
  m: [number, number, number, number],
  tx: Float64Array,
  ty: Float64Array,
  atTargets: Float64Array | null = null,
): ConditioningWeights {
  const T = tx.length;
  const k = p.k;
  const offsets = new Int32Array(T + 1);
  let ids = new Int32Array(Math.max(1, Math.min(T * k, 1 << 20)));
  let lambda = new Float64Array(ids.length);
  const bi = new Int32Array(k),
    bl = new Float64Array(k);
  let used = 0,
    empty = 0;
  for (let t = 0; t < T; t++) {
    const qx = m[0] * tx[t] + m[1] * ty[t],
      qy = m[2] * tx[t] + m[3] * ty[t];
    const { n } = p.weights(qx, qy, bi, bl, -1, atTargets === null ? NaN : atTargets[t]);
    if (n === 0) empty++;
    if (used + n > ids.length) {
      const cap = Math.max(used + n, Math.min(T * k, ids.length * 2));
      const ni = new Int32Array(cap);
      ni.set(ids);
      ids = ni;
      const nl = new Float64Array(cap);
      nl.set(lambda);
      lambda = nl;
    }
    for (let i = 0; i < n; i++) {
      ids[used + i] = bi[i];
      lambda[used + i] = bl[i];
    }
    used += n;
    offsets[t + 1] = used;
  }
  return { offsets, ids: ids.subarray(0, used), lambda: lambda.subarray(0, used), empty };
}

export interface ConditionalSimulator {
  readonly sampler: 'cholesky' | 'lattice';
  readonly samplerInfo: Record<string, number>;
  readonly warnings: string[];
  readonly weights: ConditioningWeights;
  /**
   * Realizations [r0, r1) at the targets (Gaussian space): calls `emit(r, values)` in increasing r; `values` is
   * reused between calls. Empty targets are NaN.
   */
  run(seed: number, r0: number, r1: number, emit: (r: number, values: Float64Array) => void): void;
}

/** The drift of the conditioning kriging: none, a polynomial on the (transformed) data coordinates, or external. */
function conditioningDrift(s: SimulationSetup, dx: Float64Array, dy: Float64Array) {
  if (s.trend === undefined || s.trend === 'none') return null;
  if (s.trend !== 'external') return driftFrame(s.trend, dx, dy);
  if (!s.covariate) throw new RangeError('an external drift needs its covariate at the data and the targets');
  return externalDriftFrame(s.covariate.atData);
}

/** Sets up the sampler and the shared conditioning weights. */
export function createConditionalSimulator(s: SimulationSetup): ConditionalSimulator {
  checkVariogram(s.model);
  const m = anisotropyMatrix(s.anisotropy ?? null);
  const sites = buildSites(s.x, s.y, s.tx, s.ty);
  const nSites = sites.sx.length;
  let kind = s.sampler ?? 'auto';
  if (kind === 'auto') kind = nSites <= MAX_CHOLESKY_SITES ? 'cholesky' : 'lattice';
  if (kind === 'cholesky' && nSites > MAX_CHOLESKY_SITES)
    throw new RangeError(`the exact (Cholesky) sampler handles up to ${MAX_CHOLESKY_SITES} distinct sites, got ${nSites}`);
  let sampler: Sampler;
  if (kind === 'cholesky') sampler = new CholeskySampler(sites, s.model, m);
  else {
    let h = s.latticeKm;
    if (h === undefined) {
      let x0 = Infinity,
        x1 = -Infinity,
        y0 = Infinity,
        y1 = -Infinity;
      for (let i = 0; i < nSites; i++) {
        x0 = Math.min(x0, sites.sx[i]);
        x1 = Math.max(x1, sites.sx[i]);
        y0 = Math.min(y0, sites.sy[i]);
        y1 = Math.max(y1, sites.sy[i]);
      }
      h = Math.max(x1 - x0, y1 - y0, 1e-3) / 512;
    }
    sampler = new LatticeSampler(sites, s.model, m, h);
  }
  // Conditioning weights from the predictor in the anisotropy-transformed space.
  const n = s.x.length;
  const dx = new Float64Array(n),
    dy = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    dx[i] = m[0] * s.x[i] + m[1] * s.y[i];
    dy[i] = m[2] * s.x[i] + m[3] * s.y[i];
  }
  const ev = s.errorVariance ?? null;
  const predictor = new KrigingPredictor(dx, dy, s.z, s.model, {
    neighbors: s.neighbors ?? 16,
    maxGlobal: s.maxGlobal,
    errorVariance: ev,
    visibility: barrierIn(s.faults ?? null, m, dx, dy),
    drift: conditioningDrift(s, dx, dy),
  });
  const weights = conditioningWeights(predictor, m, s.tx, s.ty, s.trend === 'external' ? s.covariate!.atTargets : null);
  const warnings = [...sampler.warnings];
  if (predictor.counters.regularized > 0)
    warnings.push(`${predictor.counters.regularized} conditioning system(s) were ill-conditioned and solved with a small diagonal regularization`);
  if (weights.empty > 0) warnings.push(`${weights.empty} target(s) had no usable conditioning system and are no data`);

  const T = s.tx.length;
  const uA = new Float64Array(nSites),
    uB = new Float64Array(nSites);
  const resid = new Float64Array(n);
  const vals = new Float64Array(T);
  const { offsets, ids, lambda } = weights;
  const errSd = ev === null ? null : Float64Array.from(ev, (v) => Math.sqrt(v));
  const noise = new Float64Array(errSd === null ? 0 : n);
  const noiseRng = createStream(0);
  const condition = (u: Float64Array, seed: number, r: number) => {
    if (errSd !== null) {
      fillNormals(noiseRng.reset(seed, r, 2), noise, errSd, 1, false);
      for (let i = 0; i < n; i++) resid[i] = s.z[i] - u[sites.dataSite[i]] - noise[i];
    } else for (let i = 0; i < n; i++) resid[i] = s.z[i] - u[sites.dataSite[i]];
    for (let t = 0; t < T; t++) {
      const o0 = offsets[t],
        o1 = offsets[t + 1];
      if (o1 === o0) {
        vals[t] = NaN;
        continue;
      }
      let acc = u[sites.targetSite[t]];
      for (let o = o0; o < o1; o++) acc += lambda[o] * resid[ids[o]];
      vals[t] = acc;
    }
  };
  return {
    sampler: sampler.kind,
    samplerInfo: sampler.info,
    warnings,
    weights,
    run(seed, r0, r1, emit) {
      if (!sampler.pairs) {
        for (let r = r0; r < r1; r++) {
          sampler.sample(seed, r, uA, null);
          condition(uA, seed, r);
          emit(r, vals);
        }
        return;
      }
      // Pairs start at even indices so a split of the realizations never changes a value.
      for (let p = r0 - (r0 % 2); p < r1; p += 2) {
        const wantB = p + 1 < r1;
        sampler.sample(seed, p, uA, wantB ? uB : null);
        if (p >= r0) {
          condition(uA, seed, p);
          emit(p, vals);
        }
        if (wantB) {
          condition(uB, seed, p + 1);
          emit(p + 1, vals);
        }
      }
    },
  };
}

/**
 * Unconditional realizations [r0, r1) at sites (local km) from the chosen sampler, same streams as conditional
 * simulation: `emit(r, values)` with `values` reused between calls.
 */
export function simulateUnconditional(
  sx: Float64Array,
  sy: Float64Array,
  model: VariogramModel,
  opts: { anisotropy?: Anisotropy | null; sampler: 'cholesky' | 'lattice'; latticeKm?: number },
  seed: number,
  r0: number,
  r1: number,
  emit: (r: number, values: Float64Array) => void,
): { info: Record<string, number>; warnings: string[] } {
  checkVariogram(model);
  const m = anisotropyMatrix(opts.anisotropy ?? null);
  const sites = buildSites(new Float64Array(0), new Float64Array(0), sx, sy);
  const sampler: Sampler = opts.sampler === 'cholesky' ? new CholeskySampler(sites, model, m) : new LatticeSampler(sites, model, m, opts.latticeKm ?? 1);
  const n = sites.sx.length,
    T = sx.length;
  const uA = new Float64Array(n),
    uB = new Float64Array(n),
    vals = new Float64Array(T);
  const out = (u: Float64Array, r: number) => {
    for (let t = 0; t < T; t++) vals[t] = u[sites.targetSite[t]];
    emit(r, vals);
  };
  if (!sampler.pairs)
    for (let r = r0; r < r1; r++) {
      sampler.sample(seed, r, uA, null);
      out(uA, r);
    }
  else
    for (let p = r0 - (r0 % 2); p < r1; p += 2) {
      const wantB = p + 1 < r1;
      sampler.sample(seed, p, uA, wantB ? uB : null);
      if (p >= r0) out(uA, p);
      if (wantB) out(uB, p + 1);
    }
  return { info: sampler.info, warnings: sampler.warnings };
}
