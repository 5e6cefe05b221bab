/**
 * Layers read from a run's realizations (server/runs/realizations.ts): the spread of the depth to an isotherm
 * (P90 − P10, Hyndman & Fan type 7 over the realizations, as the run's P10/P90 maps) and exceedance probabilities:
 * the fraction of valid realizations in which the depth to an isotherm is shallower than a depth, or the
 * temperature at a depth exceeds a value. An isotherm not reached counts as deeper than any depth, also one hotter
 * than the peak of a column whose heat flow runs out above the maximum depth; a realization whose column is invalid
 * for the cell (a temperature asked below such a peak, k(T) undefined, an impossible draw, or an isotherm below the
 * melt onset) is left out of the fraction. The melt and mantle limits apply as in the run's
 * maps: a temperature below the melt onset (the dry solidus of its rock) is never given; it counts as hotter than
 * any valid temperature, so it exceeds every value asked for (the rock there is at least at its solidus: read a
 * threshold above the solidus with that in mind). Cells are processed in blocks with one (realizations × block)
 * buffer; between blocks the work yields to its thread's event loop (the server runs it on a worker thread:
 * server/runs/derived-layer.ts).
 */
import { ColumnState, solveColumn } from '../../shared/thermal/column.ts';
import type { CompiledModel } from '../../shared/thermal/compile.ts';
import { dryAtTops, limitsWhereReached } from '../../shared/thermal/limits.ts';
import { isothermAnswer, temperatureAnswer } from '../../shared/thermal/monte-carlo.ts';
import { summarizeSorted, type Summary } from '../../shared/thermal/quantiles.ts';
import type { RunRealizations } from './realizations.ts';

/** What a probability layer asks. */
export type ProbabilityQuery =
  { kind: 'isotherm-shallower'; isothermC: number; depthKm: number } | { kind: 'temperature-exceeds'; depthKm: number; temperatureC: number };

/** One quantity per realization and cell: depth to an isotherm (km, +∞ not reached) or temperature at a depth (°C). */
type Quantity = { kind: 'isotherm'; isothermC: number } | { kind: 'temperature'; depthKm: number };

const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * Fills buf[r·B + (c − start)] with the quantity of realization r in cells [start, end); NaN = invalid, +∞ = an
 * isotherm not reached or a temperature past the melt onset. The same per-realization answers as the run's grid
 * Monte Carlo (isothermAnswer, temperatureAnswer of shared/thermal/monte-carlo.ts, under the melt and mantle limits).
 */
function fillBlock(
  rr: RunRealizations,
  q: Quantity,
  start: number,
  end: number,
  B: number,
  buf: Float64Array,
  states: ColumnState[],
  dryTops: WeakMap<CompiledModel, Float64Array>,
): void {
  const zMax = rr.maxDepthKm;
  const needT = q.kind === 'isotherm' ? q.isothermC : -Infinity;
  const needZ = q.kind === 'temperature' ? q.depthKm : 0;
  for (let r = 0; r < rr.count; r++) {
    for (let c = start; c < end; c++) {
      const j = r * B + (c - start);
      const zone = rr.zones === undefined ? 0 : rr.zones[c];
      const cm = rr.compiledModel(r, zone);
      const q0 = rr.heatFlowAt(r, c);
      if (cm === null || !(q0 === q0)) {
        buf[j] = NaN;
        continue;
      }
      let dry = dryTops.get(cm);
      if (dry === undefined) dryTops.set(cm, (dry = dryAtTops(cm)));
      const st = states[zone];
      solveColumn(cm, q0, cm.surfaceTemperatureC, st, needT, needZ);
      const lim = limitsWhereReached(cm, st, Math.max(zMax, needZ), dry);
      buf[j] = q.kind === 'temperature' ? temperatureAnswer(cm, st, lim, q.depthKm) : isothermAnswer(cm, st, lim, q.isothermC, zMax);
    }
  }
}

async function perCell(
  rr: RunRealizations,
  q: Quantity,
  reduce: (values: Float64Array, cell: number) => number,
  opts: { blockCells?: number; signal?: AbortSignal } = {},
): Promise<Float32Array> {
  const cells = rr.grid.width * rr.grid.height;
  const N = rr.count;
  const B = Math.max(1, Math.min(opts.blockCells ?? 256, cells));
  const buf = new Float64Array(B * N);
  const scratch = new Float64Array(N);
  const out = new Float32Array(cells);
  const states = rr.zoneModels.map((m) => new ColumnState(m.layers.length));
  const dryTops = new WeakMap<CompiledModel, Float64Array>();
  for (let b0 = 0; b0 < cells; b0 += B) {
    if (opts.signal?.aborted) throw opts.signal.reason instanceof Error ? opts.signal.reason : new Error('cancelled');
    const b1 = Math.min(cells, b0 + B);
    fillBlock(rr, q, b0, b1, B, buf, states, dryTops);
    for (let c = b0; c < b1; c++) {
      for (let r = 0; r < N; r++) scratch[r] = buf[r * B + (c - b0)];
      out[c] = reduce(scratch, c);
    }
    if (b1 < cells) await yieldToLoop();
  }
  return out;
}

/** P90 − P10 of the depth to `isothermC` per cell, km; NaN where either percentile is not reached or invalid. */
export async function isothermSpreadKm(
  rr: RunRealizations,
  isothermC: number,
  opts: { blockCells?: number; signal?: AbortSignal } = {},
): Promise<Float32Array> {
  const sum: Summary = { p10: NaN, p50: NaN, p90: NaN, mean: NaN, sd: NaN, stderrP50: NaN, n: 0, finite: 0 };
  return perCell(
    rr,
    { kind: 'isotherm', isothermC },
    (v) => {
      v.sort(); // NaN last, +∞ before it
      let n = v.length;
      while (n > 0 && v[n - 1] !== v[n - 1]) n--;
      if (n === 0) return NaN;
      summarizeSorted(v, 0, n, sum);
      const s = sum.p90 - sum.p10;
      return Number.isFinite(s) ? s : NaN;
    },
    opts,
  );
}

/** Probability (0–1) per cell of the query over the valid realizations; NaN where none is valid. */
export async function exceedanceProbability(
  rr: RunRealizations,
  query: ProbabilityQuery,
  opts: { blockCells?: number; signal?: AbortSignal } = {},
): Promise<Float32Array> {
  const q: Quantity = query.kind === 'isotherm-shallower' ? { kind: 'isotherm', isothermC: query.isothermC } : { kind: 'temperature', depthKm: query.depthKm };
  return perCell(
    rr,
    q,
    (v) => {
      let valid = 0,
        hits = 0;
      for (let r = 0; r < v.length; r++) {
        const x = v[r];
        if (!(x === x)) continue;
        valid++;
        if (query.kind === 'isotherm-shallower' ? x < query.depthKm : x > query.temperatureC) hits++;
      }
      return valid > 0 ? hits / valid : NaN;
    },
    opts,
  );
}
