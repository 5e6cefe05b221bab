import { NeighbourIndex, insertNearest, type VisibilityTest } from './neighbours.ts';
import { choleskyInPlace, forwardSubstitute, choleskySolve, dot } from './linalg.ts';
import { correlation, modelCode, checkVariogram, type VariogramModel } from './variogram.ts';
import { EXACT_KM } from './idw.ts';
import { covarianceVector, globalDualSums, type CovarianceParams } from './covarianceKernels.ts';
import { DriftSystem, type DriftFrame } from './drift.ts';

/**
 * Ordinary kriging (Matheron 1963; Isaaks & Srivastava 1989, ch. 12) in covariance form C(h) = sill − γ(h).
 * System: C·λ + μ·1 = c₀, 1ᵀλ = 1; estimate λᵀz; kriging variance σ² = C(0) − λᵀc₀ − μ.
 * Solved through a Cholesky factor C = L·Lᵀ of the neighbours' covariance matrix and the Schur complement of the
 * unbiasedness row: with b = C⁻¹1, w = C⁻¹z, s = 1ᵀb,
 *   μ = (c₀ᵀb − 1)/s,  estimate = c₀ᵀw − μ·bᵀz,  σ² = C(0) − |L⁻¹c₀|² + μ²·s.
 * So each location costs O(n) for the estimate and one triangular solve O(n²/2) for the variance once the factor
 * exists. The factor is cached keyed by the sorted neighbour ids: neighbouring cells mostly share a set, and a
 * global neighbourhood is factored once ("dual" form: each cell is then O(N) for the estimate).
 * A shortcut keeps a continental grid's per-cell search cost small without changing a value: a tree search returns
 * 2k candidates and the distance g of the next point at its location a; at a nearby q every other point is at least
 * g − |q − a| away (triangle inequality), so when the k nearest candidates are all nearer than that they are the k
 * nearest of all and no new search is needed (an exact test; ties are broken by id, as in the tree search).
 * Per-point measurement-error variances are added to the diagonal (an extra, point-specific nugget).
 * Universal kriging (a drift in the coordinates, drift.ts) borders the system with the drift monomials instead of
 * the single constant; the same factor serves, with b = C⁻¹1 replaced by B = C⁻¹F and s by S = FᵀC⁻¹F.
 * A set whose matrix is singular or ill-conditioned is regularized with a growing diagonal jitter; if that fails the
 * location falls back to inverse-distance weighting (p = 2) on the same neighbours and σ = √sill; both are counted.
 */

export interface KrigingOptions {
  /** Neighbours per location; Infinity = global (all points). Default 16. */
  neighbors?: number;
  /** Only points within this distance (km, after the anisotropy map). Default unlimited. */
  radiusKm?: number;
  /** Measurement-error variances per point (value units²), added to the diagonal. */
  errorVariance?: Float64Array | null;
  /** Points a location may not see (fault barriers), in the same (possibly transformed) coordinates. */
  visibility?: VisibilityTest | null;
  /** Largest global system (points); beyond it, use a local neighbourhood. Default 5000. */
  maxGlobal?: number;
  /** Universal kriging: the drift monomials in the predictor's coordinates; null or kind 'none' = ordinary. */
  drift?: DriftFrame | null;
}

export interface KrigingCounters {
  /** Factorizations computed (distinct consecutive neighbour sets). */
  factorizations: number;
  /** Neighbour sets that needed diagonal regularization. */
  regularized: number;
  /** Locations that fell back to IDW because the system stayed singular. */
  fallbacks: number;
  /** Locations with no usable neighbour (NaN by design: radius or barriers). */
  empty: number;
}

