/**
 * Draws from the distributions the project's inputs use: uniform, normal, truncated normal, triangular.
 * Each function takes a RandomStream and consumes a fixed, documented number of its values (except the far-tail
 * truncated-normal rejection sampler), so a stream's sequence of parameters is reproducible.
 */
import type { RandomStream } from './prng.ts';
import { normalCdf, normalQuantile } from './normal-cdf.ts';

/** Uniform on [min, max) (one uniform). */
export function drawUniform(rng: RandomStream, min: number, max: number): number {
  return min + (max - min) * rng.uniform();
}

/** Normal(mean, sd) (Box–Muller; sd = 0 gives the mean). */
export function drawNormal(rng: RandomStream, mean: number, sd: number): number {
  const z = rng.normal();
  return sd === 0 ? mean : mean + sd * z;
}

/**
 * Normal(mean, sd) truncated to [min, max]. Inverse-CDF method (one uniform) while the interval reaches within
 * 5 sd of the centre; in the far tail, Robert's (1995, Stat. Comput. 5) exponential rejection sampler, which keeps
 * full precision where Φ would round to 0 or 1. sd = 0 gives the mean clamped to [min, max].
 */
export function drawTruncatedNormal(rng: RandomStream, mean: number, sd: number, min: number, max: number): number {
  if (!(min <= max)) throw new RangeError(`truncated normal needs min ≤ max, got ${min}, ${max}`);
  if (sd === 0 || min === max) {
    rng.uniform();
    return Math.min(max, Math.max(min, mean));
  }
  let a = (min - mean) / sd;
  let b = (max - mean) / sd;
  let sign = 1;
  if (a > 0) {
    // Mirror into the lower half so Φ works where it is precise.
    const t = a;
    a = -b;
    b = -t;
    sign = -1;
  }
  let z: number;
  if (b >= -5) {
    const pa = normalCdf(a);
    const pb = normalCdf(b);
    const u = rng.uniform();
    z = normalQuantile(pa + u * (pb - pa));
    if (z < a) z = a;
    if (z > b) z = b;
  } else {
    // Far lower tail [a, b] with b < −5: sample the mirrored upper tail [−b, −a].
    z = -robertUpperTail(rng, -b, -a);
  }
  return mean + sd * sign * z;
}

/** Robert (1995): N(0,1) restricted to [lo, hi], lo > 0 large. */
function robertUpperTail(rng: RandomStream, lo: number, hi: number): number {
  const lambda = (lo + Math.sqrt(lo * lo + 4)) / 2;
  for (;;) {
    if (hi - lo < 1 / lambda) {
      // Narrow interval: uniform proposal, accept with exp((lo² − z²)/2).
      const z = lo + (hi - lo) * rng.uniform();
      if (rng.uniform() <= Math.exp((lo * lo - z * z) / 2)) return z;
    } else {
      const z = lo - Math.log(rng.uniformOpen()) / lambda;
      if (z <= hi && rng.uniform() <= Math.exp(-((z - lambda) ** 2) / 2)) return z;
    }
  }
}

/** Triangular(min, mode, max) by inverting its distribution function (one uniform). */
export function drawTriangular(rng: RandomStream, min: number, mode: number, max: number): number {
  if (!(min <= mode && mode <= max)) throw new RangeError(`triangular needs min ≤ mode ≤ max, got ${min}, ${mode}, ${max}`);
  const u = rng.uniform();
  const w = max - min;
  if (w === 0) return min;
  const fc = (mode - min) / w;
  return u < fc ? min + Math.sqrt(u * w * (mode - min)) : max - Math.sqrt((1 - u) * w * (max - mode));
}

/** A distribution as written in the project's JSON inputs. */
export type Distribution =
  | { dist: 'normal'; mean: number; sd: number }
  | { dist: 'truncnormal'; mean: number; sd: number; min: number; max: number }
  | { dist: 'uniform'; min: number; max: number }
  | { dist: 'triangular'; min: number; mode: number; max: number };

/** One draw from a Distribution. */
export function drawFrom(rng: RandomStream, d: Distribution): number {
  switch (d.dist) {
    case 'normal':
      return drawNormal(rng, d.mean, d.sd);
    case 'truncnormal':
      return drawTruncatedNormal(rng, d.mean, d.sd, d.min, d.max);
    case 'uniform':
      return drawUniform(rng, d.min, d.max);
    case 'triangular':
      return drawTriangular(rng, d.min, d.mode, d.max);
  }
}

/**
 * The nominal (central) value of a distribution, used for the deterministic run beside a Monte Carlo: the mean of
 * a normal, the mean clamped to [min, max] for a truncated normal, the midpoint of a uniform, the mode of a
 * triangular.
 */
export function nominalValue(d: Distribution): number {
  switch (d.dist) {
    case 'normal':
      return d.mean;
    case 'truncnormal':
      return Math.min(d.max, Math.max(d.min, d.mean));
    case 'uniform':
      return (d.min + d.max) / 2;
    case 'triangular':
      return d.mode;
  }
}

/** Analytic mean of a distribution (truncated normal: μ + σ(φ(α) − φ(β))/(Φ(β) − Φ(α)), Johnson et al. 1994). */
export function distributionMean(d: Distribution): number {
  switch (d.dist) {
    case 'normal':
      return d.mean;
    case 'uniform':
      return (d.min + d.max) / 2;
    case 'triangular':
      return (d.min + d.mode + d.max) / 3;
    case 'truncnormal': {
      if (d.sd === 0) return Math.min(d.max, Math.max(d.min, d.mean));
      const a = (d.min - d.mean) / d.sd,
        b = (d.max - d.mean) / d.sd;
      const pdf = (x: number) => 0.3989422804014327 * Math.exp(-0.5 * x * x);
      return d.mean + (d.sd * (pdf(a) - pdf(b))) / (normalCdf(b) - normalCdf(a));
    }
  }
}
