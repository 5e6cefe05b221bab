/**
 * Small dense linear algebra on flat row-major Float64Arrays, allocation-free: the caller owns every buffer.
 * Cholesky factorization (Golub & Van Loan, Matrix Computations, 4th ed., Alg. 4.2.1) and triangular solves.
 */

/**
 * In-place Cholesky factorization A = L·Lᵀ of the leading n×n block of `a` (row stride `stride`), writing L into
 * the lower triangle (the upper triangle is left untouched and must not be read afterwards). Returns false when
 * a pivot is not positive or falls below `relTol` × the largest diagonal entry: the matrix is then treated as
 * singular or too ill-conditioned to trust (the caller regularizes or falls back), never as a silent NaN.
 */
export function choleskyInPlace(a: Float64Array, n: number, stride: number = n, relTol = 1e-13): boolean {
  let maxDiag = 0;
  for (let i = 0; i < n; i++) {
    const d = a[i * stride + i];
    if (!(d > 0)) return false;
    if (d > maxDiag) maxDiag = d;
  }
  const tol = relTol * maxDiag;
  for (let j = 0; j < n; j++) {
    const rj = j * stride;
    let s = a[rj + j];
    for (let k = 0; k < j; k++) s -= a[rj + k] * a[rj + k];
    if (!(s > tol)) return false;
    const ljj = Math.sqrt(s);
    a[rj + j] = ljj;
    const inv = 1 / ljj;
    for (let i = j + 1; i < n; i++) {
      const ri = i * stride;
      let t = a[ri + j];
      for (let k = 0; k < j; k++) t -= a[ri + k] * a[rj + k];
      a[ri + j] = t * inv;
    }
  }
  return true;
}

/** Solves L·y = b (forward substitution) with L from `choleskyInPlace`; `b` and `y` may be the same array. */
export function forwardSubstitute(l: Float64Array, n: number, stride: number, b: ArrayLike<number>, y: Float64Array): void {
  for (let i = 0; i < n; i++) {
    const ri = i * stride;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[ri + k] * y[k];
    y[i] = s / l[ri + i];
  }
}

/** Solves Lᵀ·x = y (back substitution); `y` and `x` may be the same array. */
export function backSubstitute(l: Float64Array, n: number, stride: number, y: ArrayLike<number>, x: Float64Array): void {
  for (let i = n - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < n; k++) s -= l[k * stride + i] * x[k];
    x[i] = s / l[i * stride + i];
  }
}

/** Solves (L·Lᵀ)·x = b; `b` and `x` may be the same array. */
export function choleskySolve(l: Float64Array, n: number, stride: number, b: ArrayLike<number>, x: Float64Array): void {
  forwardSubstitute(l, n, stride, b, x);
  backSubstitute(l, n, stride, x, x);
}

/** Dot product of the first n entries (plain summation: n is a neighbourhood size or a few thousand). */
export function dot(a: ArrayLike<number>, b: ArrayLike<number>, n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i] * b[i];
  return s;
}
