import { describe, expect, it } from 'vitest';
import { expNonPositive } from '../../shared/interp/fast-exp.ts';

describe('table exponential for covariances', () => {
  it('agrees with Math.exp to 1e-12 relative on [−40, 0] (cubic Hermite bound h⁴/384 with h = 1/256)', () => {
    let worst = 0;
    for (let k = 0; k <= 2_000_000; k++) {
      const t = (-40 * k) / 2_000_000;
      worst = Math.max(worst, Math.abs(expNonPositive(t) / Math.exp(t) - 1));
    }
    expect(worst).toBeLessThan(1e-12);
    expect(expNonPositive(0)).toBe(1);
  });

  it('is 0 below −40, Math.exp above 0, NaN for NaN', () => {
    expect(expNonPositive(-41)).toBe(0);
    expect(expNonPositive(-Infinity)).toBe(0);
    expect(expNonPositive(0.5)).toBe(Math.exp(0.5));
    expect(expNonPositive(NaN)).toBeNaN();
  });
});
