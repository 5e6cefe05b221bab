import { describe, it, expect } from 'vitest';
import proj4 from 'proj4';
import { Matrix, solve } from 'ml-matrix';
import { KrigingPredictor } from '../../shared/interp/kriging.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { rowCentresLocalKm, converter, localProjectionAt, loadCrsDefinition, WGS84_DEF, ROW_NODE_STEP } from '../../shared/interp/projection.ts';
import { prng } from '../helpers/prng.ts';

// The shortcuts that make continental grids affordable must not change a value:
//  - the k nearest neighbours chosen from a previous search's candidates are the true k nearest (checked against a
//    brute-force sort of every distance, ties broken by id);
//  - cell centres placed between exactly projected nodes agree with proj4 (a general-purpose reference library)
//    projecting every cell.

const MODEL: VariogramModel = { model: 'gaussian', nugget: 2, partialSill: 100, rangeKm: 60 };

/** The k nearest by brute force: every distance sorted, ties by id. */
function bruteNearest(x: Float64Array, y: Float64Array, qx: number, qy: number, k: number, radiusKm = Infinity): number[] {
  const all = Array.from(x, (_, i) => ({ i, d2: (x[i] - qx) ** 2 + (y[i] - qy) ** 2 })).filter((p) => p.d2 <= radiusKm * radiusKm);
  all.sort((a, b) => a.d2 - b.d2 || a.i - b.i);
  return all.slice(0, k).map((p) => p.i);
}

/** Ordinary kriging over the given neighbours, solved densely by ml-matrix (LU): [estimate, sd]. */
function denseOk(x: Float64Array, y: Float64Array, z: Float64Array, ids: number[], m: VariogramModel, qx: number, qy: number): [number, number] {
  const n = ids.length;
  const K = Matrix.zeros(n + 1, n + 1);
  const rhs = Matrix.zeros(n + 1, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) K.set(i, j, i === j ? m.nugget + m.partialSill : covariance(m, Math.hypot(x[ids[i]] - x[ids[j]], y[ids[i]] - y[ids[j]])));
    K.set(i, n, 1);
    K.set(n, i, 1);
    rhs.set(i, 0, covariance(m, Math.hypot(x[ids[i]] - qx, y[ids[i]] - qy)));
  }
  rhs.set(n, 0, 1);
  const sol = solve(K, rhs);
  let est = 0,
    lc = 0;
  for (let i = 0; i < n; i++) {
    est += sol.get(i, 0) * z[ids[i]];
    lc += sol.get(i, 0) * rhs.get(i, 0);
  }
  return [est, Math.sqrt(m.nugget + m.partialSill - lc - sol.get(n, 0))];
}

function field(n: number, seed: number, lattice: boolean) {
  const r = prng(seed);
  const x = new Float64Array(n),
    y = new Float64Array(n),
    z = new Float64Array(n);
  const side = Math.ceil(Math.sqrt(n));
  for (let i = 0; i < n; i++) {
    // A lattice puts many points at exactly equal distances from the queries below: the tie-breaking case.
    x[i] = lattice ? 10 * (i % side) : 400 * r();
    y[i] = lattice ? 10 * Math.floor(i / side) : 300 * r();
    z[i] = 60 + 15 * Math.sin(x[i] / 40) + 10 * Math.cos(y[i] / 55) + 3 * (r() - 0.5);
  }
  return { x, y, z };
}

describe("k nearest from the last search's candidates (grid rows)", () => {
  for (const c of [
    { name: 'scattered points', lattice: false, radiusKm: Infinity },
    { name: 'scattered points, 25 km search radius', lattice: false, radiusKm: 25 },
    { name: 'points on a lattice (exact ties)', lattice: true, radiusKm: Infinity },
  ]) {
    it(`${c.name}: estimates and sd equal a fresh search at every cell and a dense solve over the brute-force neighbours`, () => {
      const { x, y, z } = field(1500, 5, c.lattice);
      const k = 16;
      const rowWise = new KrigingPredictor(x, y, z, MODEL, { neighbors: k, radiusKm: c.radiusKm });
      const fresh = new KrigingPredictor(x, y, z, MODEL, { neighbors: k, radiusKm: c.radiusKm });
      const a = new Float64Array(2),
        b = new Float64Array(2);
      let cells = 0,
        checked = 0;
      // Rows of 1 km cells (lattice spacing 10 km: cell centres at 5 km offsets tie exactly).
      for (let row = 0; row < 40; row++) {
        for (let col = 0; col < 390; col++) {
          const qx = col + (c.lattice ? 0 : 0.5),
            qy = 20 + row * 5 + (c.lattice ? 0 : 0.37);
          const n = rowWise.predict(qx, qy, a, true);
          fresh.resetCache();
          const nf = fresh.predict(qx, qy, b, true);
          expect(n).toBe(nf);
          if (n > 0) {
            expect(a[0]).toBe(b[0]);
            expect(a[1]).toBe(b[1]);
          }
          cells++;
          if (cells % 53 === 0) {
            const ids = bruteNearest(x, y, qx, qy, k, c.radiusKm);
            expect(n).toBe(ids.length);
            if (ids.length > 0) {
              const [est, sd] = denseOk(x, y, z, ids, MODEL, qx, qy);
              expect(Math.abs(a[0] - est)).toBeLessThan(1e-8 * Math.abs(est));
              expect(Math.abs(a[1] - sd)).toBeLessThan(1e-7 * sd + 1e-9);
              checked++;
            }
          }
        }
      }
      expect(checked).toBeGreaterThan(250);
    });
  }
});

describe('row cell centres between exactly projected nodes', () => {
  for (const c of [
    {
      name: 'lon/lat grid 40° × 33°, 0.01° cells, southern mid-latitudes',
      crs: 'EPSG:4326',
      lon0: -132,
      lat0: -33,
      grid: { width: 4001, height: 6, west: -152, north: -16.5, dx: 0.01, dy: 6.6 },
    },
    { name: 'lon/lat grid at 70° N', crs: 'EPSG:4326', lon0: 20, lat0: 70, grid: { width: 3003, height: 4, west: 0, north: 78, dx: 0.0133, dy: 4 } },
    {
      name: 'projected grid (EPSG:3413, polar stereographic), 1 km cells',
      crs: 'EPSG:3413',
      lon0: -45,
      lat0: 75,
      grid: { width: 2501, height: 4, west: -1250000, north: 1000000, dx: 1000, dy: 500000 },
    },
  ]) {
    it(`${c.name}: every cell within 1e-8 km (10 µm) of proj4`, async () => {
      const def = await loadCrsDefinition(c.crs);
      const local = localProjectionAt(c.lon0, c.lat0);
      const toLocal = converter(def, local.def);
      const ref = proj4(def === WGS84_DEF ? 'WGS84' : def, local.def);
      const g = { ...c.grid, crs: c.crs };
      const X = new Float64Array(g.width),
        Y = new Float64Array(g.width);
      let worst = 0;
      for (let r = 0; r < g.height; r++) {
        rowCentresLocalKm(g, toLocal, r, X, Y);
        const yc = g.north - (r + 0.5) * g.dy;
        for (let col = 0; col < g.width; col++) {
          const q = ref.forward([g.west + (col + 0.5) * g.dx, yc]);
          worst = Math.max(worst, Math.abs(q[0] - X[col]), Math.abs(q[1] - Y[col]));
          if (col % ROW_NODE_STEP === 0 || col === g.width - 1) {
            expect(X[col]).toBe(q[0]);
            expect(Y[col]).toBe(q[1]);
          }
        }
      }
      expect(worst).toBeLessThan(1e-8);
    });
  }
});
