import { describe, expect, it } from 'vitest';
import { quantileSorted as d3Quantile } from 'd3-array';
import { createStream, distributionMean, drawFrom, hashUniform, normalCdf, normalQuantile, type Distribution } from '../../shared/random/index.ts';
import { quantileSorted, stderrMedianSorted, summarize } from '../../shared/thermal/index.ts';

describe('seeded streams', () => {
  it('same (seed, index) → same sequence; different index → different', () => {
    const a = createStream(42, 7),
      b = createStream(42, 7),
      c = createStream(42, 8);
    const xa = Array.from({ length: 5 }, () => a.uniform());
    expect(Array.from({ length: 5 }, () => b.uniform())).toEqual(xa);
    expect(Array.from({ length: 5 }, () => c.uniform())).not.toEqual(xa);
    expect(hashUniform(1, 2, 3)).toBe(hashUniform(1, 2, 3));
    expect(hashUniform(1, 2, 3)).not.toBe(hashUniform(1, 3, 2));
  });
  it('uniforms are uniform and neighbouring streams uncorrelated', () => {
    const n = 20000;
    let s = 0,
      s2 = 0,
      sxy = 0;
    for (let i = 0; i < n; i++) {
      const u = createStream(5, i).uniform(),
        v = createStream(5, i + 1).uniform();
      s += u;
      s2 += u * u;
      sxy += (u - 0.5) * (v - 0.5);
    }
    // Uniform(0,1): mean 1/2, variance 1/12 (textbook moments); tolerances ≈ 5 standard errors.
    expect(Math.abs(s / n - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(s2 / n - (s * s) / n / n - 1 / 12)).toBeLessThan(0.004);
    expect(Math.abs(sxy / n / (1 / 12))).toBeLessThan(5 / Math.sqrt(n));
  });
});

describe('normal distribution function', () => {
  it('matches tabulated Φ values (Abramowitz & Stegun 1964, Table 26.1; digits from memory)', () => {
    expect(normalCdf(0)).toBe(0.5);
    expect(normalCdf(1)).toBeCloseTo(0.841344746068543, 14);
    expect(normalCdf(-1.96)).toBeCloseTo(0.02499789514822, 14);
    expect(normalCdf(-6) / 9.865876450377e-10).toBeCloseTo(1, 9);
  });
  it('Φ⁻¹ inverts Φ', () => {
    for (const p of [1e-12, 1e-4, 0.1, 0.5, 0.9, 0.975, 1 - 1e-9]) expect(normalCdf(normalQuantile(p)) / p).toBeCloseTo(1, 9);
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 12);
  });
});

describe('distribution draws', () => {
  const cases: Distribution[] = [
    { dist: 'normal', mean: 3, sd: 0.3 },
    { dist: 'truncnormal', mean: 2, sd: 1, min: 1.5, max: 4 },
    { dist: 'truncnormal', mean: 0, sd: 1, min: 7, max: 9 }, // far tail: Robert (1995) sampler
    { dist: 'uniform', min: 1, max: 5 },
    { dist: 'triangular', min: 0, mode: 1, max: 4 },
  ];
  for (const d of cases) {
    it(`${d.dist} ${JSON.stringify(d)} stays in range and has its analytic mean`, () => {
      const rng = createStream(9, 1);
      const n = 20000;
      let s = 0,
        lo = Infinity,
        hi = -Infinity;
      for (let i = 0; i < n; i++) {
        const x = drawFrom(rng, d);
        s += x;
        lo = Math.min(lo, x);
        hi = Math.max(hi, x);
      }
      if ('min' in d) {
        expect(lo).toBeGreaterThanOrEqual(d.min);
        expect(hi).toBeLessThanOrEqual(d.max);
      }
      // Means: normal μ; uniform (a+b)/2; triangular (a+c+b)/3; truncated normal μ + σ(φ(α) − φ(β))/Z
      // (Johnson, Kotz & Balakrishnan 1994). Tolerance 0.03 ≈ 5 standard errors for these spreads.
      expect(Math.abs(s / n - distributionMean(d))).toBeLessThan(0.03);
    });
  }
});

describe('percentiles (Hyndman & Fan 1996 type 7) against d3-array', () => {
  it('agree with d3.quantileSorted (R-7)', () => {
    const rng = createStream(3, 0);
    const a = Float64Array.from({ length: 37 }, () => rng.normal()).sort();
    for (const p of [0, 0.1, 0.25, 0.5, 0.9, 1]) expect(quantileSorted(a, 0, a.length, p)).toBeCloseTo(d3Quantile(Array.from(a), p)!, 14);
  });
  it('a percentile that falls among not-reached values (+∞) is NaN', () => {
    const a = [1, 2, 3, 4, 5, 6, 7, 8, Infinity, Infinity, Infinity];
    expect(quantileSorted(a, 0, a.length, 0.5)).toBe(6);
    expect(quantileSorted(a, 0, a.length, 0.9)).toBeNaN();
    expect(summarize(a).mean).toBeNaN();
  });
  it('stderr of the median: order-statistic interval / 3.92 (Conover 1999) ≈ 1.2533·σ/√n for normal data', () => {
    const rng = createStream(11, 0);
    const n = 4000;
    const a = Float64Array.from({ length: n }, () => rng.normal()).sort();
    // Asymptotic se of the sample median of N(0,1): √(π/2)/√n (Kendall & Stuart).
    expect(stderrMedianSorted(a, 0, n) / (Math.sqrt(Math.PI / 2) / Math.sqrt(n))).toBeCloseTo(1, 1);
  });
});
