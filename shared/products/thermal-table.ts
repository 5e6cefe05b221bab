/**
 * The thermal grids of a large heat-flow grid by a table over surface heat flow.
 *
 * Within one zone the model and the surface temperature are fixed, so every product of a cell (depth to each
 * isotherm, temperature at each depth, basal heat flow, melt onset, wet-solidus depth, status bits) is a function of
 * its surface heat flow q alone. The table solves the column exactly (geothermGrid, the same call the per-cell path
 * makes) at n evenly spaced heat flows over the zone's range, and a cell is read by the local four-point (cubic
 * Lagrange) rule from the four nodes around its q. Those functions are smooth in q except where a product appears,
 * vanishes or changes its branch (an isotherm leaving the search depth, the melt onset appearing, a layer boundary,
 * the column exhausting): every interval is therefore checked when the table is built, at three points inside it
 * (a quarter, half and three quarters), against the exact solve there, and kept only when the four nodes share their
 * status bits and pattern of missing values and each product's interpolated value lies within a quarter of its
 * tolerance (TABLE_TOLERANCE × CHECK_MARGIN) of the exact one. A cell whose q falls in an interval that failed, or
 * outside the table, is solved exactly. The check samples each interval at those three points; it is not a proof of
 * a bound between them, so the margin of four is what keeps the reads between the samples inside the tolerance:
 * the error of a four-point rule is a smooth polynomial-like function of q within an interval whose nodes share
 * their branch, and a quarter at three samples leaves room for its peak between them (tested at 100,000 seeded
 * random heat flows on the demo model and on a steep one, tests/unit/products-thermal-table-dense.test.ts).
 * Results do not depend on how the grid is cut into rows: the table is built once per zone from the whole grid's
 * range.
 */
import { cubicLagrange } from '../interp/lagrange.ts';
import { geothermGrid, type CompiledModel, type GeothermGridOutput, type GeothermGridQuery } from '../thermal/index.ts';

/** Largest difference allowed between an interpolated and an exact product anywhere in an accepted interval. */
export const TABLE_TOLERANCE = { depthKm: 1e-5, temperatureC: 1e-4, heatFlowMWm2: 1e-6 } as const;

/** Share of TABLE_TOLERANCE an interval's sampled error may reach at its check points and still be accepted. */
export const CHECK_MARGIN = 0.25;

/** Which optional products the table carries (as in GeothermGridOutput). */
export interface TableProducts {
  basal: boolean;
  meltOnset: boolean;
  wetSolidus: boolean;
}

export interface GeothermTable {
  /** Heat flow of node j: qLo + j·step (mW/m²); n nodes. */
  qLo: number;
  step: number;
  n: number;
  /** Node values per product, in the order of `productBuffers`. */
  values: Float64Array[];
  /** Status bits per node. */
  status: Uint8Array;
  /** Per interval j (between nodes j and j + 1): the first node of its four-point stencil, or −1 when it failed. */
  base: Int32Array;
  /** Per failed interval: a finer table over it (or null: its cells are solved one by one). */
  children: Array<GeothermTable | null>;
}

/** Nodes of a finer table over a failed interval, and how many times tables are refined below the top one. */
export const REFINE_NODES = 32;
export const REFINE_LEVELS = 2;

/** The product buffers of a grid output in table order: isotherms, temperatures, then basal, melt onset, wet solidus. */
export function productBuffers(out: GeothermGridOutput): Array<Float32Array | Float64Array> {
  const list: Array<Float32Array | Float64Array> = [...out.isothermDepthKm, ...out.temperatureC];
  if (out.basalHeatFlowMWm2 !== undefined) list.push(out.basalHeatFlowMWm2);
  if (out.meltOnsetKm !== undefined) list.push(out.meltOnsetKm);
  if (out.wetSolidusKm !== undefined) list.push(out.wetSolidusKm);
  return list;
}

/** Output buffers of `length` cells (Float64) for a query and the optional products. */
function outputOf(query: GeothermGridQuery, p: TableProducts, length: number): GeothermGridOutput {
  const f = () => new Float64Array(length);
  return {
    isothermDepthKm: Array.from({ length: query.isothermsC.length }, f),
    temperatureC: Array.from({ length: query.depthsKm.length }, f),
    status: new Uint8Array(length),
    ...(p.basal ? { basalHeatFlowMWm2: f() } : {}),
    ...(p.meltOnset ? { meltOnsetKm: f() } : {}),
    ...(p.wetSolidus ? { wetSolidusKm: f() } : {}),
  };
}

