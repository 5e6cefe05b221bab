/**
 * The closed-form column solver every query uses: steady 1-D conduction, layered, with k(T) = k0/(1 + bT) handled
 * exactly by the Kirchhoff transform (the form used by Chapman 1986) and constant or exponentially decreasing heat
 * production (Turcotte & Schubert 2002, §4-6 and §4-8).
 *
 * Within a layer with top temperature T_t and top heat flow q_t, at dz km below its top:
 *   q(dz) = q_t − I1(dz)                   (I1 = ∫A dz, mW/m²)
 *   θ(dz) = (q_t·dz − I2(dz)) / k0         (Kirchhoff temperature, K; I2 = ∫∫A, see compile.ts for the units)
 *   T(dz) = T_t + (1 + b·T_t)·(e^(b·θ) − 1)/b   (= T_t + θ when b = 0; evaluated with expm1 so b → 0 is exact)
 * because with u = ∫k/k0 dT = ln[(1 + bT)/(1 + bT_t)]/b the heat equation k0·du/dz = q(z) is the constant-k one.
 * Temperature and heat flow are continuous across layer boundaries by construction (each layer starts from the
 * one above's bottom values).
 *
 * Allocation: `ColumnState` holds the per-layer scratch; `solveColumn` refills it, so a grid kernel reuses one.
 */
import type { CompiledModel } from './compile.ts';

/** Status bits of a solved column (0 = valid everywhere down to the stack bottom). */
export const COLUMN_FLOW_EXHAUSTED = 1; // q reaches 0 inside the stack: surface heat flow too low for the heat production
export const COLUMN_CONDUCTIVITY_UNDEFINED = 2; // 1 + bT ≤ 0 at a layer top: k(T) undefined
export const COLUMN_BAD_INPUT = 4; // surface heat flow or temperature not finite, or q0 ≤ 0

export class ColumnState {
  /** Temperature at each layer top, °C; index nLayers is the stack bottom (or the column's maximum when exhausted). */
  readonly tTopC: Float64Array;
  /** Heat flow at each layer top, mW/m²; index nLayers is the stack bottom. */
  readonly qTopMWm2: Float64Array;
  /** Status bits (COLUMN_*). */
  status = 0;
  /** The column is valid from the surface down to this depth (km): the stack bottom, or where q = 0. */
  validToKm = 0;
  /** Layer in which q reaches 0 (−1 when it does not). */
  exhaustedLayer = -1;
  surfaceTemperatureC = NaN;
  surfaceHeatFlowMWm2 = NaN;

  constructor(nLayers: number) {
    this.tTopC = new Float64Array(nLayers + 1);
    this.qTopMWm2 = new Float64Array(nLayers + 1);
  }
}

/** Kirchhoff inverse: T at Kirchhoff temperature θ (K) above a layer top at tTop (°C), for coefficient b (1/K). */
export function temperatureFromKirchhoff(tTop: number, b: number, theta: number): number {
  return b === 0 ? tTop + theta : tTop + ((1 + b * tTop) * Math.expm1(b * theta)) / b;
}

/** Kirchhoff transform: θ (K) of temperature t (°C) above a layer top at tTop (°C); NaN when 1 + bT ≤ 0. */
export function kirchhoffFromTemperature(tTop: number, b: number, t: number): number {
  return b === 0 ? t - tTop : Math.log1p((b * (t - tTop)) / (1 + b * tTop)) / b;
}

/** Temperature dz km below the top of layer i, given that layer's top values (no checks; dz within the layer). */
export function layerTemperature(cm: CompiledModel, i: number, tTop: number, qTop: number, dz: number): number {
  const a = cm.aTop[i],
    d = cm.decayKm[i];
  const i2 = d > 0 ? a * d * (dz + d * Math.expm1(-dz / d)) : 0.5 * a * dz * dz;
  return temperatureFromKirchhoff(tTop, cm.b[i], (qTop * dz - i2) / cm.k0[i]);
}

/**
 * Solves one column: layer-top temperatures and heat flows, the depth to which it is valid, and status bits.
 * q0 in mW/m², t0 in °C. Nothing allocated.
 *
 * Grid kernels that only ask for isotherms up to `needTempC` and temperatures down to `needDepthKm` may pass them:
 * layer temperatures are then computed only down to the first layer whose bottom is at least that hot and that
 * deep (the costly exponentials); deeper layer tops get +∞ (hotter than anything asked), so searches and queries
 * within those bounds are unchanged. Heat flow, and so the flow-exhaustion check and `validToKm`, is always
 * computed for the whole stack (it needs no temperatures). A k(T) that becomes undefined (b < 0) below the solved
 * layers is not detected; it cannot affect the queried range.
 */
