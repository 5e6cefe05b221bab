/**
 * Standard normal density, distribution function and its inverse, to about 1e-15 relative accuracy.
 * Φ: Marsaglia's Taylor series (Marsaglia 2004, "Evaluating the normal distribution", J. Stat. Softw. 11(4)) for
 * |x| < 5, and the Laplace continued fraction for the Mills ratio beyond (Abramowitz & Stegun 1964, 26.2.14),
 * so the lower tail keeps its relative precision. Φ⁻¹: Halley's iteration on Φ from a logistic starting guess.
 */

const INV_SQRT_2PI = 0.3989422804014327;

/** Standard normal density φ(x). */
export function normalPdf(x: number): number {
  return INV_SQRT_2PI * Math.exp(-0.5 * x * x);
}

/** Upper tail Q(x) = 1 − Φ(x) for x ≥ 5 by the continued fraction φ(x)/(x + 1/(x + 2/(x + 3/(x + …)))). */
function upperTailCf(x: number): number {
  let f = x;
  for (let k = 60; k >= 1; k--) f = x + k / f;
  return normalPdf(x) / f;
}

/** Standard normal distribution function Φ(x). */
export function normalCdf(x: number): number {
  if (x !== x) return NaN;
  if (x >= 5) return 1 - upperTailCf(x);
  if (x <= -5) return upperTailCf(-x);
  // Marsaglia (2004): Φ(x) = 1/2 + φ(x)·(x + x³/3 + x⁵/(3·5) + …).
  let s = x,
    t = x;
  const x2 = x * x;
  for (let i = 3; i < 200; i += 2) {
    t *= x2 / i;
    const ns = s + t;
    if (ns === s) break;
    s = ns;
  }
  return 0.5 + s * normalPdf(x);
}

/** Φ⁻¹(p) for p in (0, 1); −∞/+∞ at 0/1, NaN outside. */
export function normalQuantile(p: number): number {
  if (!(p >= 0 && p <= 1)) return NaN;
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  // Work in the lower half for precision: Φ⁻¹(p) = −Φ⁻¹(1 − p).
  if (p > 0.5) return -normalQuantile(1 - p);
  // Starting guess: logistic approximation Φ(x) ≈ 1/(1 + e^(−1.702x)), then a tail-aware log form.
  let x = p > 1e-3 ? Math.log(p / (1 - p)) / 1.702 : -Math.sqrt(-2 * Math.log(p) - Math.log(-2 * Math.log(p)) - Math.log(2 * Math.PI));
  for (let i = 0; i < 50; i++) {
    const e = normalCdf(x) - p;
    const d = normalPdf(x);
    if (d === 0) break;
    const u = e / d;
    // Halley: x ← x − u/(1 + x·u/2) (Φ'' = −xφ).
    const dx = u / (1 + 0.5 * x * u);
    x -= dx;
    if (Math.abs(dx) <= 1e-15 * Math.max(1, Math.abs(x))) break;
  }
  return x;
}