/** The accepted sampled error per product in table order: TABLE_TOLERANCE × CHECK_MARGIN. */
function tolerances(query: GeothermGridQuery, p: TableProducts): Float64Array {
  const t: number[] = [];
  for (let k = 0; k < query.isothermsC.length; k++) t.push(TABLE_TOLERANCE.depthKm);
  for (let k = 0; k < query.depthsKm.length; k++) t.push(TABLE_TOLERANCE.temperatureC);
  if (p.basal) t.push(TABLE_TOLERANCE.heatFlowMWm2);
  if (p.meltOnset) t.push(TABLE_TOLERANCE.depthKm);
  if (p.wetSolidus) t.push(TABLE_TOLERANCE.depthKm);
  return Float64Array.from(t, (v) => v * CHECK_MARGIN);
}

/** Candidate first nodes of the four-point stencils around interval j (centred first), within a table of n nodes. */
function stencilBases(j: number, n: number): number[] {
  const out: number[] = [];
  for (const b of [j - 1, j - 2, j]) {
    const c = Math.min(Math.max(b, 0), n - 4);
    if (!out.includes(c)) out.push(c);
  }
  return out;
}

/** Four-point Lagrange interpolation of v at offset u ∈ [0, 3] from node b. */
function lagrange4(v: Float64Array, b: number, u: number): number {
  const u1 = u - 1,
    u2 = u - 2,
    u3 = u - 3;
  return ((-u1 * u2 * u3) / 6) * v[b] + ((u * u2 * u3) / 2) * v[b + 1] + ((-u * u1 * u3) / 2) * v[b + 2] + ((u * u1 * u2) / 6) * v[b + 3];
}

const CHECK_POINTS = [0.25, 0.5, 0.75];

/** Whether interval j passes with the stencil from node b: shared status and missing values, check points within `tol`. */
function intervalOk(t: GeothermTable, j: number, b: number, checks: Float64Array[], checkStatus: Uint8Array, tol: Float64Array): boolean {
  const s = t.status[j];
  for (let i = b; i < b + 4; i++) if (t.status[i] !== s) return false;
  for (let m = 0; m < CHECK_POINTS.length; m++) if (checkStatus[j * 3 + m] !== s) return false;
  for (let c = 0; c < t.values.length; c++) {
    const v = t.values[c];
    let missing = 0;
    for (let i = b; i < b + 4; i++) if (v[i] !== v[i]) missing++;
    if (missing !== 0 && missing !== 4) return false;
    for (let m = 0; m < CHECK_POINTS.length; m++) {
      const exact = checks[c][j * 3 + m];
      if (missing === 4) {
        if (exact === exact) return false;
        continue;
      }
      if (!(Math.abs(lagrange4(v, b, j - b + CHECK_POINTS[m]) - exact) <= tol[c])) return false;
    }
  }
  return true;
}

/**
 * Builds the table of one compiled model over [qLo, qHi] mW/m² with n ≥ 4 nodes (4n − 3 exact column solves), and
 * below each interval that fails its checks a table of REFINE_NODES nodes, `levels` times down.
 * `query` is the grid's (isotherms, depths, search depth); `p` the optional products asked for.
 */
