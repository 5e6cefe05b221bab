import { createStream } from '../random/prng.ts';
import { FaultBarrier } from './barriers.ts';
import { pointEnvelope } from './envelope.ts';
import { KrigingPredictor } from './kriging.ts';
import { buildSites, fillNormals, CholeskySampler, LatticeSampler, MAX_CHOLESKY_SITES, type Sampler, type Sites } from './samplers.ts';
import { driftFrame, externalDriftFrame, type DriftKind } from './drift.ts';
import { anisotropyMatrix, checkVariogram, type Anisotropy, type VariogramModel } from './variogram.ts';

export { fillNormals, MAX_CHOLESKY_SITES, MAX_LATTICE_NODES } from './samplers.ts';

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

/** The unconditional sampler: `auto` takes the exact one up to `MAX_CHOLESKY_SITES` distinct sites. */
function chooseSampler(s: SimulationSetup, sites: Sites, m: [number, number, number, number]): Sampler {
  const nSites = sites.sx.length;
  let kind = s.sampler ?? 'auto';
  if (kind === 'auto') kind = nSites <= MAX_CHOLESKY_SITES ? 'cholesky' : 'lattice';
  if (kind === 'cholesky' && nSites > MAX_CHOLESKY_SITES)
    throw new RangeError(`the exact (Cholesky) sampler handles up to ${MAX_CHOLESKY_SITES} distinct sites, got ${nSites}`);
  if (kind === 'cholesky') return new CholeskySampler(sites, s.model, m);
  let h = s.latticeKm;
  if (h === undefined) {
    const { x0, x1, y0, y1 } = pointEnvelope(sites.sx, sites.sy);
    h = Math.max(x1 - x0, y1 - y0, 1e-3) / 512;
  }
  return new LatticeSampler(sites, s.model, m, h);
}

/** The conditioning kriging predictor, in the anisotropy-transformed space of the data. */
function conditioningPredictor(s: SimulationSetup, m: [number, number, number, number]): KrigingPredictor {
  const n = s.x.length;
  const dx = new Float64Array(n),
    dy = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    dx[i] = m[0] * s.x[i] + m[1] * s.y[i];
    dy[i] = m[2] * s.x[i] + m[3] * s.y[i];
  }
  return new KrigingPredictor(dx, dy, s.z, s.model, {
    neighbors: s.neighbors ?? 16,
    maxGlobal: s.maxGlobal,
    errorVariance: s.errorVariance ?? null,
    visibility: barrierIn(s.faults ?? null, m, dx, dy),
    drift: conditioningDrift(s, dx, dy),
  });
}

/**
 * Conditions one unconditional field `u` (per site) on the data: fills and returns the values at the targets,
 * Z_u(x) + Σᵢ λᵢ(x)·(zᵢ − Z_u(xᵢ) − noiseᵢ), with the data's measurement noise from `createStream(seed, r, 2)`.
 */
function conditioner(s: SimulationSetup, sites: Sites, weights: ConditioningWeights) {
  const n = s.x.length,
    T = s.tx.length;
  const ev = s.errorVariance ?? null;
  const resid = new Float64Array(n);
  const vals = new Float64Array(T);
  const { offsets, ids, lambda } = weights;
  const errSd = ev === null ? null : Float64Array.from(ev, (v) => Math.sqrt(v));
  const noise = new Float64Array(errSd === null ? 0 : n);
  const noiseRng = createStream(0);
  return (u: Float64Array, seed: number, r: number): Float64Array => {
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
    return vals;
  };
}

/** Sets up the sampler and the shared conditioning weights. */
export function createConditionalSimulator(s: SimulationSetup): ConditionalSimulator {
  checkVariogram(s.model);
  const m = anisotropyMatrix(s.anisotropy ?? null);
  const sites = buildSites(s.x, s.y, s.tx, s.ty);
  const nSites = sites.sx.length;
  const sampler = chooseSampler(s, sites, m);
  const predictor = conditioningPredictor(s, m);
  const weights = conditioningWeights(predictor, m, s.tx, s.ty, s.trend === 'external' ? s.covariate!.atTargets : null);
  const warnings = [...sampler.warnings];
  if (predictor.counters.regularized > 0)
    warnings.push(`${predictor.counters.regularized} conditioning system(s) were ill-conditioned and solved with a small diagonal regularization`);
  if (weights.empty > 0) warnings.push(`${weights.empty} target(s) had no usable conditioning system and are no data`);

  const uA = new Float64Array(nSites),
    uB = new Float64Array(nSites);
  const condition = conditioner(s, sites, weights);
  return {
    sampler: sampler.kind,
    samplerInfo: sampler.info,
    warnings,
    weights,
    run(seed, r0, r1, emit) {
      if (!sampler.pairs) {
        for (let r = r0; r < r1; r++) {
          sampler.sample(seed, r, uA, null);
          emit(r, condition(uA, seed, r));
        }
        return;
      }
      // Pairs start at even indices so a split of the realizations never changes a value.
      for (let p = r0 - (r0 % 2); p < r1; p += 2) {
        const wantB = p + 1 < r1;
        sampler.sample(seed, p, uA, wantB ? uB : null);
        if (p >= r0) emit(p, condition(uA, seed, p));
        if (wantB) emit(p + 1, condition(uB, seed, p + 1));
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
