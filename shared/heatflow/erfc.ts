/**
 * Complementary error function erfc(x) = 1 − erf(x) = (2/√π)∫ₓ^∞ e^(−t²) dt, to about 1e-12 relative (near x = 2, where the series loses digits to cancellation).
 * Method (Abramowitz & Stegun 1964, 7.1.5 and 7.1.14): the Maclaurin series of erf for |x| < 2, and for x ≥ 2
 * the continued fraction erfc(x) = (e^(−x²)/√π)·1/(x + (1/2)/(x + 1/(x + (3/2)/(x + …)))) evaluated by the modified
 * Lentz algorithm. erfc(−x) = 2 − erfc(x).
 */
export function erfc(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x < 0) return 2 - erfc(-x);
  if (x < 2) {
    // erf(x) = (2/√π) Σ (−1)ⁿ x^(2n+1) / (n!(2n+1)); terms fall below 1e-17 of the sum well before n = 60 for x < 2.
    let term = x,
      sum = x;
    const x2 = x * x;
    for (let n = 1; n < 80; n++) {
      term *= -x2 / n;
      const add = term / (2 * n + 1);
      sum += add;
      if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
    }
    return 1 - (2 / Math.sqrt(Math.PI)) * sum;
  }
  if (x > 27) return 0; // e^(−x²) underflows double precision
  // Continued fraction K = x + a1/(x + a2/(x + …)) with aₙ = n/2; modified Lentz (Press et al. 2007, §5.2).
  const tiny = 1e-300;
  let f = x,
    c = x,
    d = 0;
  for (let n = 1; n < 500; n++) {
    const a = n / 2;
    d = x + a * d;
    d = Math.abs(d) < tiny ? tiny : d;
    c = x + a / c;
    c = Math.abs(c) < tiny ? tiny : c;
    d = 1 / d;
    const delta = c * d;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return Math.exp(-x * x) / (Math.sqrt(Math.PI) * f);
}
