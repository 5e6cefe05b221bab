/**
 * Heat in place per unit area as a function of surface heat flow, tabulated once per Monte Carlo realization (and
 * per model zone), so each cell costs one table lookup instead of a column solve and a quadrature.
 *
 * Within a realization the model is fixed, so G(q) = ∫(T − Tref) dz, h(q) and X(q) (column-heat.ts) depend on the
 * surface heat flow q alone. They are analytic in q except where the integration domain changes shape: where the
 * Tmin isotherm crosses the window top, the window bottom or a layer boundary inside it (T(d; q) = Tmin, found by
 * bisection: T at a fixed depth increases with q), and where the column starts to be exhausted at those depths
 * (q = ∫₀ᵈ A dz). Those heat flows split [qLo, qHi] into segments; each segment carries uniform nodes and is
 * interpolated by the local four-point (cubic Lagrange) rule, whose stencil never crosses a segment end, so the
 * interpolation error is O(h⁴) of a smooth function (the tests bound it against direct evaluation).
 */
import { cubicLagrange } from '../interp/lagrange.ts';
import type { CompiledModel } from '../thermal/compile.ts';
import type { ColumnState } from '../thermal/column.ts';
import { columnHeatFlow, columnTemperature, solveColumn } from '../thermal/column.ts';
import type { ColumnHeatScratch } from './column-heat.ts';
import { columnHeat, emptyColumnHeat, type HeatWindow } from './column-heat.ts';

export interface HeatTable {
  /** Covered heat-flow range, mW/m². */
  qLo: number;
  qHi: number;
  /** Segment ends (length nSeg + 1), mW/m². */
  ends: Float64Array;
  /** First node of each segment, node spacing and number of intervals. */
  firstNode: Int32Array;
  step: Float64Array;
  intervals: Int32Array;
  /** Node values, three per node: G (K·m), X (K·m), h (m). */
  values: Float64Array;
}

export interface HeatTableOptions {
  /** Total number of nodes over the range (default 256). */
  nodes?: number;
}

/** q at which T(depth; q) = tC, bisection in [lo, hi]; NaN when not crossed inside. */
function heatFlowForTemperature(cm: CompiledModel, t0: number, depthKm: number, tC: number, lo: number, hi: number, st: ColumnState): number {
  const f = (q: number) => {
    solveColumn(cm, q, t0, st);
    const t = columnTemperature(cm, st, depthKm);
    return t === t ? t - tC : -1; // an invalid column at that depth is a cold one
  };
  if (f(lo) >= 0 || f(hi) < 0) return NaN;
  for (let it = 0; it < 200; it++) {
    const mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (f(mid) >= 0) hi = mid;
    else lo = mid;
  }
  return hi;
}

/** Builds the table of one compiled model (surface temperature t0 °C) over [qLo, qHi] mW/m². */
export function buildHeatTable(
  cm: CompiledModel,
  t0: number,
  w: HeatWindow,
  qLo: number,
  qHi: number,
  st: ColumnState,
  sc: ColumnHeatScratch,
  opts: HeatTableOptions = {},
): HeatTable {
  if (!(qLo > 0 && qHi > qLo)) throw new RangeError(`heat-flow table range must satisfy 0 < qLo < qHi, got ${qLo}, ${qHi}`);
  const total = opts.nodes ?? 256;
  if (!(Number.isInteger(total) && total >= 8)) throw new RangeError(`table nodes must be an integer ≥ 8, got ${total}`);
  const depths = [w.topKm, w.bottomKm];
  for (let i = 1; i < cm.nLayers; i++) if (cm.topKm[i] > w.topKm && cm.topKm[i] < w.bottomKm) depths.push(cm.topKm[i]);
  const cuts: number[] = [];
  for (const d of depths) {
    const qt = heatFlowForTemperature(cm, t0, d, w.minTempC, qLo, qHi, st);
    if (qt === qt) cuts.push(qt);
    const qe = -columnHeatFlow(cm, 0, d); // heat produced above d: below it the column is exhausted at d
    if (qe > qLo && qe < qHi) cuts.push(qe);
  }
  cuts.sort((a, b) => a - b);
  const tol = 1e-9 * qHi;
  const ends = [qLo];
  for (const c of cuts) if (c - ends[ends.length - 1] > tol && qHi - c > tol) ends.push(c);
  ends.push(qHi);
  const nSeg = ends.length - 1;
  const span = qHi - qLo;
  const firstNode = new Int32Array(nSeg),
    step = new Float64Array(nSeg),
    intervals = new Int32Array(nSeg);
  let nodes = 0;
  for (let s = 0; s < nSeg; s++) {
    const m = Math.max(3, Math.round((total * (ends[s + 1] - ends[s])) / span));
    firstNode[s] = nodes;
    intervals[s] = m;
    step[s] = (ends[s + 1] - ends[s]) / m;
    nodes += m + 1;
  }
  const values = new Float64Array(nodes * 3);
  const ch = emptyColumnHeat();
  for (let s = 0; s < nSeg; s++) {
    for (let j = 0; j <= intervals[s]; j++) {
      // The segment's last node is its end exactly (no rounding drift across the cut).
      const q = j === intervals[s] ? ends[s + 1] : ends[s] + j * step[s];
      columnHeat(cm, q, t0, w, st, sc, ch);
      const k = (firstNode[s] + j) * 3;
      values[k] = ch.heatKm;
      values[k + 1] = ch.exergyKm;
      values[k + 2] = ch.thicknessM;
    }
  }
  return { qLo, qHi, ends: Float64Array.from(ends), firstNode, step, intervals, values };
}

/**
 * Interpolated G, X, h at heat flow q (mW/m²) into out[0..2]; false (out untouched) when q is outside the table.
 * Nothing allocated.
 */
export function lookupHeatTable(t: HeatTable, q: number, out: Float64Array): boolean {
  if (!(q >= t.qLo && q <= t.qHi)) return false;
  const ends = t.ends;
  let s = 0;
  const last = ends.length - 2;
  while (s < last && q >= ends[s + 1]) s++;
  const m = t.intervals[s],
    h = t.step[s];
  const x = (q - ends[s]) / h;
  let j = Math.floor(x);
  if (j > m - 1) j = m - 1;
  let base = j - 1;
  if (base < 0) base = 0;
  if (base > m - 3) base = m - 3;
  // Cubic Lagrange on nodes base … base + 3 at offset u ∈ [0, 3] (three quantities interleaved: stride 3).
  const u = x - base;
  const k = (t.firstNode[s] + base) * 3;
  for (let c = 0; c < 3; c++) {
    const r = cubicLagrange(t.values, k + c, 3, u);
    out[c] = r > 0 ? r : 0;
  }
  return true;
}
