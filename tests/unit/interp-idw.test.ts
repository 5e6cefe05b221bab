import { describe, it, expect } from 'vitest';
import turfInterpolate from '@turf/interpolate';
import { IdwPredictor } from '../../shared/interp/idw.ts';
import { NeighbourIndex } from '../../shared/interp/neighbours.ts';
import { interpolateGrid, DEFAULT_QUALITY_WEIGHTS } from '../../shared/interp/interpolate.ts';
import { prng } from '../helpers/prng.ts';

describe('IDW agrees with @turf/interpolate (all points) on the same points and cells', () => {
  // turf measures great-circle (haversine) distance on a sphere of radius 6371.0088 km. Near the equator, over
  // 0.2°, the equirectangular plane x = Rλ, y = Rφ has the same distances to about 1e-6 relative, so both
  // libraries run with the same metric and differ only by that.
  const R = 6371.0088;
  const r = prng(42);
  const n = 60;
  const lon: number[] = [],
    lat: number[] = [],
    val: number[] = [];
  for (let i = 0; i < n; i++) {
    lon.push(r() * 0.2);
    lat.push(r() * 0.2);
    val.push(40 + 60 * r());
  }
  const fc = {
    type: 'FeatureCollection' as const,
    features: lon.map((x, i) => ({ type: 'Feature' as const, geometry: { type: 'Point' as const, coordinates: [x, lat[i]] }, properties: { q: val[i] } })),
  };
  const x = Float64Array.from(lon, (v) => (R * v * Math.PI) / 180);
  const y = Float64Array.from(lat, (v) => (R * v * Math.PI) / 180);
  const z = Float64Array.from(val);

  for (const power of [1, 2, 3]) {
    it(`power ${power}: within 1e-5 relative at every cell away from the data`, () => {
      const ref = turfInterpolate(fc, 1, { gridType: 'point', property: 'q', units: 'kilometers', weight: power });
      const idw = new IdwPredictor(x, y, z, { power, neighbors: Infinity });
      let compared = 0;
      for (const f of ref.features) {
        const [qlon, qlat] = f.geometry.coordinates;
        const qx = (R * qlon * Math.PI) / 180,
          qy = (R * qlat * Math.PI) / 180;
        let dmin = Infinity;
        for (let i = 0; i < n; i++) dmin = Math.min(dmin, Math.hypot(x[i] - qx, y[i] - qy));
        if (dmin < 0.05) continue; // turf has no exact-hit branch (NaN there); compare away from data points
        const v = idw.predict(qx, qy);
        expect(Math.abs(v - (f.properties as { q: number }).q) / v).toBeLessThan(1e-5);
        compared++;
      }
      expect(compared).toBeGreaterThan(300);
    });
  }
});

describe('IDW invariants', () => {
  const r = prng(5);
  const n = 300;
  const x = new Float64Array(n),
    y = new Float64Array(n),
    z = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = r() * 100;
    y[i] = r() * 100;
    z[i] = 30 + 90 * r();
  }
  let zmin = Infinity,
    zmax = -Infinity;
  for (const v of z) {
    zmin = Math.min(zmin, v);
    zmax = Math.max(zmax, v);
  }

  it('stays within [min, max] of the data (convex combination)', () => {
    const idw = new IdwPredictor(x, y, z, { power: 2, neighbors: 12 });
    for (let t = 0; t < 2000; t++) {
      const v = idw.predict(-20 + r() * 140, -20 + r() * 140);
      expect(v).toBeGreaterThanOrEqual(zmin);
      expect(v).toBeLessThanOrEqual(zmax);
    }
  });

  it('is exact at data points, never NaN (Shepard 1968: û(xᵢ) = uᵢ)', () => {
    const idw = new IdwPredictor(x, y, z, { power: 2, neighbors: 12 });
    const all = new IdwPredictor(x, y, z, { power: 2, neighbors: Infinity });
    for (let i = 0; i < n; i += 11) {
      expect(idw.predict(x[i], y[i])).toBe(z[i]);
      expect(all.predict(x[i], y[i])).toBe(z[i]);
    }
  });

  it('k-nearest search returns the same set as brute force', () => {
    const index = new NeighbourIndex(x, y);
    const ids = new Int32Array(12),
      d2 = new Float64Array(12);
    for (let t = 0; t < 200; t++) {
      const qx = r() * 100,
        qy = r() * 100;
      const m = index.nearest(qx, qy, 12, Infinity, ids, d2);
      const brute = Array.from({ length: n }, (_, i) => [i, (x[i] - qx) ** 2 + (y[i] - qy) ** 2])
        .sort((a, b) => a[1] - b[1])
        .slice(0, 12);
      expect(m).toBe(12);
      expect(Array.from(ids)).toEqual(brute.map((b) => b[0]));
      const rad = Math.sqrt(brute[5][1]) * (1 + 1e-12); // a hair above the 6th distance (sqrt round-off)
      expect(index.nearest(qx, qy, 12, rad, ids, d2)).toBe(6); // only the points within the radius
    }
  });

  it('quality multipliers pull the estimate towards high-quality points (weights high 1, medium 0.5, low 0.25)', () => {
    expect(DEFAULT_QUALITY_WEIGHTS).toEqual({ high: 1, medium: 0.5, low: 0.25 }); // project choice, common practice
    const xs = Float64Array.from([0, 2]),
      ys = Float64Array.from([0, 0]),
      zs = Float64Array.from([10, 20]);
    const plain = new IdwPredictor(xs, ys, zs, { power: 2, neighbors: Infinity });
    const weighted = new IdwPredictor(xs, ys, zs, { power: 2, neighbors: Infinity, pointWeights: Float64Array.from([1, 0.25]) });
    expect(plain.predict(1, 0)).toBeCloseTo(15, 12);
    expect(weighted.predict(1, 0)).toBeCloseTo((10 * 1 + 20 * 0.25) / 1.25, 12); // Σqᵢwᵢuᵢ / Σqᵢwᵢ
  });

  it('library grid: results unchanged by a translation of the whole data set in longitude', () => {
    const pts = (dlon: number) => ({
      ids: Array.from({ length: 80 }, (_, i) => `p${i}`),
      lon: Float64Array.from({ length: 80 }, (_, i) => -128 + dlon + (i % 9) * 0.05 + ((i * 7) % 5) * 0.011),
      lat: Float64Array.from({ length: 80 }, (_, i) => -38 + Math.floor(i / 9) * 0.05 + ((i * 3) % 7) * 0.007),
      values: Float64Array.from({ length: 80 }, (_, i) => 50 + (i % 13) * 2),
    });
    const a = interpolateGrid(pts(0), { method: 'idw', grid: { size: [20, 20] }, crossValidation: false });
    const b = interpolateGrid(pts(3), { method: 'idw', grid: { size: [20, 20] }, crossValidation: false });
    for (let i = 0; i < a.grid.values.length; i++) expect(b.grid.values[i]).toBeCloseTo(a.grid.values[i], 4);
  });
});
