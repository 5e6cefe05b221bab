import { createStream, type RandomStream } from '../random/prng.ts';
import { pointEnvelope } from './envelope.ts';
import { Fft, fft2d, nextFftSize } from './fft.ts';
import { choleskyInPlace } from './linalg.ts';
import { correlation, modelCode, type VariogramModel } from './variogram.ts';

/**
 * The unconditional samplers of conditional simulation (simulation.ts): distinct sites, standard normal draws, the
 * exact LU (Cholesky) sampler and the circulant-embedding lattice sampler, with the methods and streams described
 * there.
 */

export const MAX_CHOLESKY_SITES = 3000;
/** Largest torus (nodes) of the lattice sampler: 2048 × 2048. */
export const MAX_LATTICE_NODES = 2048 * 2048;

/** Distinct sites: data first, then targets; coincident locations (< 1 mm) share a site. */
export interface Sites {
  sx: Float64Array;
  sy: Float64Array;
  dataSite: Int32Array;
  targetSite: Int32Array;
}

export function buildSites(x: Float64Array, y: Float64Array, tx: Float64Array, ty: Float64Array): Sites {
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
export interface Sampler {
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

export class CholeskySampler implements Sampler {
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

export class LatticeSampler implements Sampler {
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
    const { x0, x1, y0, y1 } = pointEnvelope(s.sx, s.sy);
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