/** Ordinary kriging predictor at locations given in the same coordinates as the data (km). */
export class KrigingPredictor {
  readonly k: number;
  readonly global: boolean;
  readonly sill: number;
  readonly counters: KrigingCounters = { factorizations: 0, regularized: 0, fallbacks: 0, empty: 0 };
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly z: Float64Array;
  private readonly ev: Float64Array | null;
  private readonly vis: VisibilityTest | null;
  private readonly radiusKm: number;
  private readonly cp: CovarianceParams;
  private readonly drift: DriftSystem | null;
  private readonly two = new Float64Array(2);
  readonly index: NeighbourIndex;
  // Work buffers, allocated once (size k).
  private readonly ids: Int32Array;
  private readonly d2: Float64Array;
  private readonly key: Int32Array;
  private keyLen = -1;
  private readonly sorted: Int32Array;
  private readonly L: Float64Array;
  private readonly b: Float64Array;
  private readonly w: Float64Array;
  private readonly c0: Float64Array;
  private readonly yv: Float64Array;
  private s = 0;
  private bz = 0;
  private failed = false;
  // Coherent search: location of the last tree search, its candidates, the distance (km) of the first point beyond
  // them, and whether they are usable.
  private ax = 0;
  private ay = 0;
  private anchorGap = 0;
  private anchorOk = false;
  private readonly coherent: boolean;
  private readonly cand: Int32Array;
  private candN = 0;

  constructor(x: Float64Array, y: Float64Array, z: Float64Array, model: VariogramModel, opts: KrigingOptions = {}) {
    checkVariogram(model);
    const n = x.length;
    if (n < 1) throw new RangeError('kriging needs at least one point');
    this.x = x;
    this.y = y;
    this.z = z;
    this.ev = opts.errorVariance ?? null;
    this.vis = opts.visibility ?? null;
    this.radiusKm = opts.radiusKm ?? Infinity;
    const k = opts.neighbors ?? 16;
    if (!(k >= 1)) throw new RangeError(`kriging needs at least one neighbour, got ${k}`);
    this.global = k >= n;
    this.k = Math.min(k, n);
    const maxGlobal = opts.maxGlobal ?? 5000;
    if (this.global && n > maxGlobal) throw new RangeError(`global kriging of ${n} points exceeds ${maxGlobal}; use a local neighbourhood`);
    this.sill = model.nugget + model.partialSill;
    this.cp = { code: modelCode(model.model), psill: model.partialSill, sill: this.sill, rangeKm: model.rangeKm };
    this.index = new NeighbourIndex(x, y);
    const m = this.k;
    this.coherent = !this.global && this.vis === null;
    const kc = Math.min(2 * m, n);
    this.cand = new Int32Array(kc);
    this.ids = new Int32Array(kc + 1);
    this.d2 = new Float64Array(kc + 1);
    this.key = new Int32Array(m);
    this.sorted = new Int32Array(m);
    this.L = new Float64Array(m * m);
    this.b = new Float64Array(m);
    this.w = new Float64Array(m);
    this.c0 = new Float64Array(m);
    this.yv = new Float64Array(m);
    this.drift = opts.drift && opts.drift.kind !== 'none' ? new DriftSystem(opts.drift, m) : null;
  }

  /** Covariance at distance h km (h = 0 gives the full sill). */
  cov(h: number): number {
    return h > 0 ? this.cp.psill * correlation(this.cp.code, this.cp.rangeKm, h) : this.sill;
  }

  /**
   * Finds the neighbour set of (qx, qy) and makes its factor current. Returns the set size (0: none usable).
   * After the call `sorted[0..n)` holds the ids in ascending order.
   */
  private prepare(qx: number, qy: number, exclude: number): number {
    let n: number;
    const sorted = this.sorted;
    if (this.global && exclude < 0 && this.vis === null && this.radiusKm === Infinity) {
      n = this.k;
      if (this.keyLen === n) return n; // identity set, factored already
      for (let i = 0; i < n; i++) sorted[i] = i;
    } else {
      const coherent = this.coherent && exclude < 0;
      const k = this.k;
      n = coherent && this.anchorOk ? this.fromCandidates(qx, qy) : -1;
      if (n < 0) {
        const kc = this.cand.length;
        const found = this.index.nearest(qx, qy, coherent ? kc + 1 : k, this.radiusKm, this.ids, this.d2, this.vis, exclude);
        n = Math.min(found, k);
        if (coherent) {
          // The candidates and the distance of the first point beyond them (none: every point is a candidate).
          this.candN = Math.min(found, kc);
          this.cand.set(this.ids.subarray(0, this.candN));
          this.anchorGap = found === kc + 1 ? Math.sqrt(this.d2[kc]) : Infinity;
          this.anchorOk = found === kc + 1 || this.radiusKm === Infinity;
          this.ax = qx;
          this.ay = qy;
        } else this.anchorOk = false;
      }
      if (n === 0) return 0;
      for (let i = 0; i < n; i++) {
        const v = this.ids[i];
        let j = i;
        while (j > 0 && sorted[j - 1] > v) {
          sorted[j] = sorted[j - 1];
          j--;
        }
        sorted[j] = v;
      }
      if (n === this.keyLen) {
        let same = true;
        for (let i = 0; i < n; i++)
          if (this.key[i] !== sorted[i]) {
            same = false;
            break;
          }
        if (same) return n;
      }
    }
    this.factor(n);
    for (let i = 0; i < n; i++) this.key[i] = sorted[i];
    this.keyLen = n;
    return n;
  }

