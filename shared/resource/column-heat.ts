/**
 * Heat stored in one column between a top and a bottom depth, in the rock hot enough to use (volumetric method of
 * Muffler & Cataldi 1978; Williams, Reed & Mariner 2008, USGS OFR 2008-1296):
 *   per unit area, heat in place H/A = ρC·∫ (T(z) − Tref) dz over { z ∈ [top, bottom] : T(z) ≥ Tmin }.
 * A steady conductive geotherm increases with depth wherever the heat flow is positive, so that set is one interval
 * [max(top, z_Tmin), bottom] with z_Tmin the depth of the Tmin isotherm (columnIsothermDepth, closed form or a
 * bracketed root). T(z) is analytic inside each layer (thermal/column.ts); its only kinks are the layer boundaries,
 * so the integral is taken by an n-point Gauss–Legendre rule on each piece between the isotherm root and the layer
 * boundaries: exact for a constant-k layer with constant heat production (T quadratic), and converging
 * exponentially otherwise (the tests bound the error against a rule 256 times finer).
 *
 * Besides ∫(T − Tref) dz the kernel returns the hot thickness h and the available-work integral, taken over the
 * temperature profile itself (the same quadrature):
 *   X = ∫ [(T − T0) − T0·ln(T/T0)] dz,   T0 = Tref in kelvin,
 * the exergy per ρC of each slice of rock cooled reversibly to T0 (constant heat capacity; DiPippo 2008,
 * "Geothermal Power Plants", §10 exergy of a body, from memory). ρC·X is the column's available work per unit
 * area. Because (T − T0) − T0·ln(T/T0) is convex in T, X exceeds the value from the column's mean temperature,
 * exergyIntegral(G, h, T0) = h·[(TR − T0) − T0·ln(TR/T0)], TR = Tref + G/h (kept for comparison).
 * Where the column is not valid below some depth (heat flow exhausted by the heat production), only its valid part
 * is counted and the caller is told.
 */
import type { CompiledModel } from '../thermal/compile.ts';
import type { ColumnState } from '../thermal/column.ts';
import { COLUMN_BAD_INPUT, columnIsothermDepth, layerAt, layerTemperature, solveColumn } from '../thermal/column.ts';
import { gaussLegendre, type GaussLegendreRule } from './gauss-legendre.ts';

/** Depth window and temperature limits of the assessment. */
export interface HeatWindow {
  /** Top of the assessed rock, km below the surface (default 3). */
  topKm: number;
  /** Bottom: the deepest drillable depth, km (default 7). */
  bottomKm: number;
  /** Only rock at or above this temperature counts, °C (default 150). */
  minTempC: number;
  /** Reference (rejection, dead-state) temperature, °C (default 15). */
  refTempC: number;
}

export const DEFAULT_WINDOW: Readonly<HeatWindow> = Object.freeze({ topKm: 3, bottomKm: 7, minTempC: 150, refTempC: 15 });

/** Kelvin offset of the Celsius scale (BIPM SI Brochure, 9th ed.). */
export const KELVIN_OFFSET = 273.15;

/** The three integrals of one column (per unit area, SI). */
export interface ColumnHeat {
  /** G = ∫(T − Tref) dz over the hot part, K·m. */
  heatKm: number;
  /** Hot thickness h, m. */
  thicknessM: number;
  /** Available-work integral X (see the file comment), K·m. */
  exergyKm: number;
  /** The column stops being valid inside the window (heat flow exhausted or k(T) undefined). */
  truncated: boolean;
}

/** Checks a window NaN-proof; throws RangeError. */
export function checkWindow(w: HeatWindow): void {
  if (!(w.topKm >= 0)) throw new RangeError(`topKm must be ≥ 0, got ${w.topKm}`);
  if (!(w.bottomKm > w.topKm)) throw new RangeError(`bottomKm must exceed topKm (${w.topKm}), got ${w.bottomKm}`);
  if (!Number.isFinite(w.minTempC)) throw new RangeError(`minTempC must be finite, got ${w.minTempC}`);
  if (!(w.refTempC > -KELVIN_OFFSET)) throw new RangeError(`refTempC must be above absolute zero, got ${w.refTempC}`);
  if (!(w.minTempC >= w.refTempC)) throw new RangeError(`minTempC (${w.minTempC}) must be ≥ refTempC (${w.refTempC})`);
}

/**
 * X = G − c·ln(1 + G/c) with c = h·T0 (K·m), the available-work integral; a series where G/c is tiny (there the
 * subtraction would cancel: X ≈ G²/(2c)).
 */
