/**
 * Four-point (cubic) Lagrange interpolation on equally spaced nodes (docs/sources.md#lagrange-interpolation): the
 * value at offset u ∈ [0, 3] node spacings from the first of four nodes v[k], v[k + s], v[k + 2s], v[k + 3s] is
 * Σ lᵢ(u)·v[k + i·s] with l₀ = −(u−1)(u−2)(u−3)/6, l₁ = u(u−2)(u−3)/2, l₂ = −u(u−1)(u−3)/2, l₃ = u(u−1)(u−2)/6.
 * The heat-flow tables of the thermal products and of heat in place read their nodes with it.
 */
export function cubicLagrange(v: ArrayLike<number>, k: number, s: number, u: number): number {
  const u1 = u - 1,
    u2 = u - 2,
    u3 = u - 3;
  const l0 = (-u1 * u2 * u3) / 6,
    l1 = (u * u2 * u3) / 2,
    l2 = (-u * u1 * u3) / 2,
    l3 = (u * u1 * u2) / 6;
  return l0 * v[k] + l1 * v[k + s] + l2 * v[k + 2 * s] + l3 * v[k + 3 * s];
}
