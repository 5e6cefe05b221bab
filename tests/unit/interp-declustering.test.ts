import { describe, it, expect } from 'vitest';
import { cellDeclusteringWeights, decluster } from '../../shared/interp/declustering.ts';
import { simulateAtPoints } from '../../shared/interp/simulateField.ts';
import { NormalScoreTransform } from '../../shared/interp/normalScore.ts';
import { prng } from '../helpers/prng.ts';

// Cell declustering (Journel 1983; Deutsch & Journel 1998, GSLIB §VI.2.2 declus; docs/sources.md#cell-declustering):
// a point in a cell holding n_k points, L cells occupied, weighs 1/(n_k·L); weights averaged over origin offsets and
// scaled to mean 1. Worked by hand [derived]:
// four points clustered at (1..2, 1..2) km with value 100, one at (15, 1) with 50, one at (15, 15) with 60; cells of
// 10 km from the points' lower-left corner (1, 1). Every origin offset (0, 2, 4, 6, 8 km along the diagonal) keeps
// the cluster in one cell and the two others in two more cells, so L = 3 always:
//   cluster: 1/(4·3) = 1/12 → × 6 points = 0.5 each; the two single points: 1/(1·3) = 1/3 → 2 each;
//   declustered mean = (4·0.5·100 + 2·50 + 2·60)/6 = 420/6 = 70; the plain mean is 510/6 = 85.
const X = [1, 2, 1, 2, 15, 15];
const Y = [1, 1, 2, 2, 1, 15];
const Z = [100, 100, 100, 100, 50, 60];

describe('cell declustering weights', () => {
  it('the hand-worked case: weights 0.5 (clustered) and 2 (alone), declustered mean 70 against 85', () => {
    for (const offsets of [1, 5]) {
      const w = cellDeclusteringWeights(X, Y, 10, offsets);
      [0.5, 0.5, 0.5, 0.5, 2, 2].forEach((e, i) => expect(w[i]).toBeCloseTo(e, 12));
    }
    const r = decluster(X, Y, Z, { cellKm: 10 });
    expect(r.report.declusteredMean).toBeCloseTo(70, 12);
    expect(r.report.naiveMean).toBeCloseTo(85, 12);
    // By hand: plain variance (4·15² + 35² + 25²)/6 = 2750/6; declustered (2·30² + 2·20² + 2·10²)/6 = 2800/6.
    expect(r.report.naiveSd).toBeCloseTo(Math.sqrt(2750 / 6), 12);
    expect(r.report.declusteredSd).toBeCloseTo(Math.sqrt(2800 / 6), 12);
    expect(r.report).toMatchObject({ cellKm: 10, selectedBy: 'given', offsets: 5, minWeight: 0.5, maxWeight: 2 });
  });

  it('a cell smaller than every spacing, or one holding every point, gives equal weights (the plain mean)', () => {
    // Each point alone: n_k = 1 and L = n; all in one cell: n_k = n and L = 1; both give 1/n → weight 1.
    for (const c of [0.1, 1000]) cellDeclusteringWeights(X, Y, c, 1).forEach((w) => expect(w).toBeCloseTo(1, 12));
  });

  it('auto: the candidate of the minimum declustered mean, below the plain mean for data clustered in highs', () => {
    // Invented: a regular 10 km lattice of background values near 60 and a dense cluster of hot sites near 110.
    const r = prng(3);
    const x: number[] = [],
      y: number[] = [],
      z: number[] = [];
    for (let i = 0; i < 10; i++)
      for (let j = 0; j < 10; j++) {
        x.push(i * 10 + 5);
        y.push(j * 10 + 5);
        z.push(60 + 4 * (r() - 0.5));
      }
    for (let k = 0; k < 60; k++) {
      x.push(20 + 6 * r());
      y.push(70 + 6 * r());
      z.push(110 + 4 * (r() - 0.5));
    }
    const d = decluster(x, y, z);
    const c = d.report.candidates!;
    expect(c).toHaveLength(24);
    expect(d.report.selectedBy).toBe('minimum declustered mean');
    expect(d.report.declusteredMean).toBe(Math.min(...c.map((k) => k.declusteredMean)));
    // The plain mean is pulled up by the cluster: (100·60 + 60·110)/160 = 78.75; one weight per lattice cell gives
    // about (100·60 + 1·110)/101 ≈ 60.5 [derived]. The chosen weights must come close to the lattice's mean.
    expect(d.report.naiveMean).toBeCloseTo(78.75, 0);
    expect(d.report.declusteredMean).toBeLessThan(63);
    expect(d.report.declusteredMean).toBeGreaterThan(59);
  });
});

describe('declustering in the normal-score transform', () => {
  it("the weighted histogram's cumulative probabilities follow GSLIB nscore's (W_before + w/2)/W with the hand weights", () => {
    // Weights 0.5 × 4 at 100, 2 at 50, 2 at 60 (total 6) [derived above]: p(50) = (0 + 1)/6, p(60) = (2 + 1)/6,
    // p(100) = (4 + 1)/6; without weights p = (0 + 0.5)/6, (1 + 0.5)/6, (2 + 2)/6 (Deutsch & Journel 1998, §V.1.12).
    const w = decluster(X, Y, Z, { cellKm: 10 }).weights;
    const ns = new NormalScoreTransform(Z, w);
    expect(Array.from(ns.values)).toEqual([50, 60, 100]);
    [1 / 6, 3 / 6, 5 / 6].forEach((p, i) => expect(ns.probs[i]).toBeCloseTo(p, 12));
    const plain = new NormalScoreTransform(Z);
    [0.5 / 6, 1.5 / 6, 4 / 6].forEach((p, i) => expect(plain.probs[i]).toBeCloseTo(p, 12));
  });

  it('a simulation with declustering reports it beside the transform', () => {
    // Invented sites: the hand-worked six placed near (-130, -40), x/85.4 and y/111.0 degrees per km there.
    const lon = X.map((v) => -130 + v / 85.4),
      lat = Y.map((v) => -40 + v / 111.0);
    const points = { ids: X.map((_, i) => `s${i}`), lon, lat, values: Z };
    const targets = { ids: ['t'], lon: [-129.9], lat: [-39.9] };
    const base = { realizations: 10, seed: 9, variogram: { model: 'exponential' as const, nugget: 0, partialSill: 1, rangeKm: 5 }, neighbors: 'all' as const };
    expect(simulateAtPoints(points, base, targets).transform.declustering).toBeUndefined();
    const dc = simulateAtPoints(points, { ...base, declustering: { cellKm: 10 } }, targets);
    expect(dc.transform.declustering).toMatchObject({ cellKm: 10, selectedBy: 'given', minWeight: expect.any(Number) });
    // The projection to km is not the hand case's exact frame, but the cells hold the same points: mean 70.
    expect(dc.transform.declustering!.declusteredMean).toBeCloseTo(70, 6);
  });
});
