import { normalCdf, normalQuantile } from '../random/normal-cdf.ts';

/**
 * Normal-score transform and its back-transform (Deutsch & Journel 1998, GSLIB 2nd ed., §V.1.12 nscore / backtr):
 * the data are sorted, each distinct value gets the cumulative probability at the middle of its (declustering-)
 * weight, p = (W_before + w/2)/W, and the score Φ⁻¹(p); ties share one score. The back-transform interpolates
 * linearly between the (score, value) pairs and, beyond the extreme data, linearly in probability towards tail
 * bounds: the data minimum and maximum moved out by `tailFraction` × the data range (default 0.1; a project choice
 * that GSLIB leaves to the user), never below `lowerBound` (e.g. 0 for a non-negative field).
 */
export class NormalScoreTransform {
  /** Distinct data values, ascending (value units). */
  readonly values: Float64Array;
  /** Their normal scores (ascending). */
  readonly scores: Float64Array;
  /** Their cumulative probabilities. */
  readonly probs: Float64Array;
  readonly lowTail: number;
  readonly highTail: number;

  constructor(data: ArrayLike<number>, weights: ArrayLike<number> | null = null, opts: { tailFraction?: number; lowerBound?: number } = {}) {
    const n = data.length;
    if (n < 2) throw new RangeError('a normal-score transform needs at least two values');
    const idx = Array.from({ length: n }, (_, i) => i).sort((a, b) => data[a] - data[b]);
    const vals: number[] = [],
      wts: number[] = [];
    let total = 0;
    for (const i of idx) {
      const w = weights === null ? 1 : weights[i];
      if (!(w >= 0 && Number.isFinite(w))) throw new RangeError(`declustering weight must be ≥ 0, got ${w}`);
      total += w;
      if (vals.length > 0 && data[i] === vals[vals.length - 1]) wts[wts.length - 1] += w;
      else {
        vals.push(data[i]);
        wts.push(w);
      }
    }
    if (!(total > 0)) throw new RangeError('declustering weights sum to zero');
    if (vals.length < 2) throw new RangeError('a normal-score transform needs at least two distinct values');
    const m = vals.length;
    this.values = Float64Array.from(vals);
    this.scores = new Float64Array(m);
    this.probs = new Float64Array(m);
    let cum = 0;
    for (let k = 0; k < m; k++) {
      const p = (cum + wts[k] / 2) / total;
      cum += wts[k];
      // Zero-weight values sit at the edge of their neighbours' mass; keep them strictly inside (0, 1).
      const pc = Math.min(Math.max(p, 1e-9), 1 - 1e-9);
      this.probs[k] = pc;
      this.scores[k] = normalQuantile(pc);
    }
    // Strictly increasing scores (zero weights can make equal probabilities).
    for (let k = 1; k < m; k++) if (!(this.scores[k] > this.scores[k - 1])) this.scores[k] = this.scores[k - 1] + 1e-9;
    const span = vals[m - 1] - vals[0];
    const tf = opts.tailFraction ?? 0.1;
    this.lowTail = Math.max(vals[0] - tf * span, opts.lowerBound ?? -Infinity);
    this.highTail = vals[m - 1] + tf * span;
  }

  /** Score of a value (linear between the table's values; beyond them, linear in probability to the tails). */
  forward(v: number): number {
    const { values: z, scores: y, probs: p } = this;
    const m = z.length;
    if (v <= z[0]) {
      if (v <= this.lowTail) return normalQuantile(1e-9);
      return normalQuantile((p[0] * (v - this.lowTail)) / (z[0] - this.lowTail));
    }
    if (v >= z[m - 1]) {
      if (v >= this.highTail) return normalQuantile(1 - 1e-9);
      return normalQuantile(p[m - 1] + ((1 - p[m - 1]) * (v - z[m - 1])) / (this.highTail - z[m - 1]));
    }
    return interpolateBetween(z, y, v);
  }

  /** Value of a score (the back-transform). */
  backward(s: number): number {
    const { values: z, scores: y, probs: p } = this;
    const m = z.length;
    if (s <= y[0]) return this.lowTail + ((z[0] - this.lowTail) * normalCdf(s)) / p[0];
    if (s >= y[m - 1]) return z[m - 1] + ((this.highTail - z[m - 1]) * (normalCdf(s) - p[m - 1])) / (1 - p[m - 1]);
    return interpolateBetween(y, z, s);
  }
}

/**
 * Linear interpolation of the pairs (from[k], to[k]) at v, between the two nodes of the ascending `from` that bracket
 * it (bisection; the caller has handled v outside (from[0], from[m − 1])).
 */
function interpolateBetween(from: Float64Array, to: Float64Array, v: number): number {
  let lo = 0,
    hi = from.length - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (from[mid] <= v) lo = mid;
    else hi = mid;
  }
  return to[lo] + ((to[hi] - to[lo]) * (v - from[lo])) / (from[hi] - from[lo]);
}
