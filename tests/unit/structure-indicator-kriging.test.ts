import { describe, it, expect } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { prng } from '../helpers/prng.ts';
import { IndicatorField, correctOrderRelations } from '../../shared/structure/index.ts';
import { variogramsText } from '../../shared/structure/indicator-variograms.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';

/** Spherical covariance, practical-range form (Isaaks & Srivastava 1989, ch. 16): C(0) = c0 + c, C(h) = c(1 − 1.5h/a + 0.5h³/a³), 0 beyond a. */
function sphericalCov(m: VariogramModel, h: number): number {
  if (h === 0) return m.nugget + m.partialSill;
  if (h >= m.rangeKm) return 0;
  const r = h / m.rangeKm;
  return m.partialSill * (1 - 1.5 * r + 0.5 * r * r * r);
}

/** Segment a–b properly crosses c–d (strict orientation test, written independently of the engine). */
function crosses(ax: number, ay: number, bx: number, by: number, cx: number, cy: number, dx: number, dy: number): boolean {
  const o = (px: number, py: number, qx: number, qy: number, rx: number, ry: number) => Math.sign((qx - px) * (ry - py) - (qy - py) * (rx - px));
  return o(cx, cy, dx, dy, ax, ay) * o(cx, cy, dx, dy, bx, by) < 0 && o(ax, ay, bx, by, cx, cy) * o(ax, ay, bx, by, dx, dy) < 0;
}

/** Dense ordinary kriging of indicator values z at (qx, qy) over points `ids`: the full (n+1)² system solved by ml-matrix (LU). */
function denseOk(x: ArrayLike<number>, y: ArrayLike<number>, z: number[], ids: number[], m: VariogramModel, qx: number, qy: number): number {
  const n = ids.length;
  const K = Matrix.zeros(n + 1, n + 1),
    rhs = Matrix.zeros(n + 1, 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) K.set(i, j, sphericalCov(m, Math.hypot(x[ids[i]] - x[ids[j]], y[ids[i]] - y[ids[j]])));
    K.set(i, n, 1);
    K.set(n, i, 1);
    rhs.set(i, 0, sphericalCov(m, Math.hypot(x[ids[i]] - qx, y[ids[i]] - qy)));
  }
  rhs.set(n, 0, 1);
  const sol = solve(K, rhs);
  let est = 0;
  for (let i = 0; i < n; i++) est += sol.get(i, 0) * z[ids[i]];
  return est;
}

function data(n: number, seed: number) {
  const rnd = prng(seed);
  const x = new Float64Array(n),
    y = new Float64Array(n),
    lo = new Int8Array(n),
    hi = new Int8Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = 40 * rnd();
    y[i] = 40 * rnd();
    // A grade rising to the east with noise; every seventh sample known only as a range of two zones.
    const r = Math.max(0, Math.min(5, Math.floor(x[i] / 7 + 1.2 * (rnd() - 0.5))));
    lo[i] = r;
    hi[i] = i % 7 === 0 ? Math.min(5, r + 1) : r;
  }
  return { x, y, lo, hi };
}

