import { describe, it, expect } from 'vitest';
import { segmentsCross, FaultBarrier } from '../../shared/interp/barriers.ts';
import { interpolateGrid, predictAtPoints, type PointData } from '../../shared/interp/interpolate.ts';
import { kmPerDegree } from '../../shared/interp/projection.ts';

describe('fault crossing test (orientation predicates, documented tie rules)', () => {
  it('a proper crossing blocks; parallel, disjoint and touching paths do not', () => {
    expect(segmentsCross(0, 0, 2, 0, 1, -1, 1, 1)).toBe(true);
    expect(segmentsCross(0, 0, 2, 0, 3, -1, 3, 1)).toBe(false); // the trace ends before the path
    expect(segmentsCross(0, 0, 2, 0, 0, 1, 2, 1)).toBe(false); // parallel
    expect(segmentsCross(1, 0, 2, 0, 1, -1, 1, 1)).toBe(false); // a point on the trace informs both sides
  });
  it('a path through a shared vertex of a trace is blocked exactly once when it passes through', () => {
    const b = new FaultBarrier(Float64Array.from([1, -1, 1, 0, 1, 0, 1, 1]), [2], [0]);
    expect(b.visible(0, 0, 0)).toBe(false); // (0,0)→(2,0) passes through the vertex (1,0)
    const graze = new FaultBarrier(Float64Array.from([1, -1, 1, 0, 1, 0, 2, -1]), [2], [0.5]);
    expect(graze.visible(0, 0.5, 0)).toBe(true); // a path above a V-shaped trace never meets it
  });
});

describe('fault barriers in IDW, kriging and cross-validation', () => {
  // A step field: 40 west of a north–south fault at lon −128, 90 east of it; regular 15 × 15 sites, about 2 km apart.
  const k = kmPerDegree(-38);
  const ids: string[] = [],
    lon: number[] = [],
    lat: number[] = [],
    values: number[] = [];
  for (let i = 0; i < 15; i++)
    for (let j = 0; j < 15; j++) {
      const lo = -128 + ((i - 7) * 2 + 1) / k.lon,
        la = -38 + ((j - 7) * 2) / k.lat;
      ids.push(`s${i}-${j}`);
      lon.push(lo);
      lat.push(la);
      values.push(lo < -128 ? 40 : 90);
    }
  const pts: PointData = { ids, lon: Float64Array.from(lon), lat: Float64Array.from(lat), values: Float64Array.from(values) };
  const fault = [
    [
      [-128, -38.5],
      [-128, -37.5],
    ],
  ];
  const bbox: [number, number, number, number] = [-128.12, -38.1, -127.88, -37.9];
  const westCol = (g: { width: number; west: number; dx: number }) => Math.floor((-128.001 - g.west) / g.dx);
  const eastCol = (g: { width: number; west: number; dx: number }) => Math.floor((-127.999 - g.west) / g.dx);

  for (const method of ['idw', 'kriging'] as const) {
    it(`${method}: the step is reproduced with the barrier and smeared without`, () => {
      const common = {
        method,
        grid: { bbox, size: [120, 100] as [number, number] },
        crossValidation: false,
        variogram: { model: 'exponential' as const, nugget: 0, partialSill: 600, rangeKm: 20 },
      };
      const withF = interpolateGrid(pts, { ...common, faults: fault });
      const without = interpolateGrid(pts, common);
      const g = withF.grid;
      const row = 50;
      const w = g.values[row * g.width + westCol(g)],
        e = g.values[row * g.width + eastCol(g)];
      expect(w).toBeCloseTo(40, 6);
      expect(e).toBeCloseTo(90, 6);
      const w0 = without.grid.values[row * g.width + westCol(g)],
        e0 = without.grid.values[row * g.width + eastCol(g)];
      expect(w0).toBeGreaterThan(45); // smeared: both sides pulled towards the other
      expect(e0).toBeLessThan(85);
    });
  }

  it('cross-validation with the barrier predicts each site from its own side only', () => {
    const r = predictAtPoints(
      pts,
      { method: 'kriging', variogram: { model: 'exponential', nugget: 0, partialSill: 600, rangeKm: 20 }, faults: fault },
      { ids: ['t'], lon: [-128.001], lat: [-38] },
    );
    expect(r.predictions[0].value).toBeCloseTo(40, 6);
    expect(r.crossValidation!.rmse).toBeLessThan(1e-6);
    const noF = predictAtPoints(
      pts,
      { method: 'kriging', variogram: { model: 'exponential', nugget: 0, partialSill: 600, rangeKm: 20 } },
      { ids: ['t'], lon: [-128.001], lat: [-38] },
    );
    expect(noF.crossValidation!.rmse).toBeGreaterThan(1);
  });
});