export function solveColumn(cm: CompiledModel, q0: number, t0: number, st: ColumnState, needTempC = Infinity, needDepthKm = Infinity): number {
  const n = cm.nLayers;
  const tT = st.tTopC,
    qT = st.qTopMWm2;
  st.surfaceHeatFlowMWm2 = q0;
  st.surfaceTemperatureC = t0;
  st.exhaustedLayer = -1;
  if (!(q0 > 0) || !Number.isFinite(q0) || !Number.isFinite(t0)) {
    st.status = COLUMN_BAD_INPUT;
    st.validToKm = 0;
    tT.fill(NaN);
    qT.fill(NaN);
    return st.status;
  }
  let t = t0,
    q = q0,
    status = 0;
  tT[0] = t;
  qT[0] = q;
  st.validToKm = cm.stackBottomKm;
  for (let i = 0; i < n; i++) {
    const b = cm.b[i];
    if (!(1 + b * t > 0)) {
      status |= COLUMN_CONDUCTIVITY_UNDEFINED;
      st.validToKm = cm.topKm[i];
      for (let j = i + 1; j <= n; j++) {
        tT[j] = NaN;
        qT[j] = NaN;
      }
      break;
    }
    const h = cm.thicknessKm[i];
    const qb = q - cm.i1[i];
    if (qb <= 0) {
      // q reaches 0 inside this layer: the column's temperature peaks there; below it a steady conductive
      // geotherm would cool with depth, which no valid model does.
      const a = cm.aTop[i],
        d = cm.decayKm[i];
      const dz = d > 0 ? -d * Math.log1p(-q / (a * d)) : q / a;
      const dzz = dz >= 0 && dz <= h ? dz : h;
      const tMax = layerTemperature(cm, i, t, q, dzz);
      status |= COLUMN_FLOW_EXHAUSTED;
      st.exhaustedLayer = i;
      st.validToKm = cm.topKm[i] + dzz;
      // Below the peak, layer tops carry the peak temperature (so searches stop there) and the (negative)
      // q = q0 − ∫A dz, kept for reporting.
      for (let j = i + 1; j <= n; j++) {
        tT[j] = tMax;
        qT[j] = q0 - (j < n ? cm.heatAboveMWm2[j] : cm.totalHeatProductionMWm2);
      }
      break;
    }
    t = layerTemperature(cm, i, t, q, h);
    q = qb;
    tT[i + 1] = t;
    qT[i + 1] = q;
    if (t >= needTempC && cm.bottomKm[i] >= needDepthKm && i + 1 < n) {
      status |= finishFlowOnly(cm, q0, i + 1, st);
      break;
    }
  }
  st.status = status;
  return status;
}

/** Fills layer tops from `from` down with +∞ temperatures and their heat flow; detects exhaustion from q alone. */
function finishFlowOnly(cm: CompiledModel, q0: number, from: number, st: ColumnState): number {
  const n = cm.nLayers;
  const tT = st.tTopC,
    qT = st.qTopMWm2;
  let status = 0;
  for (let j = from; j < n; j++) {
    const q = qT[j];
    tT[j + 1] = Infinity;
    qT[j + 1] = q - cm.i1[j];
    if (qT[j + 1] <= 0 && status === 0) {
      const a = cm.aTop[j],
        d = cm.decayKm[j];
      const dz = d > 0 ? -d * Math.log1p(-q / (a * d)) : q / a;
      status = COLUMN_FLOW_EXHAUSTED;
      st.exhaustedLayer = j;
      st.validToKm = cm.topKm[j] + (dz >= 0 && dz <= cm.thicknessKm[j] ? dz : cm.thicknessKm[j]);
      for (let k = j + 1; k <= n; k++) qT[k] = q0 - (k < n ? cm.heatAboveMWm2[k] : cm.totalHeatProductionMWm2);
      break;
    }
  }
  return status;
}

/** Index of the layer containing depth z (km): the last layer whose top is ≤ z; the last layer below the stack. */
export function layerAt(cm: CompiledModel, z: number): number {
  const n = cm.nLayers;
  let i = 0;
  while (i + 1 < n && z >= cm.topKm[i + 1]) i++;
  return i;
}

/** Temperature at depth z (km) in a solved column, °C; NaN where the column is not valid (see ColumnState). */
export function columnTemperature(cm: CompiledModel, st: ColumnState, z: number): number {
  if (!(z >= 0) || z > st.validToKm) return NaN;
  const i = layerAt(cm, z);
  return layerTemperature(cm, i, st.tTopC[i], st.qTopMWm2[i], z - cm.topKm[i]);
}

/** Heat flow at depth z (km), mW/m²: q0 − ∫₀ᶻ A dz (reported even where it is ≤ 0, which is the warning sign). */
export function columnHeatFlow(cm: CompiledModel, q0: number, z: number): number {
  if (!(z >= 0)) return NaN;
  const i = layerAt(cm, z);
  const a = cm.aTop[i],
    d = cm.decayKm[i],
    dz = z - cm.topKm[i];
  return q0 - cm.heatAboveMWm2[i] - (d > 0 ? a * d * -Math.expm1(-dz / d) : a * dz);
}

