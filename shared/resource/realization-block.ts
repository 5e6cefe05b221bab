/**
 * The inner loops of a heat-in-place realization over one block of cells (monte-carlo.ts: resourceRange), run
 * cells × realizations times: `lookupBlock` draws each cell's heat flow and reads its column integrals from the
 * realization's heat-flow table (cubic interpolation, lookupHeatTable of heat-table.ts), `accumulateBlock`
 * turns them into densities and adds them to the sums of the grid, the polygon and the zones, in cell order.
 */
import { cellNormal } from '../thermal/monte-carlo.ts';
import { lookupHeatTable, type HeatTable } from './heat-table.ts';
import { SUM_QUANTITIES, type Floats } from './resource-spec.ts';

/** Where one realization's heat flow comes from: the simulated field, or q + sd·z (z keyed per cell or one per realization). */
export interface HeatFlowDraw {
  q: Floats;
  sd: Floats | undefined;
  /** Simulated fields (realization-major) and this realization's offset into them. */
  sims: Float32Array | undefined;
  simOff: number;
  /** Seed of the per-cell normals of independent errors; NaN for fully correlated ones (then `zr`). */
  seedIndependent: number;
  r: number;
  zr: number;
}

/**
 * Column integrals of cells [b0, b1) in one realization into g (G, K·m), x (X, K·m) and h (hot thickness, m), at
 * index c − b0; NaN in g for a cell without heat flow. `fallback(zone, q, o)` integrates a heat flow outside the
 * table exactly into o[0..2].
 */
export function lookupBlock(
  tabs: HeatTable[],
  d: HeatFlowDraw,
  zones: Uint8Array | Uint16Array | Uint32Array | undefined,
  b0: number,
  b1: number,
  out: { g: Float64Array; x: Float64Array; h: Float64Array },
  fallback: (zi: number, q0: number, o: Float64Array) => void,
): void {
  const { q, sd, sims, simOff, seedIndependent, r, zr } = d;
  const { g: G, x: X, h: Hh } = out;
  const independent = seedIndependent === seedIndependent;
  const o = new Float64Array(3);
  let tz = 0;
  let t = tabs[0];
  for (let c = b0; c < b1; c++) {
    const i = c - b0;
    let q0 = q[c];
    if (!(q0 === q0)) {
      G[i] = NaN;
      continue;
    }
    if (sims !== undefined) q0 = sims[simOff + c];
    else if (sd !== undefined) {
      const s = sd[c];
      if (s > 0) q0 += s * (independent ? cellNormal(seedIndependent, r, c) : zr);
    }
    if (zones !== undefined && zones[c] !== tz) {
      tz = zones[c];
      t = tabs[tz];
    }
    if (!lookupHeatTable(t, q0, o)) {
      if (q0 > 0) fallback(tz, q0, o);
      else o.fill(0);
    }
    G[i] = o[0];
    X[i] = o[1];
    Hh[i] = o[2];
  }
}

/** Where one realization's block goes: densities (bufH, bufE at rowOff + c − b0) and sums (acc: grid 0..3, polygon 4..7; zoneAcc). */
export interface BlockSink {
  rowOff: number;
  heatF: number;
  elecF: number;
  bufH: Float64Array;
  bufE: Float64Array;
  blockArea: Float64Array;
  mask: Uint8Array | undefined;
  labels: Int32Array | undefined;
  acc: Float64Array;
  zoneAcc: Float64Array;
}

/** Densities and area sums of cells [b0, b1) from their column integrals (lookupBlock), added in cell order. */
export function accumulateBlock(v: { g: Float64Array; x: Float64Array; h: Float64Array }, b0: number, b1: number, s: BlockSink): void {
  const K = SUM_QUANTITIES;
  const { rowOff, heatF, elecF, bufH, bufE, blockArea, mask, labels, zoneAcc } = s;
  let gG = 0,
    gX = 0,
    gV = 0,
    gA = 0,
    pG = 0,
    pX = 0,
    pV = 0,
    pA = 0;
  for (let c = b0; c < b1; c++) {
    const i = c - b0,
      j = rowOff + i;
    const g = v.g[i];
    if (!(g === g)) {
      bufH[j] = NaN;
      bufE[j] = NaN;
      continue;
    }
    const x = v.x[i],
      h = v.h[i];
    bufH[j] = heatF * g;
    bufE[j] = elecF * x;
    const a = blockArea[i];
    const ga = g * a,
      xa = x * a,
      ha = h * a,
      aa = h > 0 ? a : 0;
    gG += ga;
    gX += xa;
    gV += ha;
    gA += aa;
    if (mask !== undefined && mask[c] === 1) {
      pG += ga;
      pX += xa;
      pV += ha;
      pA += aa;
    }
    if (labels !== undefined) {
      const l = labels[c];
      if (l >= 0) {
        const zk = l * K;
        zoneAcc[zk] += ga;
        zoneAcc[zk + 1] += xa;
        zoneAcc[zk + 2] += ha;
        zoneAcc[zk + 3] += aa;
      }
    }
  }
  const acc = s.acc;
  acc[0] = gG;
  acc[1] = gX;
  acc[2] = gV;
  acc[3] = gA;
  acc[4] = pG;
  acc[5] = pX;
  acc[6] = pV;
  acc[7] = pA;
}
