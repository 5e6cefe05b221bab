/**
 * Where a conductive column stops being a valid answer: melting and the mantle adiabat.
 *
 * Each layer's rock kind chooses two solidus curves (shared/petrology/solidus.ts, ROCK_SOLIDUS): a water-saturated
 * one, whose crossing is a warning (melting if free water is present), and a fluid-absent or dry one, whose crossing
 * is the melt onset: a steady conductive geotherm is not valid below it (latent heat and melt transport are outside
 * the model), so every temperature below is reported as missing, with the reason.
 *
 * In `mantle` layers the temperature follows the conductive geotherm down to where it meets the adiabat of the
 * model's mantle potential temperature (shared/thermal/adiabat.ts), the base of the thermal lithosphere, and the
 * adiabat below it: the convecting mantle cannot be hotter than its adiabat. Where the adiabat itself is hotter than
 * the dry peridotite solidus (shallow depths: decompression melting) and the lid is thin enough to reach it, the melt
 * onset is where the column enters that range.
 *
 * This is the project's one solidus-crossing search (columns, grids and Monte Carlo maps all call columnLimits): a
 * scan every stepKm for the first depth where T(z) ≥ T_s(P(z)) with T_s the curve of the rock at z, then bisection
 * to 1e-6 km (the solidus may jump at a layer boundary, where the bisection ends on the boundary).
 */
import { ROCK_SOLIDUS, type SolidusCurve } from '../petrology/solidus.ts';
import { ROCK_KINDS, type RockKind } from '../schema/model.ts';
import { adiabatDepthKm, adiabatTemperatureC } from './adiabat.ts';
import type { CompiledModel } from './compile.ts';
import type { ColumnState } from './column.ts';
import { COLUMN_BAD_INPUT, columnIsothermDepth, columnTemperature, layerAt } from './column.ts';
import { lithostaticPressureMPa } from './pressure.ts';

export interface ColumnLimits {
  /** First depth where the temperature reaches the water-saturated solidus of the rock there, km (NaN: none). */
  wetSolidusKm: number;
  /** Layer of that crossing (−1: none). */
  wetSolidusLayer: number;
  /** Melt onset: first depth where the temperature reaches the fluid-absent/dry solidus of the rock there, km. */
  meltOnsetKm: number;
  meltOnsetLayer: number;
  /** Base of the thermal lithosphere: where the conductive geotherm meets the mantle adiabat in a mantle layer, km. */
  lithosphereBaseKm: number;
  /**
   * The adiabat is hotter than the dry peridotite solidus from the top of the first mantle layer down to this depth
   * (km): decompression melting wherever the lid is thinner. NaN when the adiabat is subsolidus at the mantle top (or
   * there is no mantle layer above the maximum depth).
   */
  adiabatAboveDrySolidusToKm: number;
  /** Top of the first mantle layer, km (NaN: none). */
  mantleTopKm: number;
  /** Temperatures are valid from the surface to here, km (melt onset, heat flow exhausted or k(T) undefined). */
  validToKm: number;
  /** Why the column ends at validToKm: null when it is valid down to the maximum depth. */
  endReason: 'melt-onset' | 'heat-flow-exhausted' | 'conductivity-undefined' | 'bad-input' | null;
  mantlePotentialTemperatureC: number;
}

/** Rock kind of layer i. */
export function layerRock(cm: CompiledModel, i: number): RockKind {
  return ROCK_KINDS[cm.rock[i]];
}

/** The solidus pair of the rock at layer i. */
export function layerSolidus(cm: CompiledModel, i: number): { wet: SolidusCurve; dry: SolidusCurve } {
  return ROCK_SOLIDUS[layerRock(cm, i)];
}

const MANTLE = ROCK_KINDS.indexOf('mantle');

/** Temperature (°C) before the melt limit: conductive, or the adiabat in mantle layers below the lithosphere base. */
function boundedTemperature(cm: CompiledModel, st: ColumnState, lithosphereBaseKm: number, z: number): number {
  if (lithosphereBaseKm <= z && cm.rock[layerAt(cm, z)] === MANTLE) return adiabatTemperatureC(cm.mantlePotentialTemperatureC, z, cm.gravityMS2);
  return columnTemperature(cm, st, z);
}

/** The functions whose first root columnLimits looks for (see rootValue). */
const ADIABAT_CROSSING = 0,
  ADIABAT_BELOW_DRY_PERIDOTITE = 1,
  DRY_SOLIDUS = 2,
  WET_SOLIDUS = 3;

/**
 * The column a search runs on: one object reused by every columnLimits call (the search runs to completion
 * synchronously, so calls never overlap), so a grid of columns allocates nothing per cell.
 */
const search = { cm: null as unknown as CompiledModel, st: null as unknown as ColumnState, lb: NaN };

/**
 * f(z) of search function `kind` for the column in `search`: T_cond − T_adiabat (the lithosphere base), the dry
 * peridotite solidus − T_adiabat (where decompression melting ends), and the bounded temperature − the dry or wet
 * solidus of the rock at z (melt onset, wet solidus).
 */
