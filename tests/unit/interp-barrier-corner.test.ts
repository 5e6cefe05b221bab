import { describe, it, expect } from 'vitest';
import { computeRows, createGridRuntime, hiddenCellMask, type GridPlan } from '../../shared/interp/gridKernel.ts';
import { localProjectionAt } from '../../shared/interp/projection.ts';
import { rowStatsWarnings } from '../../shared/interp/interpolate.ts';
import { cellMaskGeometry } from '../../shared/grid/cell-mask-outline.ts';

/**
 * A fault that cuts off a corner of the grid, worked by hand. The grid is given in the local km projection itself
 * (20 × 20 cells of 1 km, x east 0–20, y north 0–20), so fault pieces and paths are exactly straight. The fault
 * runs along x + y = 30.25 and reaches far past the grid (from (−500, 530.25) to (530.25, −500)), so no path from
 * one side to the other passes round its ends. A cell centre (i + ½, j + ½) lies behind it (south-east) when
 * i + j + 1 > 30.25, i.e. i + j ≥ 30 with i, j ≤ 19: 11 + 10 + … + 1 − (the pairs with i + j ≥ 30 only) =
 * Σ_{s=30}^{38} (39 − s) = 9 + 8 + … + 1 = 45 cells. No centre is within 0.17 km of the trace, so round-off
 * decides nothing.
 * - No data behind (sites only in front, x + y ≤ 28): the barrier rule (a datum informs a location only when the
 *   straight path between them crosses no fault trace: docs/sources.md#fault-barriers) leaves those 45 cells with
 *   no datum at all: no value, counted as "no data visible across faults", never as "beyond the search radius".
 * - One site behind, A = (17.3, 17.6), z_A = 120: each of the 45 cells sees A alone; ordinary kriging from one
 *   datum has λ_A = 1 (the weights sum to 1), so the estimate is z_A and the variance 2γ(h), h = |x₀ − A|
 *   (the variance of an increment by the definition of the semivariogram, Matheron 1963), spherical γ with sill 1
 *   and range 20 km: γ(h) = 1.5·h/20 − 0.5·(h/20)³ (Isaaks & Srivastava 1989, eq. 16.4). IDW from one datum gives
 *   z_A. Cells in front never see A, so their values do not change at all.
 */
const proj = localProjectionAt(-128, -38);
const front: [number, number][] = [];
for (let a = 0; a < 7; a++) for (let b = 0; b < 7; b++) if (1 + 3 * a + 1 + 3 * b <= 28) front.push([1 + 3 * a, 1 + 3 * b]);
const A: [number, number] = [17.3, 17.6];
const fault = Float64Array.of(-500, 530.25, 530.25, -500);

function plan(method: 'kriging' | 'idw', sites: [number, number][], opts: Partial<GridPlan> = {}): GridPlan {
  return {
    key: `corner-${method}-${sites.length}-${opts.radiusKm ?? 'inf'}`,
    method,
    x: Float64Array.from(sites, (s) => s[0]),
    y: Float64Array.from(sites, (s) => s[1]),
    z: Float64Array.from(sites, (s) => (s[0] === A[0] && s[1] === A[1] ? 120 : 50 + s[0] - 0.5 * s[1])),
    pointWeights: null,
    errorVariance: null,
    projection: proj,
    grid: { width: 20, height: 20, west: 0, north: 20, dx: 1, dy: 1, crs: 'local km' },
    gridCrsDef: proj.def,
    neighbors: 16,
    radiusKm: Infinity,
    power: 2,
    variogram: { model: 'spherical', nugget: 0, partialSill: 1, rangeKm: 20 },
    anisotropy: null,
    faults: fault,
    maxDistanceKm: null,
    region: null,
    withSd: method === 'kriging',
    maxGlobal: 5000,
    ...opts,
  };
}

function fill(p: GridPlan) {
  const rt = createGridRuntime(p);
  const values = new Float64Array(400),
    sd = new Float64Array(400);
  const stats = computeRows(rt, 0, 20, values, sd);
  return { values, sd, stats, hidden: hiddenCellMask(rt, values) };
}

/** Row-major cell index of column i (east) and row-from-the-south j. */
const cell = (i: number, j: number) => (19 - j) * 20 + i;
const behind = (i: number, j: number) => i + j >= 30;
const gammaSph = (h: number) => (h >= 20 ? 1 : 1.5 * (h / 20) - 0.5 * (h / 20) ** 3);

