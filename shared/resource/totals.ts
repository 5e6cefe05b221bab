/**
 * Area totals of a heat-in-place run: from each area set's per-realization sums (monte-carlo.ts) to heat in place,
 * recoverable heat, thermal power and electric power by each route, and their P10/P50/P90 (Hyndman & Fan 1996
 * type 7 over the accepted realizations). A total's percentiles are those of its per-realization totals, never sums
 * of cell percentiles. The central value is the mean (and P50) of the realizations; the nominal value (the
 * deterministic run: nominal model, kriged heat flow, nominal parameters) is given beside it with the difference
 * mean − nominal, which is not zero where the total is not linear in heat flow (e.g. through the Tmin threshold).
 */
import { quantileSorted } from '../stats/quantile.ts';
import type { SetSums } from './monte-carlo.ts';
import type { PreparedResource } from './resource-spec.ts';

/**
 * A total: with realizations its mean (the central value), percentiles and sample sd; the nominal (deterministic)
 * value beside them and mean − nominal; null = not computed.
 */
export interface TotalValue {
  nominal: number | null;
  p10: number | null;
  p50: number | null;
  p90: number | null;
  mean: number | null;
  /** Sample standard deviation of the realizations (n − 1). */
  sd: number | null;
  /** mean − nominal. */
  meanMinusNominal: number | null;
}

export interface AreaTotals {
  /** Cells of the set with heat-flow data, and their area (km²). */
  cells: number;
  cellsNoData: number;
  areaKm2: number;
  heatInPlaceJ: TotalValue;
  heatInPlaceEJ: TotalValue;
  recoverableJ: TotalValue;
  thermalMWt: TotalValue;
  /** Electric power by the available-work (exergy) route, MWe. */
  electricMWe: TotalValue;
  /** Electric power by the thermal × conversion-efficiency route, MWe (null values when no ηc was given). */
  electricMWeConversion: TotalValue;
  /** Area and volume of rock at or above Tmin in the window. */
  hotAreaKm2: TotalValue;
  hotVolumeKm3: TotalValue;
  /** ρC-weighted mean temperature of that rock, °C. */
  meanReservoirTempC: TotalValue;
  /** Effective W/Q of the set: available work / heat in place. */
  availableWorkFraction: TotalValue;
}

const fin = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** Summarizes the accepted realizations' values (NaN skipped) with the nominal value beside them. */
export function totalValue(values: Float64Array, nominal: number): TotalValue {
  const a = values.filter((v) => v === v).sort();
  const n = a.length;
  if (n === 0) return { nominal: fin(nominal), p10: null, p50: null, p90: null, mean: null, sd: null, meanMinusNominal: null };
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i];
  const mean = s / n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (a[i] - mean) ** 2;
  return {
    nominal: fin(nominal),
    p10: fin(quantileSorted(a, 0, n, 0.1)),
    p50: fin(quantileSorted(a, 0, n, 0.5)),
    p90: fin(quantileSorted(a, 0, n, 0.9)),
    mean: fin(mean),
    sd: n > 1 ? fin(Math.sqrt(ss / (n - 1))) : null,
    meanMinusNominal: fin(mean - nominal),
  };
}

/** Cells with data, cells without, and area (m²) of each area set. */
export function setMembership(prep: PreparedResource): { cells: Float64Array; cellsNoData: Float64Array; areaM2: Float64Array } {
  const spec = prep.spec;
  const S = prep.sets;
  const cells = new Float64Array(S),
    noData = new Float64Array(S),
    area = new Float64Array(S);
  const q = spec.heatFlowMWm2,
    mask = spec.polygonMask,
    labels = spec.zoneLabels;
  for (let c = 0; c < prep.cells; c++) {
    const has = q[c] === q[c];
    const a = spec.cellAreaM2 === undefined ? spec.rowAreaM2[Math.floor(c / spec.width)] : spec.cellAreaM2[c];
    const put = (s: number) => {
      if (has) {
        cells[s]++;
        area[s] += a;
      } else noData[s]++;
    };
    put(0);
    if (mask !== undefined && mask[c] === 1) put(prep.polygonSet);
    if (labels !== undefined && labels[c] >= 0) put(prep.zoneSet0 + labels[c]);
  }
  return { cells, cellsNoData: noData, areaM2: area };
}

/** Totals of every area set. */
export function areaTotals(prep: PreparedResource, sums: SetSums[]): AreaTotals[] {
  const N = prep.spec.realizations;
  const P = prep.params,
    nm = prep.nominal;
  const hasConv = prep.spec.parameters.conversionEfficiency !== undefined;
  const tRef = prep.spec.window.refTempC;
  const lifeS = prep.lifeS;
  const mem = setMembership(prep);
  return sums.map((s, si) => {
    const mk = () => new Float64Array(N);
    const heat = mk(),
      rec = mk(),
      th = mk(),
      el = mk(),
      conv = mk(),
      hotA = mk(),
      hotV = mk(),
      tr = mk(),
      wq = mk();
    const derive = (r: number, rhoC: number, rg: number, eta: number, etaC: number) => {
      const H = rhoC * 1e6 * s.heatKm3[r];
      const R = rg * H;
      const g = s.heatKm3[r],
        v = s.hotVolumeM3[r];
      return {
        H,
        R,
        th: R / lifeS / 1e6,
        el: (eta * rg * rhoC * 1e6 * s.exergyKm3[r]) / lifeS / 1e6,
        conv: hasConv ? (etaC * R) / lifeS / 1e6 : NaN,
        hotA: s.hotAreaM2[r] / 1e6,
        hotV: v / 1e9,
        tr: v > 0 ? tRef + g / v : NaN,
        wq: g > 0 ? s.exergyKm3[r] / g : NaN,
      };
    };
    for (let r = 0; r < N; r++) {
      if (P.accepted[r] === 0) {
        heat[r] = rec[r] = th[r] = el[r] = conv[r] = hotA[r] = hotV[r] = tr[r] = wq[r] = NaN;
        continue;
      }
      const d = derive(r, P.rhoCMJm3K[r], P.recoveryFactor[r], P.utilizationEfficiency[r], P.conversionEfficiency[r]);
      heat[r] = d.H;
      rec[r] = d.R;
      th[r] = d.th;
      el[r] = d.el;
      conv[r] = d.conv;
      hotA[r] = d.hotA;
      hotV[r] = d.hotV;
      tr[r] = d.tr;
      wq[r] = d.wq;
    }
    const n = derive(N, nm.rhoCMJm3K, nm.recoveryFactor, nm.utilizationEfficiency, nm.conversionEfficiency);
    const ej = heat.map((v) => v / 1e18);
    return {
      cells: mem.cells[si],
      cellsNoData: mem.cellsNoData[si],
      areaKm2: mem.areaM2[si] / 1e6,
      heatInPlaceJ: totalValue(heat, n.H),
      heatInPlaceEJ: totalValue(ej, n.H / 1e18),
      recoverableJ: totalValue(rec, n.R),
      thermalMWt: totalValue(th, n.th),
      electricMWe: totalValue(el, n.el),
      electricMWeConversion: totalValue(conv, n.conv),
      hotAreaKm2: totalValue(hotA, n.hotA),
      hotVolumeKm3: totalValue(hotV, n.hotV),
      meanReservoirTempC: totalValue(tr, n.tr),
      availableWorkFraction: totalValue(wq, n.wq),
    };
  });
}
