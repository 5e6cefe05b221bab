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
          loadFolded(x, a.re, a.im, a.off + ia * a.es + bb, da, w, p);
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

/**
 * Writes the p outputs of one butterfly from its folded inputs (loadFolded): x = [x0r, x0i, x1r, x1i, …] with
 * x_q = v_q + v_(p−q) and x_(p−q) = v_q − v_(p−q) for 1 ≤ q < p/2, and for even p x_0 = v_0 + v_(p/2) and
 * x_(p/2) = v_0 − v_(p/2), where v_q is input q times its twiddle.
 */
type Butterfly = (x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number) => void;

/**
 * The p inputs of one butterfly, input q (q ≥ 1) multiplied by its twiddle w = [w1r, w1i, w2r, w2i, …], folded in
 * pairs as they are read (the sums and differences every radix-p butterfly starts from; see Butterfly).
 */
function loadFolded(x: Float64Array, aRe: Float64Array, aIm: Float64Array, a0: number, da: number, w: Float64Array, p: number): void {
  const odd = p & 1;
  if (odd === 1) {
    x[0] = aRe[a0];
    x[1] = aIm[a0];
  }
  for (let q = odd; 2 * q < p; q++) {
    // Pair (q, e): (0, p/2) for even p, then (q, p − q).
    const e = q === 0 ? p >> 1 : p - q;
    let ar = aRe[a0 + q * da],
      ai = aIm[a0 + q * da];
    if (q > 0) {
      const cr = w[2 * q - 2],
        ci = w[2 * q - 1];
      const t = ar * cr - ai * ci;
      ai = ar * ci + ai * cr;
      ar = t;
    }
    const v = aRe[a0 + e * da],
      u = aIm[a0 + e * da];
    const cr = w[2 * e - 2],
      ci = w[2 * e - 1];
    const br = v * cr - u * ci,
      bi = v * ci + u * cr;
    x[2 * q] = ar + br;
    x[2 * q + 1] = ai + bi;
    x[2 * e] = ar - br;
    x[2 * e + 1] = ai - bi;
  }
}

/** Stores the output pair a + b at o1 and a − b at o2 (complex a = (ar, ai), b = (br, bi)). */
function storeSumDiff(bRe: Float64Array, bIm: Float64Array, o1: number, o2: number, ar: number, ai: number, br: number, bi: number): void {
  bRe[o1] = ar + br;
  bIm[o1] = ai + bi;
  bRe[o2] = ar - br;
  bIm[o2] = ai - bi;
}

function radix2(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  bRe[o0] = x[0];
  bIm[o0] = x[1];
  bRe[o0 + db] = x[2];
  bIm[o0 + db] = x[3];
}

function radix3(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // W_3 = −½ − i·√3/2; x1 = v1 + v2, x2 = v1 − v2.
  const x0r = x[0],
    x0i = x[1];
  const mr = x0r - 0.5 * x[2],
    mi = x0i - 0.5 * x[3];
  const k = 0.8660254037844386;
  bRe[o0] = x0r + x[2];
  bIm[o0] = x0i + x[3];
  storeSumDiff(bRe, bIm, o0 + db, o0 + 2 * db, mr, mi, k * x[5], -(k * x[4]));
}

function radix4(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // W_4 = −i; x0 = v0 + v2, x2 = v0 − v2, x1 = v1 + v3, x3 = v1 − v3.
  storeSumDiff(bRe, bIm, o0, o0 + 2 * db, x[0], x[1], x[2], x[3]);
  storeSumDiff(bRe, bIm, o0 + db, o0 + 3 * db, x[4], x[5], x[7], -x[6]);
}

function radix5(x: Float64Array, bRe: Float64Array, bIm: Float64Array, o0: number, db: number): void {
  // Direct sums with W_5^k; x1 = a1 = v1 + v4, x4 = b1 = v1 − v4, x2 = a2 = v2 + v3, x3 = b2 = v2 − v3.
  const c1 = 0.30901699437494745,
    c2 = -0.8090169943749475,
    s1 = 0.9510565162951535,
    s2 = 0.5877852522924731;
  const x0r = x[0],
    x0i = x[1],
    a1r = x[2],
    a1i = x[3],
    a2r = x[4],
    a2i = x[5],
    b2r = x[6],
    b2i = x[7],
    b1r = x[8],
    b1i = x[9];
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
  storeSumDiff(bRe, bIm, o0 + db, o0 + 4 * db, m1r, m1i, n1r, -n1i);
  storeSumDiff(bRe, bIm, o0 + 2 * db, o0 + 3 * db, m2r, m2i, n2r, -n2i);
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