describe('a fault cutting off a corner of the grid', () => {
  for (const method of ['kriging', 'idw'] as const) {
    it(`${method}: with no data behind it, exactly the 45 cells behind have no value and are counted as no data visible across faults`, () => {
      const r = fill(plan(method, front));
      let nan = 0;
      for (let i = 0; i < 20; i++)
        for (let j = 0; j < 20; j++) {
          const v = r.values[cell(i, j)];
          expect(Number.isNaN(v)).toBe(behind(i, j));
          expect(r.hidden[cell(i, j)]).toBe(behind(i, j) ? 1 : 0);
          if (Number.isNaN(v)) nan++;
        }
      expect(nan).toBe(45);
      expect(r.stats.empty).toBe(45);
      expect(r.stats.hidden).toBe(45);
      const w = rowStatsWarnings(r.stats);
      expect(w.some((s) => s.startsWith('45 cell(s) see no data across faults'))).toBe(true);
      expect(w.some((s) => /search radius/.test(s))).toBe(false);
    });

    it(`${method}: with one site behind it, every cell behind takes that site's value and the cells in front do not change`, () => {
      const without = fill(plan(method, front));
      const r = fill(plan(method, [...front, A]));
      expect(r.stats.empty).toBe(0);
      expect(r.stats.hidden).toBe(0);
      for (let i = 0; i < 20; i++)
        for (let j = 0; j < 20; j++) {
          const k = cell(i, j);
          if (!behind(i, j)) {
            expect(r.values[k]).toBe(without.values[k]);
            continue;
          }
          expect(r.values[k]).toBeCloseTo(120, 9);
          if (method === 'kriging') {
            const h = Math.hypot(i + 0.5 - A[0], j + 0.5 - A[1]);
            expect(r.sd[k] ** 2).toBeCloseTo(2 * gammaSph(h), 9);
          }
        }
    });
  }

  it('tells cells behind a fault from cells out of the search radius', () => {
    // Radius 4 km: a cell sees the sites within 4 km on its side of the fault. A cell with sites within 4 km, all
    // across the fault, is "no data visible across faults"; a cell with no site within 4 km is out of reach (here 5 cells of each kind).
    const p = plan('kriging', [...front, A], { radiusKm: 4 });
    const r = fill(p);
    let hidden = 0,
      out = 0;
    for (let i = 0; i < 20; i++)
      for (let j = 0; j < 20; j++) {
        const cx = i + 0.5,
          cy = j + 0.5;
        const near = (s: [number, number]) => Math.hypot(s[0] - cx, s[1] - cy) <= 4;
        const sees = behind(i, j) ? near(A) : front.some(near);
        const anyNear = near(A) || front.some(near);
        expect(Number.isNaN(r.values[cell(i, j)])).toBe(!sees);
        if (!sees && anyNear) hidden++;
        if (!anyNear) out++;
      }
    expect(hidden).toBe(5);
    expect(out).toBe(5);
    expect(r.stats.hidden).toBe(hidden);
    expect(r.stats.empty).toBe(hidden + out);
    expect(r.hidden.reduce((s, v) => s + v, 0)).toBe(hidden);
  });

  it('outlines the 45 cells as one area: a triangle of row runs whose outline follows the cell edges', () => {
    const r = fill(plan('kriging', front));
    const g = cellMaskGeometry(r.hidden, { width: 20, height: 20, west: 0, north: 20, dx: 1, dy: 1 }, (x, y) => [x, y]);
    expect(g.cells).toBe(45);
    // Rows j = 11..19 (from the south: the run of row j is i = 30 − j..19): 9 distinct runs, so 9 rectangles,
    // whose areas sum to the 45 cells.
    expect(g.area.coordinates.length).toBe(9);
    const area = g.area.coordinates.reduce((s, [ring]) => s + (ring[2][0] - ring[0][0]) * (ring[0][1] - ring[1][1]), 0);
    expect(area).toBe(45);
    // Outline length: the staircase (9 risers and 9 treads of 1 km) plus the grid edges (9 km east, 9 km north).
    const len = g.outline.coordinates.reduce((s, [a, b]) => s + Math.hypot(b[0] - a[0], b[1] - a[1]), 0);
    expect(len).toBe(36);
  });
});
