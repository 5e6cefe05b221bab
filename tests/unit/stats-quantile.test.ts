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

  it("give a Float32 grid's median (radix selection, no copy) as d3-array quantileSorted does, with NaN and ±∞ as no data", () => {
    const rng = createStream(7, 0);
    for (const n of [1, 2, 3, 10, 1001, 100_000]) {
      // Negative and positive values, ties, a ±0 pair, values sharing their high 16 bits, and no-data cells.
      const a = Float32Array.from({ length: n }, (_, i) =>
        i % 17 === 5
          ? NaN
          : i % 29 === 3
            ? i % 2
              ? Infinity
              : -Infinity
            : i % 13 === 0
              ? i % 2
                ? -0
                : 0
              : Math.round((rng.uniform() - 0.4) * 2000) / 64 + 1e-3 * (i % 3),
      );
      const finite = Array.from(a)
        .filter(Number.isFinite)
        .sort((x, y) => x - y);
      const s = layerStats(a);
      expect(s.noData).toBe(n - finite.length);
      if (finite.length === 0) continue;
      expect(s.median).toBe(d3Quantile(finite, 0.5)! + 0); // + 0: −0 and +0 read alike
      expect(s.min).toBe(finite[0]);
      expect(s.max).toBe(finite[finite.length - 1]);
      expect(s.median).toBe(layerStats(Array.from(a)).median! + 0);
    }
  });

  it('treat +Infinity ("not reached") as NaN where the interpolation touches it', () => {
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.9)).toBeNaN();
    expect(quantileSorted([1, 2, Infinity], 0, 3, 0.5)).toBe(2);
  });
});
