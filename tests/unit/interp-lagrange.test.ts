import { describe, expect, it } from 'vitest';
import { cubicLagrange } from '../../shared/interp/lagrange.ts';

// docs/sources.md#lagrange-interpolation: the four-point rule reproduces cubics exactly; at u = 1.5 it is
// (−f0 + 9f1 + 9f2 − f3)/16. p(x) = 1 + 2x − 3x² + 0.5x³: p(0…3) = 1, 0.5, −3, −6.5.
const p = (x: number) => 1 + 2 * x - 3 * x * x + 0.5 * x ** 3;

describe('four-point Lagrange rule', () => {
  it('gives the published check values of a cubic between and at its nodes', () => {
    const v = [1, 0.5, -3, -6.5];
    expect(cubicLagrange(v, 0, 1, 1.5)).toBeCloseTo(-1.0625, 14);
    expect(cubicLagrange(v, 0, 1, 0.25)).toBeCloseTo(1.3203125, 14);
    expect(cubicLagrange(v, 0, 1, 2.75)).toBeCloseTo(-5.7890625, 14);
    for (let k = 0; k < 4; k++) expect(cubicLagrange(v, 0, 1, k)).toBe(v[k]);
  });

  it('reads interleaved nodes by offset and stride (three quantities, stride 3) and reproduces each cubic', () => {
    // Quantity c at node i: p(i) + c·i³ (still a cubic), stored at 3·(2 + i) + c after two unrelated nodes.
    const vals = new Float64Array(3 * 6).fill(NaN);
    for (let i = 0; i < 4; i++) for (let c = 0; c < 3; c++) vals[3 * (2 + i) + c] = p(i) + c * i ** 3;
    for (const u of [0.1, 1.5, 2.9]) for (let c = 0; c < 3; c++) expect(cubicLagrange(vals, 6 + c, 3, u)).toBeCloseTo(p(u) + c * u ** 3, 12);
  });

  it('is not exact for a quartic (the rule is cubic): x⁴ at u = 1.5 is off by the interpolation error', () => {
    // Error of the four-point rule for f = x⁴: f⁗/4!·u(u−1)(u−2)(u−3) = 1.5·0.5·(−0.5)·(−1.5) = 0.5625.
    const v = [0, 1, 16, 81];
    expect(cubicLagrange(v, 0, 1, 1.5) - 1.5 ** 4).toBeCloseTo(-0.5625, 12);
  });
});