function rootValue(kind: number, z: number): number {
  const { cm, st } = search;
  const tp = cm.mantlePotentialTemperatureC,
    g = cm.gravityMS2;
  if (kind === ADIABAT_CROSSING) return columnTemperature(cm, st, z) - adiabatTemperatureC(tp, z, g);
  const p = lithostaticPressureMPa(cm, z);
  if (kind === ADIABAT_BELOW_DRY_PERIDOTITE) return ROCK_SOLIDUS.mantle.dry.temperatureC(p) - adiabatTemperatureC(tp, z, g);
  const pair = layerSolidus(cm, layerAt(cm, z));
  return boundedTemperature(cm, st, search.lb, z) - (kind === DRY_SOLIDUS ? pair.dry : pair.wet).temperatureC(p);
}

/** First z in [from, to] where rootValue(kind, z) ≥ 0 (scan every step, then bisection to 1e-6 km); NaN where it is NaN or none. */
function firstRoot(kind: number, from: number, to: number, step: number): number {
  if (!(to >= from)) return NaN;
  let zPrev = NaN;
  const n = Math.max(1, Math.ceil((to - from) / step - 1e-9));
  for (let j = 0; j <= n; j++) {
    const z = Math.min(from + j * step, to);
    const v = rootValue(kind, z);
    if (v !== v) {
      zPrev = NaN;
      continue;
    }
    if (v >= 0) {
      if (zPrev !== zPrev) return z;
      let lo = zPrev,
        hi = z;
      while (hi - lo > 1e-6) {
        const mid = 0.5 * (lo + hi);
        if (rootValue(kind, mid) >= 0) hi = mid;
        else lo = mid;
      }
      return hi;
    }
    zPrev = z;
  }
  return NaN;
}

/** A ColumnLimits to fill (columnLimits' `out`). */
export function emptyColumnLimits(): ColumnLimits {
  return {
    wetSolidusKm: NaN,
    wetSolidusLayer: -1,
    meltOnsetKm: NaN,
    meltOnsetLayer: -1,
    lithosphereBaseKm: NaN,
    adiabatAboveDrySolidusToKm: NaN,
    mantleTopKm: NaN,
    validToKm: 0,
    endReason: 'bad-input',
    mantlePotentialTemperatureC: NaN,
  };
}

/**
 * Melt and mantle limits of a solved column down to maxDepthKm (scan step stepKm, default 0.1 km). See the file
 * comment for the rules; all depths in km, NaN = not reached. `out` (every field overwritten) may be passed to reuse
 * one object over many columns; by default a new one is returned.
 */
export function columnLimits(cm: CompiledModel, st: ColumnState, maxDepthKm: number, stepKm = 0.1, out: ColumnLimits = emptyColumnLimits()): ColumnLimits {
  out.wetSolidusKm = NaN;
  out.wetSolidusLayer = -1;
  out.meltOnsetKm = NaN;
  out.meltOnsetLayer = -1;
  out.lithosphereBaseKm = NaN;
  out.adiabatAboveDrySolidusToKm = NaN;
  out.mantleTopKm = NaN;
  out.validToKm = 0;
  out.endReason = 'bad-input';
  out.mantlePotentialTemperatureC = cm.mantlePotentialTemperatureC;
  if (st.status & COLUMN_BAD_INPUT) return out;
  search.cm = cm;
  search.st = st;
  search.lb = NaN;
  // Lithosphere base: first mantle depth (in the conductive column's valid part) where T_cond ≥ T_adiabat.
  for (let i = 0; i < cm.nLayers; i++) {
    if (cm.rock[i] !== MANTLE || cm.topKm[i] > maxDepthKm) continue;
    if (!(out.mantleTopKm === out.mantleTopKm)) out.mantleTopKm = cm.topKm[i];
    const to = Math.min(cm.bottomKm[i], maxDepthKm, st.validToKm);
    const z = firstRoot(ADIABAT_CROSSING, cm.topKm[i], to, stepKm);
    if (z === z) {
      out.lithosphereBaseKm = z;
      break;
    }
  }
  if (out.mantleTopKm === out.mantleTopKm) {
    // Where the adiabat drops below the dry peridotite solidus (the solidus rises about 4 K/km, the adiabat 0.4).
    if (rootValue(ADIABAT_BELOW_DRY_PERIDOTITE, out.mantleTopKm) < 0) {
      const z = firstRoot(ADIABAT_BELOW_DRY_PERIDOTITE, out.mantleTopKm, Math.max(maxDepthKm, out.mantleTopKm), stepKm);
      out.adiabatAboveDrySolidusToKm = z === z ? z : maxDepthKm;
    }
  }
  const lb = out.lithosphereBaseKm;
  search.lb = lb;
  const condValid = lb === lb ? Math.max(maxDepthKm, cm.stackBottomKm) : st.validToKm;
  const to = Math.min(maxDepthKm, condValid);
  out.meltOnsetKm = firstRoot(DRY_SOLIDUS, 0, to, stepKm);
  out.wetSolidusKm = firstRoot(WET_SOLIDUS, 0, to, stepKm);
  if (out.meltOnsetKm === out.meltOnsetKm) out.meltOnsetLayer = layerAt(cm, out.meltOnsetKm);
  if (out.wetSolidusKm === out.wetSolidusKm) out.wetSolidusLayer = layerAt(cm, out.wetSolidusKm);
  if (out.meltOnsetKm === out.meltOnsetKm) {
    out.validToKm = out.meltOnsetKm;
    out.endReason = 'melt-onset';
  } else if (condValid < maxDepthKm) {
    out.validToKm = condValid;
    out.endReason = st.status & 1 ? 'heat-flow-exhausted' : 'conductivity-undefined';
  } else {
    out.validToKm = maxDepthKm;
    out.endReason = null;
  }
  return out;
}