  /**
   * The k nearest points to (qx, qy) chosen among the last search's candidates, into `ids` (nearest first, ties by
   * id), when that choice is provably the true one: the k-th is nearer than the candidates' gap less the distance
   * moved, and within the search radius. Returns the count, or −1 when a tree search is needed.
   */
  private fromCandidates(qx: number, qy: number): number {
    const dxa = qx - this.ax,
      dya = qy - this.ay;
    const limit = this.anchorGap - Math.sqrt(dxa * dxa + dya * dya);
    if (!(limit > 0)) return -1;
    const { cand, x, y, ids, d2 } = this;
    const k = this.k;
    let count = 0;
    for (let t = 0; t < this.candN; t++) {
      const id = cand[t];
      const dx = x[id] - qx,
        dy = y[id] - qy;
      count = insertNearest(ids, d2, count, k, id, dx * dx + dy * dy);
    }
    if (count < k) return this.anchorGap === Infinity ? count : -1;
    const far = Math.sqrt(d2[k - 1]);
    // A relative margin of 1e-12 keeps round-off in the distances from ever deciding the test.
    return far < limit * (1 - 1e-12) && far <= this.radiusKm ? k : -1;
  }

  private factor(n: number): void {
    const { L, sorted, x, y, ev } = this;
    this.counters.factorizations++;
    let jitter = 0;
    for (let attempt = 0; attempt < 5; attempt++) {
      for (let i = 0; i < n; i++) {
        const a = sorted[i];
        const ri = i * n;
        for (let j = 0; j < i; j++) {
          const bb = sorted[j];
          const dx = x[a] - x[bb],
            dy = y[a] - y[bb];
          L[ri + j] = this.cov(Math.sqrt(dx * dx + dy * dy)); // (Math.hypot is several times slower)
        }
        L[ri + i] = this.sill + (ev === null ? 0 : ev[a]) + jitter;
      }
      if (choleskyInPlace(L, n, n)) {
        if (attempt > 0) this.counters.regularized++;
        const ones = this.yv;
        for (let i = 0; i < n; i++) ones[i] = 1;
        choleskySolve(L, n, n, ones, this.b);
        for (let i = 0; i < n; i++) this.c0[i] = this.z[sorted[i]];
        choleskySolve(L, n, n, this.c0, this.w);
        this.s = dot(this.b, this.yv, n);
        this.bz = dot(this.b, this.c0, n);
        this.failed = !(this.s > 0) || !Number.isFinite(this.bz);
        if (this.drift !== null && !this.failed) this.failed = !this.drift.build(L, n, x, y, this.z, sorted);
        return;
      }
      // Jitter 1e-10, 1e-8, 1e-6, 1e-4 of the sill: far below any nugget that matters, enough for round-off.
      jitter = this.sill * Math.pow(10, -10 + 2 * attempt);
    }
    this.failed = true;
  }

