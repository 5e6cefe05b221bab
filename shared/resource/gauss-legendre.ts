/**
 * Gauss–Legendre quadrature nodes and weights on [−1, 1] (Abramowitz & Stegun 1964, §25.4.29): the n-point rule is
 * exact for polynomials of degree ≤ 2n − 1. Nodes are the roots of the Legendre polynomial P_n, found by Newton's
 * iteration from Tricomi's initial guess cos(π(i − 1/4)/(n + 1/2)); weights 2/((1 − x²)·P_n'(x)²).
 */
export interface GaussLegendreRule {
  n: number;
  /** Nodes on [−1, 1], ascending. */
  x: Float64Array;
  /** Weights (sum 2). */
  w: Float64Array;
}

/** The n-point Gauss–Legendre rule (1 ≤ n ≤ 64). */
export function gaussLegendre(n: number): GaussLegendreRule {
  if (!(Number.isInteger(n) && n >= 1 && n <= 64)) throw new RangeError(`Gauss–Legendre order must be an integer 1…64, got ${n}`);
  const x = new Float64Array(n),
    w = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      // Bonnet's recurrence: (k + 1)P_{k+1} = (2k + 1)zP_k − kP_{k−1}.
      let p0 = 1,
        p1 = z;
      for (let k = 1; k < n; k++) {
        const p2 = ((2 * k + 1) * z * p1 - k * p0) / (k + 1);
        p0 = p1;
        p1 = p2;
      }
      const pn = n === 1 ? z : p1;
      const pm = n === 1 ? 1 : p0;
      dp = (n * (z * pn - pm)) / (z * z - 1);
      const dz = pn / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    x[n - 1 - i] = z;
    w[n - 1 - i] = 2 / ((1 - z * z) * dp * dp);
  }
  return { n, x, w };
}