describe('indicator kriging', () => {
  const model: VariogramModel = { model: 'spherical', nugget: 0.02, partialSill: 0.2, rangeKm: 18 };

  it('each indicator equals a dense ordinary-kriging solve of the same indicators (global neighbourhood), after the order correction', () => {
    const { x, y, lo, hi } = data(70, 3);
    const field = new IndicatorField(x, y, lo, hi, { variogram: model, neighbors: 1000 });
    const rnd = prng(9);
    const out = new Float64Array(5);
    for (let t = 0; t < 25; t++) {
      const qx = 40 * rnd(),
        qy = 40 * rnd();
      field.predict(qx, qy, out);
      const ref: number[] = [];
      for (let j = 1; j <= 5; j++) {
        const ids: number[] = [],
          z: number[] = new Array(70).fill(NaN);
        for (let i = 0; i < 70; i++) {
          if (lo[i] >= j) {
            ids.push(i);
            z[i] = 1;
          } else if (hi[i] < j) {
            ids.push(i);
            z[i] = 0;
          }
        }
        ref.push(denseOk(x, y, z, ids, model, qx, qy));
      }
      correctOrderRelations(ref);
      for (let j = 0; j < 5; j++) expect(out[j]).toBeCloseTo(ref[j], 9);
    }
  });

  it('honours a fault barrier: only samples on the same side enter the dense solve', () => {
    const { x, y, lo, hi } = data(60, 5);
    const fault = new Float64Array([20, -10, 21, 50]);
    const field = new IndicatorField(x, y, lo, hi, { variogram: model, neighbors: 1000, faults: fault });
    const rnd = prng(4);
    const out = new Float64Array(5);
    for (let t = 0; t < 20; t++) {
      const qx = 40 * rnd(),
        qy = 40 * rnd();
      field.predict(qx, qy, out);
      const ref: number[] = [];
      for (let j = 1; j <= 5; j++) {
        const ids: number[] = [],
          z: number[] = new Array(60).fill(NaN);
        for (let i = 0; i < 60; i++) {
          if (crosses(qx, qy, x[i], y[i], fault[0], fault[1], fault[2], fault[3])) continue;
          if (lo[i] >= j) {
            ids.push(i);
            z[i] = 1;
          } else if (hi[i] < j) {
            ids.push(i);
            z[i] = 0;
          }
        }
        ref.push(ids.length > 0 ? denseOk(x, y, z, ids, model, qx, qy) : NaN);
      }
      correctOrderRelations(ref);
      for (let j = 0; j < 5; j++) expect(out[j]).toBeCloseTo(ref[j], 9);
    }
  });

  it('order relations: clip to [0, 1], then the mean of the upward and downward passes (Deutsch & Journel 1998, §IV.1.9)', () => {
    // Worked by hand: clip → [0.8, 0.9, 0.3, 0.4, 0]; running minimum → [0.8, 0.8, 0.3, 0.3, 0];
    // running maximum from the end → [0.9, 0.9, 0.4, 0.4, 0]; mean → [0.85, 0.85, 0.35, 0.35, 0].
    const p = [0.8, 0.9, 0.3, 0.4, -0.1];
    correctOrderRelations(p);
    p.forEach((v, i) => expect(v).toBeCloseTo([0.85, 0.85, 0.35, 0.35, 0][i], 12));
    const ok = [1, 0.7, 0.5, 0.2, 0];
    correctOrderRelations(ok);
    expect(ok).toEqual([1, 0.7, 0.5, 0.2, 0]);
  });

  it("fits each boundary's indicator variogram when data suffice, else takes the median-indicator variogram", () => {
    const { x, y, lo, hi } = data(300, 8);
    const field = new IndicatorField(x, y, lo, hi, {});
    const v = field.variograms;
    expect(v.length).toBe(5);
    for (const q of v) {
      expect(q).not.toBeNull();
      expect(q!.model.partialSill).toBeGreaterThan(0);
      expect(['fitted', 'median-indicator']).toContain(q!.source);
    }
    expect(v.some((q) => q!.source === 'fitted')).toBe(true);
    const few = data(25, 2);
    const small = new IndicatorField(few.x, few.y, few.lo, few.hi, {});
    for (const q of small.variograms) if (q !== null) expect(q.source).not.toBe('fitted');
    // The method's words name what each isograd took.
    expect(variogramsText(v)).toMatch(/^its own fitted spherical indicator variogram for [a-z-]+/);
  });

  it('a given variogram is used for every isograd and reported as given, not as the median-indicator one', () => {
    const { x, y, lo, hi } = data(300, 8);
    const field = new IndicatorField(x, y, lo, hi, { variogram: model });
    for (const q of field.variograms) {
      expect(q!.source).toBe('given');
      expect(q!.model).toEqual(model);
    }
    expect(variogramsText(field.variograms)).toBe('the given spherical variogram for every isograd (nugget 0.02, partial sill 0.2, range 18 km)');
  });
});