export function buildGeothermTable(
  cm: CompiledModel,
  query: GeothermGridQuery,
  p: TableProducts,
  qLo: number,
  qHi: number,
  n: number,
  levels = REFINE_LEVELS,
): GeothermTable {
  if (!(Number.isInteger(n) && n >= 4)) throw new RangeError(`a heat-flow table needs an integer number of nodes ≥ 4, got ${n}`);
  if (!(Number.isFinite(qLo) && Number.isFinite(qHi) && qHi > qLo)) throw new RangeError(`heat-flow table range must satisfy qLo < qHi, got ${qLo}, ${qHi}`);
  const step = (qHi - qLo) / (n - 1);
  const nodes = Float64Array.from({ length: n }, (_, j) => qLo + j * step);
  const at = outputOf(query, p, n);
  geothermGrid(cm, nodes, query, at);
  const base = new Int32Array(n - 1).fill(-1);
  const t: GeothermTable = { qLo, step, n, values: productBuffers(at) as Float64Array[], status: at.status!, base, children: [] };
  const qc = new Float64Array((n - 1) * 3);
  for (let j = 0; j < n - 1; j++) for (let m = 0; m < 3; m++) qc[j * 3 + m] = qLo + (j + CHECK_POINTS[m]) * step;
  const check = outputOf(query, p, qc.length);
  geothermGrid(cm, qc, query, check);
  const checks = productBuffers(check) as Float64Array[];
  const tol = tolerances(query, p);
  for (let j = 0; j < n - 1; j++) {
    for (const b of stencilBases(j, n))
      if (intervalOk(t, j, b, checks, check.status!, tol)) {
        base[j] = b;
        break;
      }
    t.children.push(base[j] < 0 && levels > 0 ? buildGeothermTable(cm, query, p, nodes[j], nodes[j + 1], REFINE_NODES, levels - 1) : null);
  }
  return t;
}

/** Share of a table's heat-flow range read from it or its finer tables (the rest is solved per cell). */
export function tableCoverage(t: GeothermTable): number {
  let s = 0;
  for (let j = 0; j < t.base.length; j++) {
    const child = t.children[j];
    s += t.base[j] >= 0 ? 1 : child === null ? 0 : tableCoverage(child);
  }
  return s / t.base.length;
}

/**
 * Fills cells [start, end) of `out` from the zone tables (tables[zone] null: that zone per cell); cells the tables
 * cannot answer are solved exactly by geothermGrid in one batch. Nothing allocated per cell.
 */
export function geothermGridByTable(
  models: CompiledModel[],
  tables: Array<GeothermTable | null>,
  q: Float32Array | Float64Array,
  query: GeothermGridQuery,
  out: GeothermGridOutput,
  zones: Uint16Array | undefined,
  start: number,
  end: number,
): void {
  const dst = productBuffers(out);
  const status = out.status!;
  const rest = new Int32Array(end - start);
  let nRest = 0;
  for (let c = start; c < end; c++) {
    let t = tables[zones === undefined ? 0 : zones[c]];
    const qc = q[c];
    let x = NaN,
      j = -1,
      b = -1;
    // Down the finer tables until an interval that passed (b ≥ 0) or none is left.
    while (t !== null) {
      x = (qc - t.qLo) / t.step;
      j = Math.floor(x);
      if (!(j >= 0 && j < t.n - 1)) t = null;
      else if ((b = t.base[j]) >= 0) break;
      else t = t.children[j];
    }
    if (t === null) {
      rest[nRest++] = c;
      continue;
    }
    const u = x - b;
    for (let k = 0; k < dst.length; k++) dst[k][c] = cubicLagrange(t.values[k], b, 1, u);
    status[c] = t.status[j];
  }
  if (nRest > 0) solveCells(models, q, query, out, zones, rest.subarray(0, nRest));
}

/** Solves the listed cells exactly (gathered into one geothermGrid call) and scatters the results into `out`. */
function solveCells(
  models: CompiledModel[],
  q: Float32Array | Float64Array,
  query: GeothermGridQuery,
  out: GeothermGridOutput,
  zones: Uint16Array | undefined,
  cells: Int32Array,
): void {
  const m = cells.length;
  const gq = new Float64Array(m);
  const gz = zones === undefined ? undefined : new Uint16Array(m);
  for (let i = 0; i < m; i++) {
    gq[i] = q[cells[i]];
    if (gz !== undefined) gz[i] = zones![cells[i]];
  }
  const p = { basal: out.basalHeatFlowMWm2 !== undefined, meltOnset: out.meltOnsetKm !== undefined, wetSolidus: out.wetSolidusKm !== undefined };
  const g = outputOf(query, p, m);
  geothermGrid(models, gq, query, g, { zones: gz });
  const src = productBuffers(g),
    dst = productBuffers(out);
  for (let k = 0; k < dst.length; k++) for (let i = 0; i < m; i++) dst[k][cells[i]] = src[k][i];
  for (let i = 0; i < m; i++) out.status![cells[i]] = g.status![i];
}