/** Root tolerance of the isotherm search, km (1 mm); the iteration itself stops at 1e-9 km. */
const ROOT_TOL_KM = 1e-6;

/**
 * Depth (km) of the isotherm tIso (°C) in a solved column: the shallowest depth where T ≥ tIso (0 when the
 * surface is already at or above it); NaN when not reached above maxDepthKm or in the valid part of the column.
 * In Kirchhoff space the layer equation g(dz) = q_t·dz − I2(dz) − k0·θ* = 0 is increasing and concave while q > 0
 * (g' = q, g'' = −A), so the root is bracketed by [k0·θ* / q_t, layer bottom]: closed form for constant A, bracketed
 * Halley iteration for exponential A.
 */
export function columnIsothermDepth(cm: CompiledModel, st: ColumnState, tIso: number, maxDepthKm: number): number {
  if (st.status & COLUMN_BAD_INPUT) return NaN;
  const n = cm.nLayers;
  const tT = st.tTopC;
  if (tIso <= tT[0]) return 0;
  let i = 0;
  // First layer whose bottom temperature reaches tIso (tT is non-decreasing; NaN stops the search).
  while (i < n && !(tT[i + 1] >= tIso)) {
    if (tT[i + 1] !== tT[i + 1]) return NaN;
    i++;
  }
  if (i === n) return NaN;
  const top = cm.topKm[i];
  if (top > maxDepthKm) return NaN;
  const tTop = tT[i],
    q = st.qTopMWm2[i];
  const k = cm.k0[i],
    a = cm.aTop[i],
    d = cm.decayKm[i];
  const theta = kirchhoffFromTemperature(tTop, cm.b[i], tIso);
  if (!(theta >= 0)) return NaN;
  const c = k * theta;
  const hLim = (i === st.exhaustedLayer ? st.validToKm : cm.bottomKm[i]) - top;
  let x: number;
  if (a === 0) {
    x = c / q;
  } else if (d === 0) {
    // A/2·dz² − q·dz + c = 0, the root below the flow maximum, in the cancellation-free form.
    const disc = q * q - 2 * a * c;
    x = (2 * c) / (q + Math.sqrt(disc > 0 ? disc : 0));
  } else {
    // Bracket: the root with A = 0 (c/q) is a lower bound; the root with A held at A_top (the quadratic) an upper
    // bound, since the decaying A(z) ≤ A_top adds less curvature. Start from the quadratic with the mean A over
    // [0, c/q], which is within a small fraction of a percent of the root for crustal parameters.
    const xLin = c / q;
    let lo = xLin,
      hi = hLim;
    const discTop = q * q - 2 * a * c;
    if (discTop > 0) hi = Math.min(hi, (2 * c) / (q + Math.sqrt(discTop)));
    if (lo > hi) lo = hi;
    const aMean = xLin > 0 ? (a * d * -Math.expm1(-xLin / d)) / xLin : a;
    const discMean = q * q - 2 * aMean * c;
    x = discMean > 0 ? (2 * c) / (q + Math.sqrt(discMean)) : 0.5 * (lo + hi);
    if (!(x >= lo && x <= hi)) x = 0.5 * (lo + hi);
    // Scale of the error left after a Halley step of dx: about K·dx³ with K ~ (g''/g')² + g'''/g' for this
    // function (g' = q(x), g'' = −A(x), g''' = A(x)/D), bounded by (A_top/q_top)² + A_top/(q_top·D) + 1/D²; 1e-9 km
    // of error (well under the 1 mm promised) then needs dx³·K < 1e-9.
    const kHalley = (a / q) * (a / q) + a / (q * d) + 1 / (d * d);
    for (let it = 0; it < 60; it++) {
      const e = Math.expm1(-x / d); // e^(−x/D) − 1
      const g = q * x - a * d * (x + d * e) - c;
      if (g < 0) lo = x;
      else hi = x;
      const g1 = q + a * d * e; // q(x) = q − A·D·(1 − e^(−x/D))
      const g2 = -a * (1 + e); // −A(x)
      let xn = x - (2 * g * g1) / (2 * g1 * g1 - g * g2);
      if (!(xn > lo && xn < hi)) xn = 0.5 * (lo + hi);
      const dx = Math.abs(xn - x);
      x = xn;
      if (dx * dx * dx * kHalley < ROOT_TOL_KM * 1e-3 || hi - lo < ROOT_TOL_KM * 1e-3) break;
    }
  }
  if (x > hLim) x = hLim;
  const z = top + x;
  return z <= maxDepthKm ? z : NaN;
}
