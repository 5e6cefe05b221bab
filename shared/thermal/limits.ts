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

/** First z in [from, to] where f(z) ≥ 0 (scan every step, then bisection to 1e-6 km); NaN where f is NaN or none. */
function firstRoot(f: (z: number) => number, from: number, to: number, step: number): number {
  if (!(to >= from)) return NaN;
  let zPrev = NaN;
  const n = Math.max(1, Math.ceil((to - from) / step - 1e-9));
  for (let j = 0; j <= n; j++) {
    const z = Math.min(from + j * step, to);
    const v = f(z);
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
        if (f(mid) >= 0) hi = mid;
        else lo = mid;
      }
      return hi;
    }
    zPrev = z;
  }
  return NaN;
}

/**
 * Melt and mantle limits of a solved column down to maxDepthKm (scan step stepKm, default 0.1 km). See the file
 * comment for the rules; all depths in km, NaN = not reached.
 */
export function columnLimits(cm: CompiledModel, st: ColumnState, maxDepthKm: number, stepKm = 0.1): ColumnLimits {
  const tp = cm.mantlePotentialTemperatureC,
    g = cm.gravityMS2;
  const out: ColumnLimits = {
    wetSolidusKm: NaN,
    wetSolidusLayer: -1,
    meltOnsetKm: NaN,
    meltOnsetLayer: -1,
    lithosphereBaseKm: NaN,
    adiabatAboveDrySolidusToKm: NaN,
    mantleTopKm: NaN,
    validToKm: 0,
    endReason: 'bad-input',
    mantlePotentialTemperatureC: tp,
  };
  if (st.status & COLUMN_BAD_INPUT) return out;
  const P = (z: number) => lithostaticPressureMPa(cm, z);
  // Lithosphere base: first mantle depth (in the conductive column's valid part) where T_cond ≥ T_adiabat.
  for (let i = 0; i < cm.nLayers; i++) {
    if (cm.rock[i] !== MANTLE || cm.topKm[i] > maxDepthKm) continue;
    if (!(out.mantleTopKm === out.mantleTopKm)) out.mantleTopKm = cm.topKm[i];
    const to = Math.min(cm.bottomKm[i], maxDepthKm, st.validToKm);
    const z = firstRoot((zz) => columnTemperature(cm, st, zz) - adiabatTemperatureC(tp, zz, g), cm.topKm[i], to, stepKm);
    if (z === z) {
      out.lithosphereBaseKm = z;
      break;
    }
  }
  if (out.mantleTopKm === out.mantleTopKm) {
    // Where the adiabat drops below the dry peridotite solidus (the solidus rises about 4 K/km, the adiabat 0.4).
    const dry = ROCK_SOLIDUS.mantle.dry;
    const f = (z: number) => dry.temperatureC(P(z)) - adiabatTemperatureC(tp, z, g);
    if (f(out.mantleTopKm) < 0) {
      const z = firstRoot(f, out.mantleTopKm, Math.max(maxDepthKm, out.mantleTopKm), stepKm);
      out.adiabatAboveDrySolidusToKm = z === z ? z : maxDepthKm;
    }
  }
  const lb = out.lithosphereBaseKm;
  const condValid = lb === lb ? Math.max(maxDepthKm, cm.stackBottomKm) : st.validToKm;
  const to = Math.min(maxDepthKm, condValid);
  const T = (z: number) => boundedTemperature(cm, st, lb, z);
  out.meltOnsetKm = firstRoot((z) => T(z) - layerSolidus(cm, layerAt(cm, z)).dry.temperatureC(P(z)), 0, to, stepKm);
  out.wetSolidusKm = firstRoot((z) => T(z) - layerSolidus(cm, layerAt(cm, z)).wet.temperatureC(P(z)), 0, to, stepKm);
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
 * every answer asked for) and null is returned; `force` skips the fast path. Otherwise columnLimits over the solved part.
 */
export function limitsWhereReached(cm: CompiledModel, st: ColumnState, zMax: number, dryTop: Float64Array, force = false): ColumnLimits | null {
  if (st.status & COLUMN_BAD_INPUT) return force ? columnLimits(cm, st, zMax) : null;
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
  return columnLimits(cm, st, zScan);
}
