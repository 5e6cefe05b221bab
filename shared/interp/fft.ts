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
  /** One stage's twiddles and one butterfly's inputs (scratch). */
  private readonly tw = new Float64Array(8);
  private readonly x = new Float64Array(10);

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
    const n = this.n;
    let a: Side = { re, im, off, es };
    let b: Side = { re: this.bufRe, im: this.bufIm, off: 0, es: B };
    let L = 1;
    for (const p of this.factors) {
      this.stage(p, L, a, b, B);
      const t = a;
      a = b;
      b = t;
      L *= p;
    }
    if (a.re !== re) {
      // Result sits in the work buffer: copy back.
      for (let e = 0; e < n; e++)
        for (let bb = 0; bb < B; bb++) {
          re[off + e * es + bb] = a.re[e * B + bb];
          im[off + e * es + bb] = a.im[e * B + bb];
        }
    }
  }

  /** One radix-p stage: p interleaved transforms of length L in `a` become one of length pL in `b`. */
  private stage(p: number, L: number, a: Side, b: Side, B: number): void {
    const n = this.n,
      wr = this.wr,
      wi = this.wi,
      w = this.tw;
    const butterfly = BUTTERFLIES[p];
    const S = n / L,
      S2 = S / p,
      tw = n / (L * p);
    const da = S2 * a.es,
      db = L * S2 * b.es;
    for (let s = 0; s < L; s++) {
      // Twiddle W_{pL}^{q·s} = W_n^{q·s·n/(pL)}.
      const t1 = s * tw;
      for (let q = 1; q < p; q++) {
        w[2 * q - 2] = wr[(q * t1) % n];
        w[2 * q - 1] = wi[(q * t1) % n];
      }
      for (let r = 0; r < S2; r++) {
        // Element index in A of part q: s·S + r + S2·q; in B of output c: (s + L·c)·S2 + r.
        const ia = s * S + r,
          ib = s * S2 + r;
        for (let bb = 0; bb < B; bb++) {
          const x = this.x;
          loadTwiddled(x, a.re, a.im, a.off + ia * a.es + bb, da, w, p);
          butterfly(x, b.re, b.im, b.off + ib * b.es + bb, db);
        }
      }
    }
  }
}

/** One side of a Stockham stage: element e of the batch member bb at off + e·es + bb. */
interface Side {
  re: Float64Array;
  im: Float64Array;
  off: number;
  es: number;
}

/** Writes the p outputs of one butterfly from its twiddled inputs x = [x0r, x0i, x1r, x1i, …]. */
type Butterfly = (x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number) => void;

/** The p inputs of one butterfly, input q (q ≥ 1) multiplied by its twiddle w = [w1r, w1i, w2r, w2i, …]. */
function loadTwiddled(x: Float64Array, aRe: Float64Array, aIm: Float64Array, a0: number, da: number, w: Float64Array, p: number): void {
  x[0] = aRe[a0];
  x[1] = aIm[a0];
  for (let q = 1; q < p; q++) {
    const v = aRe[a0 + q * da],
      u = aIm[a0 + q * da];
    const cr = w[2 * q - 2],
      ci = w[2 * q - 1];
    x[2 * q] = v * cr - u * ci;
    x[2 * q + 1] = v * ci + u * cr;
  }
}

function radix2(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  bRe[o0] = x[0] + x[2];
  bIm[o0] = x[1] + x[3];
  bRe[o0 + db] = x[0] - x[2];
  bIm[o0 + db] = x[1] - x[3];
}

function radix3(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // W_3 = −½ − i·√3/2.
  const x0r = x[0],
    x0i = x[1];
  const sr = x[2] + x[4],
    si = x[3] + x[5];
  const dr = x[2] - x[4],
    di = x[3] - x[5];
  const mr = x0r - 0.5 * sr,
    mi = x0i - 0.5 * si;
  const k = 0.8660254037844386;
  bRe[o0] = x0r + sr;
  bIm[o0] = x0i + si;
  bRe[o0 + db] = mr + k * di;
  bIm[o0 + db] = mi - k * dr;
  bRe[o0 + 2 * db] = mr - k * di;
  bIm[o0 + 2 * db] = mi + k * dr;
}

function radix4(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // W_4 = −i.
  const s02r = x[0] + x[4],
    s02i = x[1] + x[5],
    d02r = x[0] - x[4],
    d02i = x[1] - x[5];
  const s13r = x[2] + x[6],
    s13i = x[3] + x[7],
    d13r = x[2] - x[6],
    d13i = x[3] - x[7];
  bRe[o0] = s02r + s13r;
  bIm[o0] = s02i + s13i;
  bRe[o0 + db] = d02r + d13i;
  bIm[o0 + db] = d02i - d13r;
  bRe[o0 + 2 * db] = s02r - s13r;
  bIm[o0 + 2 * db] = s02i - s13i;
  bRe[o0 + 3 * db] = d02r - d13i;
  bIm[o0 + 3 * db] = d02i + d13r;
}

function radix5(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // Direct sums with W_5^k.
  const c1 = 0.30901699437494745,
    c2 = -0.8090169943749475,
    s1 = 0.9510565162951535,
    s2 = 0.5877852522924731;
  const x0r = x[0],
    x0i = x[1];
  const a1r = x[2] + x[8],
    a1i = x[3] + x[9],
    b1r = x[2] - x[8],
    b1i = x[3] - x[9];
  const a2r = x[4] + x[6],
    a2i = x[5] + x[7],
    b2r = x[4] - x[6],
    b2i = x[5] - x[7];
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

const BUTTERFLIES: Record<number, Butterfly> = { 2: radix2, 3: radix3, 4: radix4, 5: radix5 };

/**
 * In-place forward 2-D transform of a row-major mx × my array (mx columns, my rows): the rows one by one, then all
 * columns at once (batched, contiguous inner loop). `fy` must be built with maxBatch ≥ mx.
 */
export function fft2d(re: Float64Array, im: Float64Array, mx: number, my: number, fx: Fft, fy: Fft): void {
  fx.transform(re, im, 0, 1, my, mx);
  fy.transform(re, im, 0, mx, mx, 1);
}
