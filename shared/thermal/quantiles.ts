/**
 * Percentile summaries of Monte Carlo results. Percentiles follow Hyndman & Fan (1996) type 7 (linear
 * interpolation between order statistics, h = (n − 1)·p; the R and d3-array default). +Infinity stands for
 * "not reached" (an isotherm deeper than any depth): a percentile whose interpolation touches it is NaN (null in
 * JSON), and so are the mean and sd. NaN values are invalid realizations and are left out.
 *
 * Standard error of the P50: from the distribution-free order-statistic (binomial) 95 % confidence interval of the
 * median, [x(j), x(k)] with j = ⌊(n − 1.96√n)/2⌋, k = ⌈1 + (n + 1.96√n)/2⌉ (1-based; Conover 1999, §3.2), divided
 * by 2 × 1.96. Method name: "order-statistic binomial interval / 3.92".
 */
import { quantileSorted } from '../stats/quantile.ts';

export { quantileSorted };

export const STDERR_P50_METHOD = 'order-statistic binomial 95% interval of the median / 3.92 (Conover 1999)';

/** Summary of a set of realizations, NaN meaning null. */
export interface Summary {
  p10: number;
  p50: number;
  p90: number;
  mean: number;
  sd: number;
  stderrP50: number;
  /** Valid realizations (non-NaN). */
  n: number;
  /** Of the valid ones, those that were finite (e.g. an isotherm reached). */
  finite: number;
}

/** Writes the summary of sorted values a[from .. from + n) (NaN-free, +Infinity at the end) into `out`. */
export function summarizeSorted(a: ArrayLike<number>, from: number, n: number, out: Summary): Summary {
  out.n = n;
  let finite = 0,
    sum = 0;
  for (let i = 0; i < n; i++) {
    const v = a[from + i];
    if (Number.isFinite(v)) {
      finite++;
      sum += v;
    }
  }
  out.finite = finite;
  out.p10 = quantileSorted(a, from, n, 0.1);
  out.p50 = quantileSorted(a, from, n, 0.5);
  out.p90 = quantileSorted(a, from, n, 0.9);
  if (finite === n && n > 0) {
    const mean = sum / n;
    let ss = 0;
    for (let i = 0; i < n; i++) {
      const d = a[from + i] - mean;
      ss += d * d;
    }
    out.mean = mean;
    out.sd = n > 1 ? Math.sqrt(ss / (n - 1)) : 0;
  } else {
    out.mean = NaN;
    out.sd = NaN;
  }
  out.stderrP50 = stderrMedianSorted(a, from, n);
  return out;
}

/** Standard error of the median of sorted values by the order-statistic interval (see the file comment). */
export function stderrMedianSorted(a: ArrayLike<number>, from: number, n: number): number {
  if (n < 6) return NaN;
  const z = 1.959963984540054;
  const r = z * Math.sqrt(n);
  const j = Math.max(1, Math.floor((n - r) / 2));
  const k = Math.min(n, Math.ceil(1 + (n + r) / 2));
  const lo = a[from + j - 1],
    hi = a[from + k - 1];
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return NaN;
  return (hi - lo) / (2 * z);
}

/** Sorts values (NaN removed) and summarizes them. Allocates a copy; for one column, not for grids. */
export function summarize(values: ArrayLike<number>): Summary {
  const a = Float64Array.from(values)
    .filter((v) => v === v)
    .sort();
  return summarizeSorted(a, 0, a.length, { p10: NaN, p50: NaN, p90: NaN, mean: NaN, sd: NaN, stderrP50: NaN, n: 0, finite: 0 });
}

/** JSON form of a summary: NaN → null. */
export function summaryToJson(s: Summary): {
  p10: number | null;
  p50: number | null;
  p90: number | null;
  mean: number | null;
  sd: number | null;
  stderrP50: number | null;
} {
  const j = (v: number) => (Number.isFinite(v) ? v : null);
  return { p10: j(s.p10), p50: j(s.p50), p90: j(s.p90), mean: j(s.mean), sd: j(s.sd), stderrP50: j(s.stderrP50) };
}