/**
 * Temperature (°C) at depth z (km) under the limits: conductive, the adiabat below the lithosphere base in mantle
 * layers, NaN below the column's valid depth (melt onset first).
 */
export function limitedTemperature(cm: CompiledModel, st: ColumnState, lim: ColumnLimits, z: number): number {
  if (!(z >= 0) || z > lim.validToKm) return NaN;
  return boundedTemperature(cm, st, lim.lithosphereBaseKm, z);
}

/** Whether the temperature at depth z (km) comes from the adiabat (true) or conduction. */
export function isAdiabatic(cm: CompiledModel, lim: ColumnLimits, z: number): boolean {
  return lim.lithosphereBaseKm <= z && cm.rock[layerAt(cm, z)] === MANTLE;
}

/**
 * Depth (km) of the isotherm tIso (°C) under the limits: the conductive root above the lithosphere base, the adiabat's
 * below it; NaN when not reached above maxDepthKm or only below the valid depth (see ColumnLimits.endReason).
 */
export function limitedIsothermDepth(cm: CompiledModel, st: ColumnState, lim: ColumnLimits, tIso: number, maxDepthKm: number): number {
  const lb = lim.lithosphereBaseKm;
  let z: number;
  if (lb === lb) {
    z = columnIsothermDepth(cm, st, tIso, lb);
    if (z !== z) {
      const za = adiabatDepthKm(cm.mantlePotentialTemperatureC, tIso, cm.gravityMS2);
      z = za === za ? Math.max(za, lb) : NaN;
    }
  } else {
    z = columnIsothermDepth(cm, st, tIso, maxDepthKm);
  }
  return z <= maxDepthKm && z <= lim.validToKm ? z : NaN;
}

/** Per model: the dry solidus (°C) at each layer top, its minimum over the layer (every dry curve rises with pressure or is flat). */
export function dryAtTops(cm: CompiledModel): Float64Array {
  return Float64Array.from({ length: cm.nLayers }, (_, i) => layerSolidus(cm, i).dry.temperatureC(lithostaticPressureMPa(cm, cm.topKm[i])));
}

/**
 * The limits of a solved column when they can act above zMax (km), else null. Fast path: when no solved layer gets
 * as hot at its base as its dry solidus at its top (`dryTop`, from dryAtTops), nor (mantle) as the adiabat at its
 * top, neither melt nor the adiabat can act above the solved depth (layers left unsolved by a lazy solve lie below
 * every answer asked for) and null is returned; `force` skips the fast path. Otherwise columnLimits over the solved
 * part, into `out` when given.
 */
export function limitsWhereReached(
  cm: CompiledModel,
  st: ColumnState,
  zMax: number,
  dryTop: Float64Array,
  force = false,
  out?: ColumnLimits,
): ColumnLimits | null {
  if (st.status & COLUMN_BAD_INPUT) return force ? columnLimits(cm, st, zMax, 0.1, out) : null;
  let hot = force,
    zSolved = 0;
  if (!hot) {
    const tT = st.tTopC;
    for (let i = 0; i < cm.nLayers && cm.topKm[i] <= zMax; i++) {
      const tb = tT[i + 1];
      if (!Number.isFinite(tb)) break;
      zSolved = cm.bottomKm[i];
      if (tb >= dryTop[i] || (cm.rock[i] === MANTLE && tb >= adiabatTemperatureC(cm.mantlePotentialTemperatureC, cm.topKm[i], cm.gravityMS2))) {
        hot = true;
        break;
      }
    }
  }
  if (!hot) return null;
  // Scan only the solved part (all of it after a full solve).
  let zScan = zMax;
  for (let i = 0; i < cm.nLayers; i++)
    if (!Number.isFinite(st.tTopC[i + 1])) {
      zScan = Math.min(zMax, Math.max(zSolved, cm.topKm[i]));
      break;
    }
  return columnLimits(cm, st, zScan, 0.1, out);
}
