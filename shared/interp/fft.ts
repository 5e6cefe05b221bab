/**
 * Complex fast Fourier transform of any length 2^a·3^b·5^c: Stockham's self-sorting mixed-radix formulation of
 * the Cooley–Tukey decimation in time (Cooley & Tukey 1965; Van Loan 1992, Computational Frameworks for the FFT,
 * §1.7), unnormalized, forward sign e^(−2πi·jk/n). Each stage combines p interleaved transforms of length L into
 * one of length pL: X[s + L·c] = Σ_q W_{pL}^{q·s}·W_p^{q·c}·A_q[s], reading and writing with unit stride in the
 * innermost loop. The transform is batched: `count` independent transforms whose element e of transform b sits at
 * off + e·elemStride + b·batchStride, so a 2-D array's rows (elemStride 1) and columns (batchStride 1, all columns
 * at once) both run with contiguous inner loops.
 */

/** Smallest power of two ≥ n (n ≥ 1). */
export function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** Smallest 2^a·3^b·5^c ≥ n (n ≥ 1): a length the FFT takes. */
export function nextFftSize(n: number): number {
  for (let m = Math.max(1, Math.ceil(n)); ; m++) {
    let r = m;
    for (const p of [2, 3, 5]) while (r % p === 0) r /= p;
    if (r === 1) return m;
  }
}

/** Twiddles and radix plan for one length. */
export class Fft {
  readonly n: number;
  readonly factors: number[];
  private readonly wr: Float64Array;
  private readonly wi: Float64Array;
  private readonly bufRe: Float64Array;
  private readonly bufIm: Float64Array;