  /**
   * Estimate and kriging standard deviation at (qx, qy): writes [value, sd] into `out`; sd is skipped (NaN) unless
   * `withSd`. `exclude` leaves one point out (cross-validation); `s0` is an external drift's covariate at (qx, qy).
   * Returns the neighbour count (0 → both NaN).
   */
  predict(qx: number, qy: number, out: Float64Array, withSd: boolean, exclude = -1, s0 = NaN): number {
    const n = this.prepare(qx, qy, exclude);
    if (n === 0) {
      this.counters.empty++;
      out[0] = NaN;
      out[1] = NaN;
      return 0;
    }
    const c0 = this.c0;
    if (this.failed) return this.fallback(qx, qy, n, out);
    const two = this.two;
    if (!withSd && this.drift === null && this.keyLen === n && n === this.x.length && this.global && exclude < 0) {
      // Global estimate only (the dual form): one fused pass over the data, no covariance vector stored.
      if (globalDualSums(this.cp, this.x, this.y, this.b, this.w, n, qx, qy, two)) {
        const v = two[1] - ((two[0] - 1) / this.s) * this.bz;
        if (Number.isFinite(v)) {
          out[0] = v;
          out[1] = NaN;
          return n;
        }
      }
    }
    covarianceVector(this.cp, this.x, this.y, this.sorted, n, qx, qy, c0);
    const b = this.b,
      w = this.w;
    let cb = 0,
      cw = 0;
    for (let i = 0; i < n; i++) {
      const c = c0[i];
      cb += c * b[i];
      cw += c * w[i];
    }
    // Ordinary kriging: μ = (c₀ᵀb − 1)/s and the variance term μ²·s; universal: the drift system's μ and μᵀr.
    let correction: number, varTerm: number;
    if (this.drift === null) {
      const mu = (cb - 1) / this.s;
      correction = mu * this.bz;
      varTerm = mu * mu * this.s;
    } else {
      this.drift.solveAt(c0, n, qx, qy, two, s0);
      correction = two[0];
      varTerm = two[1];
    }
    out[0] = cw - correction;
    if (withSd) {
      forwardSubstitute(this.L, n, n, c0, this.yv);
      const v = this.sill - dot(this.yv, this.yv, n) + varTerm;
      out[1] = Math.sqrt(v > 0 ? v : 0);
    } else out[1] = NaN;
    if (!Number.isFinite(out[0])) return this.fallback(qx, qy, n, out);
    return n;
  }

  /**
   * The kriging weights λ (for the ids written to `outIds`, ascending) and the Lagrange multiplier μ at (qx, qy)
   * (system C·λ + μ·1 = c₀; with a drift, μ is the constant monomial's multiplier). Returns n, or 0 when no
   * neighbour or the system is singular. `s0`: an external drift's covariate at (qx, qy).
   */
  weights(qx: number, qy: number, outIds: Int32Array, outLambda: Float64Array, exclude = -1, s0 = NaN): { n: number; mu: number } {
    const n = this.prepare(qx, qy, exclude);
    if (n === 0 || this.failed) return { n: 0, mu: NaN };
    const { sorted, c0 } = this;
    covarianceVector(this.cp, this.x, this.y, sorted, n, qx, qy, c0);
    choleskySolve(this.L, n, n, c0, outLambda);
    let mu: number;
    if (this.drift === null) {
      mu = (dot(c0, this.b, n) - 1) / this.s;
      for (let i = 0; i < n; i++) outLambda[i] -= mu * this.b[i];
    } else {
      this.drift.solveAt(c0, n, qx, qy, this.two, s0);
      this.drift.subtractDrift(outLambda, n);
      mu = this.drift.mu[0];
    }
    for (let i = 0; i < n; i++) outIds[i] = sorted[i];
    return { n, mu };
  }

  private fallback(qx: number, qy: number, n: number, out: Float64Array): number {
    this.counters.fallbacks++;
    let sw = 0,
      swz = 0;
    for (let i = 0; i < n; i++) {
      const a = this.sorted[i];
      const d2 = (this.x[a] - qx) ** 2 + (this.y[a] - qy) ** 2;
      if (d2 <= EXACT_KM * EXACT_KM) {
        out[0] = this.z[a];
        out[1] = 0;
        return n;
      }
      sw += 1 / d2;
      swz += this.z[a] / d2;
    }
    out[0] = swz / sw;
    out[1] = Math.sqrt(this.sill);
    return n;
  }

  /** Forgets the cached factor (after the caller changed nothing but wants fresh counters). */
  resetCache(): void {
    this.keyLen = -1;
    this.anchorOk = false;
  }
}
