/**
 * Complex fast Fourier transform of power-of-two length: iterative radix-2 decimation in time (Cooley & Tukey 1965;
 * bit-reversal permutation, then log₂n butterfly passes), on separate real and imaginary Float64Arrays, unnormalized,
 * forward sign e^(−2πi·jk/n). The two-dimensional transform runs the rows, then the columns through a scratch copy.
 */

/** Smallest power of two ≥ n (n ≥ 1). */
export function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** Precomputed twiddles and bit-reversal table for one length. */
export class Fft {
  readonly n: number;
  readonly cos: Float64Array;
  readonly sin: Float64Array;
  readonly rev: Uint32Array;

  constructor(n: number) {
    if (!(n >= 1 && (n & (n - 1)) === 0)) throw new RangeError(`FFT length must be a power of two, got ${n}`);
    this.n = n;
    this.cos = new Float64Array(n / 2 || 1);
    this.sin = new Float64Array(n / 2 || 1);
    for (let k = 0; k < n / 2; k++) {
      const a = (-2 * Math.PI * k) / n;
      this.cos[k] = Math.cos(a);
      this.sin[k] = Math.sin(a);
    }
    this.rev = new Uint32Array(n);
    let bits = 0;
    while (1 << bits < n) bits++;
    for (let i = 0; i < n; i++) {
      let r = 0;
      for (let b = 0, v = i; b < bits; b++, v >>= 1) r = (r << 1) | (v & 1);
      this.rev[i] = r;
    }
  }

  /** In-place forward transform of re[off .. off+n), im[off .. off+n) (contiguous). */
  transform(re: Float64Array, im: Float64Array, off = 0): void {
    const n = this.n, rev = this.rev, cs = this.cos, sn = this.sin;
    for (let i = 0; i < n; i++) {
      const j = rev[i];
      if (j > i) {
        const a = off + i, b = off + j;
        let t = re[a]; re[a] = re[b]; re[b] = t;
        t = im[a]; im[a] = im[b]; im[b] = t;
      }
    }
    for (let size = 2; size <= n; size *= 2) {
      const half = size / 2, step = n / size;
      for (let start = 0; start < n; start += size) {
        for (let k = 0, t = 0; k < half; k++, t += step) {
          const a = off + start + k, b = a + half;
          const wr = cs[t], wi = sn[t];
          const xr = re[b] * wr - im[b] * wi;
          const xi = re[b] * wi + im[b] * wr;
          re[b] = re[a] - xr; im[b] = im[a] - xi;
          re[a] += xr; im[a] += xi;
        }
      }
    }
  }
}

/**
 * In-place forward 2-D transform of a row-major mx × my array (mx columns, my rows, both powers of two): the
 * rows one by one, then all columns at once, each butterfly applied to two whole rows (contiguous memory).
 */
export function fft2d(re: Float64Array, im: Float64Array, mx: number, my: number, fx: Fft, fy: Fft): void {
  for (let r = 0; r < my; r++) fx.transform(re, im, r * mx);
  const rev = fy.rev, cs = fy.cos, sn = fy.sin;
  for (let i = 0; i < my; i++) {
    const j = rev[i];
    if (j > i) {
      const a = i * mx, b = j * mx;
      for (let c = 0; c < mx; c++) {
        let t = re[a + c]; re[a + c] = re[b + c]; re[b + c] = t;
        t = im[a + c]; im[a + c] = im[b + c]; im[b + c] = t;
      }
    }
  }
  for (let size = 2; size <= my; size *= 2) {
    const half = size / 2, step = my / size;
    for (let start = 0; start < my; start += size) {
      for (let k = 0, t = 0; k < half; k++, t += step) {
        const a0 = (start + k) * mx, b0 = a0 + half * mx;
        const wr = cs[t], wi = sn[t];
        if (t === 0) {
          for (let c = 0; c < mx; c++) {
            const a = a0 + c, b = b0 + c;
            const xr = re[b], xi = im[b];
            re[b] = re[a] - xr; im[b] = im[a] - xi;
            re[a] += xr; im[a] += xi;
          }
        } else {
          for (let c = 0; c < mx; c++) {
            const a = a0 + c, b = b0 + c;
            const xr = re[b] * wr - im[b] * wi;
            const xi = re[b] * wi + im[b] * wr;
            re[b] = re[a] - xr; im[b] = im[a] - xi;
            re[a] += xr; im[a] += xi;
          }
        }
      }
    }
  }
}