  constructor(n: number, maxBatch = 1) {
    if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`FFT length must be a positive integer, got ${n}`);
    const f: number[] = [];
    let r = n;
    for (const p of [4, 2, 3, 5])
      while (r % p === 0) {
        f.push(p);
        r /= p;
      }
    if (r !== 1) throw new RangeError(`FFT length must be 2^a·3^b·5^c, got ${n}`);
    this.n = n;
    this.factors = f;
    this.wr = new Float64Array(n);
    this.wi = new Float64Array(n);
    for (let k = 0; k < n; k++) {
      const a = (-2 * Math.PI * k) / n;
      this.wr[k] = Math.cos(a);
      this.wi[k] = Math.sin(a);
    }
    this.bufRe = new Float64Array(n * maxBatch);
    this.bufIm = new Float64Array(n * maxBatch);
  }

  /**
   * In-place forward transforms: `count` transforms, element e of transform b at off + e·elemStride + b·batchStride
   * (either elemStride or batchStride is 1; with batchStride 1 the work buffer must hold n·count values).
   */
  transform(re: Float64Array, im: Float64Array, off = 0, elemStride = 1, count = 1, batchStride = 0): void {
    const n = this.n;
    if (n === 1) return;
    const B = count;
    if (elemStride === 1) {
      for (let b = 0; b < B; b++) this.run(re, im, off + b * batchStride, 1, 1);
    } else {
      if (this.bufRe.length < n * B) throw new RangeError('FFT work buffer too small for the batch');
      this.run(re, im, off, elemStride, B);
    }
  }

  /**
   * Stockham stages between the data (elements at off + e·es, batch of `B` contiguous values per element when
   * es > 1) and the work buffer (elements at e·B).
   */
  private run(re: Float64Array, im: Float64Array, off: number, es: number, B: number): void {
    const n = this.n,
      wr = this.wr,
      wi = this.wi;
    let aRe = re,
      aIm = im,
      aOff = off,
      aEs = es;
    let bRe = this.bufRe,
      bIm = this.bufIm,
      bOff = 0,
      bEs = B;
    let L = 1,
      S = n;
    for (const p of this.factors) {
      const S2 = S / p,
        L2 = L * p,
        tw = n / L2;
      for (let s = 0; s < L; s++) {
        // Twiddle W_{pL}^{q·s} = W_n^{q·s·n/(pL)}.
        const t1 = s * tw;
        const w1r = wr[t1],
          w1i = wi[t1];
        const w2r = p >= 2 ? wr[(2 * t1) % n] : 0,
          w2i = p >= 2 ? wi[(2 * t1) % n] : 0;
        const w3r = p >= 3 ? wr[(3 * t1) % n] : 0,
          w3i = p >= 3 ? wi[(3 * t1) % n] : 0;
        const w4r = p >= 4 ? wr[(4 * t1) % n] : 0,
          w4i = p >= 4 ? wi[(4 * t1) % n] : 0;
        for (let r = 0; r < S2; r++) {
          // Element index in A of part q: s·S + r + S2·q; in B of output c: (s + L·c)·S2 + r.
          const ia = s * S + r,
            ib = s * S2 + r;
          for (let bb = 0; bb < B; bb++) {
            const a0 = aOff + ia * aEs + bb,
              o0 = bOff + ib * bEs + bb;
            const da = S2 * aEs,
              db = L * S2 * bEs;
            const x0r = aRe[a0],
              x0i = aIm[a0];
            let v = aRe[a0 + da],
              u = aIm[a0 + da];
            const x1r = v * w1r - u * w1i,
              x1i = v * w1i + u * w1r;
            if (p === 2) {
              bRe[o0] = x0r + x1r;
              bIm[o0] = x0i + x1i;
              bRe[o0 + db] = x0r - x1r;
              bIm[o0 + db] = x0i - x1i;
              continue;
            }
            v = aRe[a0 + 2 * da];
            u = aIm[a0 + 2 * da];
            const x2r = v * w2r - u * w2i,
              x2i = v * w2i + u * w2r;
            if (p === 3) {
              // W_3 = −½ − i·√3/2.
              const sr = x1r + x2r,
                si = x1i + x2i;
              const dr = x1r - x2r,
                di = x1i - x2i;
              const mr = x0r - 0.5 * sr,
                mi = x0i - 0.5 * si;
              const k = 0.8660254037844386;
              bRe[o0] = x0r + sr;
              bIm[o0] = x0i + si;
              bRe[o0 + db] = mr + k * di;
              bIm[o0 + db] = mi - k * dr;
              bRe[o0 + 2 * db] = mr - k * di;
              bIm[o0 + 2 * db] = mi + k * dr;
              continue;
            }
            v = aRe[a0 + 3 * da];
            u = aIm[a0 + 3 * da];
            const x3r = v * w3r - u * w3i,
              x3i = v * w3i + u * w3r;
            if (p === 4) {
              // W_4 = −i.
              const s02r = x0r + x2r,
                s02i = x0i + x2i,
                d02r = x0r - x2r,
                d02i = x0i - x2i;
              const s13r = x1r + x3r,
                s13i = x1i + x3i,
                d13r = x1r - x3r,
                d13i = x1i - x3i;
              bRe[o0] = s02r + s13r;
              bIm[o0] = s02i + s13i;
              bRe[o0 + db] = d02r + d13i;
              bIm[o0 + db] = d02i - d13r;
              bRe[o0 + 2 * db] = s02r - s13r;
              bIm[o0 + 2 * db] = s02i - s13i;
              bRe[o0 + 3 * db] = d02r - d13i;
              bIm[o0 + 3 * db] = d02i + d13r;
              continue;
            }
            v = aRe[a0 + 4 * da];
            u = aIm[a0 + 4 * da];
            const x4r = v * w4r - u * w4i,
              x4i = v * w4i + u * w4r;
            // Radix 5: direct sums with W_5^k.
            const c1 = 0.30901699437494745,
              c2 = -0.8090169943749475,
              s1 = 0.9510565162951535,
              s2 = 0.5877852522924731;
            const a1r = x1r + x4r,
              a1i = x1i + x4i,
              b1r = x1r - x4r,
              b1i = x1i - x4i;
            const a2r = x2r + x3r,
              a2i = x2i + x3i,
              b2r = x2r - x3r,
              b2i = x2i - x3i;
            const m1r = x0r + c1 * a1r + c2 * a2r,
              m1i = x0i + c1 * a1i + c2 * a2i;
            const m2r = x0r + c2 * a1r + c1 * a2r,
              m2i = x0i + c2 * a1i + c1 * a2i;
            const n1r = s1 * b1i + s2 * b2i,
              n1i = s1 * b1r + s2 * b2r;
            const n2r = s2 * b1i - s1 * b2i,
              n2i = s2 * b1r - s1 * b2r;
            bRe[o0] = x0r + a1r + a2r;
            bIm[o0] = x0i + a1i + a2i;
            bRe[o0 + db] = m1r + n1r;
            bIm[o0 + db] = m1i - n1i;
            bRe[o0 + 2 * db] = m2r + n2r;
            bIm[o0 + 2 * db] = m2i - n2i;
            bRe[o0 + 3 * db] = m2r - n2r;
            bIm[o0 + 3 * db] = m2i + n2i;
            bRe[o0 + 4 * db] = m1r - n1r;
            bIm[o0 + 4 * db] = m1i + n1i;
          }
        }
      }
      // Swap roles.
      const tRe = aRe,
        tIm = aIm,
        tOff = aOff,
        tEs = aEs;
      aRe = bRe;
      aIm = bIm;
      aOff = bOff;
      aEs = bEs;
      bRe = tRe;
      bIm = tIm;
      bOff = tOff;
      bEs = tEs;
      L = L2;
      S = S2;
    }
    if (aRe !== re) {
      // Result sits in the work buffer: copy back.
      for (let e = 0; e < n; e++)
        for (let bb = 0; bb < B; bb++) {
          re[off + e * es + bb] = aRe[e * B + bb];
          im[off + e * es + bb] = aIm[e * B + bb];
        }
    }
  }
}

/**
 * In-place forward 2-D transform of a row-major mx × my array (mx columns, my rows): the rows one by one, then all
 * columns at once (batched, contiguous inner loop). `fy` must be built with maxBatch ≥ mx.
 */
export function fft2d(re: Float64Array, im: Float64Array, mx: number, my: number, fx: Fft, fy: Fft): void {
  fx.transform(re, im, 0, 1, my, mx);
  fy.transform(re, im, 0, mx, mx, 1);
}