export function exergyIntegral(heatKm: number, thicknessM: number, refTempK: number): number {
  if (!(heatKm > 0) || !(thicknessM > 0)) return 0;
  const c = thicknessM * refTempK;
  const u = heatKm / c;
  if (u < 1e-4) return c * u * u * (0.5 - u / 3 + (u * u) / 4);
  return heatKm - c * Math.log1p(u);
}

/** Default quadrature order per piece (exact for T of degree ≤ 19). */
export const DEFAULT_GL_ORDER = 10;

/** Scratch for columnHeat: the quadrature rule and one column state per model size. */
export class ColumnHeatScratch {
  readonly rule: GaussLegendreRule;
  /** Sub-intervals per piece (1 = the production rule; larger only to check the error). */
  readonly pieces: number;
  constructor(order = DEFAULT_GL_ORDER, pieces = 1) {
    if (!(Number.isInteger(pieces) && pieces >= 1)) throw new RangeError(`pieces must be a positive integer, got ${pieces}`);
    this.rule = gaussLegendre(order);
    this.pieces = pieces;
  }
}

/**
 * The integrals of a solved column (st from solveColumn). Writes into `out` and returns it. Nothing allocated.
 * A column with bad input (no heat flow, q0 ≤ 0) holds no heat above Tmin: zeros.
 */
export function columnHeatSolved(cm: CompiledModel, st: ColumnState, w: HeatWindow, sc: ColumnHeatScratch, out: ColumnHeat): ColumnHeat {
  out.heatKm = 0;
  out.thicknessM = 0;
  out.exergyKm = 0;
  out.truncated = false;
  if (st.status & COLUMN_BAD_INPUT) return out;
  let zEnd = w.bottomKm;
  if (st.validToKm < zEnd) {
    out.truncated = true;
    zEnd = st.validToKm;
  }
  if (!(zEnd > w.topKm)) return out;
  const zIso = columnIsothermDepth(cm, st, w.minTempC, zEnd);
  if (!(zIso === zIso)) return out; // Tmin not reached above zEnd
  const za = zIso > w.topKm ? zIso : w.topKm;
  if (!(zEnd > za)) return out;
  const tRef = w.refTempC,
    t0K = tRef + KELVIN_OFFSET;
  const { x, w: wt, n } = sc.rule;
  const pieces = sc.pieces;
  let sum = 0,
    sumX = 0;
  let i = layerAt(cm, za);
  let a = za;
  while (a < zEnd) {
    const layerBottom = i < cm.nLayers - 1 ? cm.bottomKm[i] : Infinity;
    const b = layerBottom < zEnd ? layerBottom : zEnd;
    if (b > a) {
      const top = cm.topKm[i],
        tTop = st.tTopC[i],
        qTop = st.qTopMWm2[i];
      const step = (b - a) / pieces;
      for (let p = 0; p < pieces; p++) {
        const lo = a + p * step;
        const half = 0.5 * step,
          mid = lo + half;
        let s = 0,
          sx = 0;
        for (let k = 0; k < n; k++) {
          const d = layerTemperature(cm, i, tTop, qTop, mid + half * x[k] - top) - tRef;
          s += wt[k] * d;
          // Available work of rock at T cooled to T0 per ρC: (T − T0) − T0·ln(T/T0), kelvin, cancellation-free.
          sx += wt[k] * (d - t0K * Math.log1p(d / t0K));
        }
        sum += s * half;
        sumX += sx * half;
      }
    }
    a = b;
    i++;
    if (i >= cm.nLayers) break;
  }
  const g = sum * 1000; // K·km → K·m
  const h = (zEnd - za) * 1000;
  out.heatKm = g;
  out.thicknessM = h;
  out.exergyKm = sumX * 1000;
  return out;
}

/** Solves the column for surface heat flow q0 (mW/m²) and surface temperature t0 (°C), then columnHeatSolved. */
export function columnHeat(cm: CompiledModel, q0: number, t0: number, w: HeatWindow, st: ColumnState, sc: ColumnHeatScratch, out: ColumnHeat): ColumnHeat {
  solveColumn(cm, q0, t0, st);
  return columnHeatSolved(cm, st, w, sc, out);
}

/** A fresh ColumnHeat record. */
export function emptyColumnHeat(): ColumnHeat {
  return { heatKm: 0, thicknessM: 0, exergyKm: 0, truncated: false };
}
