import { quantileSorted as d3Quantile } from 'd3-array';
import { describe, expect, it } from 'vitest';
import { percentilesBySelection, quantileSorted } from '../../shared/stats/quantile.ts';
import { layerStats } from '../../shared/products/stats.ts';
import { createStream } from '../../shared/random/prng.ts';

const PS = [0, 0.1, 0.25, 0.5, 0.9, 1];

describe('type-7 quantiles (Hyndman & Fan 1996, definition 7)', () => {
  it('give the textbook answer on 1..10: P10 = 1.9, P50 = 5.5, P90 = 9.1 (h = (n − 1)p, linear between order statistics)', () => {
    const a = Float64Array.from({ length: 10 }, (_, i) => i + 1);
    expect(quantileSorted(a, 0, 10, 0.1)).toBeCloseTo(1.9, 12);
    expect(quantileSorted(a, 0, 10, 0.5)).toBeCloseTo(5.5, 12);
    expect(quantileSorted(a, 0, 10, 0.9)).toBeCloseTo(9.1, 12);
  });

  it('agree by sort and by selection with d3-array quantileSorted (the R-7 reference library) on seeded data', () => {
    const rng = createStream(42, 0);
    for (const n of [1, 2, 3, 10, 101, 1000]) {
      const a = Float64Array.from({ length: n }, () => Math.round(rng.uniform() * 50)); // many ties
      const sorted = Float64Array.from(a).sort();
      const out = new Float64Array(PS.length);
      percentilesBySelection(Float64Array.from(a), n, PS, out);
      PS.forEach((p, i) => {
        const ref = d3Quantile(Array.from(sorted), p)!;
        expect(quantileSorted(sorted, 0, n, p)).toBeCloseTo(ref, 12);
        expect(out[i]).toBeCloseTo(ref, 12);
      });
    }
  });

  it('select on a constant array of a million values without quadratic partitioning (equal runs split evenly)', () => {
    const a = new Float64Array(1_000_000).fill(7);
    const out = new Float64Array(3);
    percentilesBySelection(a, a.length, [0.1, 0.5, 0.9], out);
    expect(Array.from(out)).toEqual([7, 7, 7]);
    expect(layerStats(new Float32Array(1_000_000).fill(3))).toEqual({ min: 3, max: 3, median: 3, noData: 0 });
  });

  it('treat +Infinity ("not reached") as NaN where the interpolation touches it', () => {
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.9)).toBeNaN();
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.5)).toBe(2);
  });
});
