/**
 * Compiles a thermal model once into flat typed arrays, so a column (or a million of them) is evaluated in closed
 * form without looking at the JSON again.
 *
 * Units, chosen so the closed forms need no conversion factors:
 *   q [mW/m²], A [µW/m³], z [km], k [W/m/K], T [°C].
 *   ∫A dz: µW/m³ · km = 10⁻⁶ W/m³ · 10³ m = 10⁻³ W/m² = mW/m², so q(z) = q_top − ∫A dz directly.
 *   q·z/k: 10⁻³ W/m² · 10³ m / (W/m/K) = K, so a heat flow times a depth over a conductivity is °C directly.
 *   A·z²/k: 10⁻⁶ W/m³ · 10⁶ m² / (W/m/K) = K, likewise.
 * Lithostatic pressure: ρ [kg/m³] · g [m/s²] · z [km] · 10³ m/km = Pa, i.e. ρ·g·z·10⁻³ MPa.
 */
import { heatProductionFromRadioelements } from './heat-production.ts';
import { ROCK_KINDS, type RockKind } from '../schema/model.ts';
import { DEFAULT_DENSITY_KG_M3, DEFAULT_GRAVITY_MS2, DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C, DEFAULT_ROCK, type ThermalModel } from './model.ts';

export interface CompiledModel {
  nLayers: number;
  names: string[];
  surfaceTemperatureC: number;
  /** The model's own surface heat flow (NaN when it gives none). */
  surfaceHeatFlowMWm2: number;
  /** Bottom of the last layer as written in the model, km. */
  modelBottomKm: number;
  /** Deepest depth queries look at (isotherm searches stop here), km. */
  maxDepthKm: number;
  /** Bottom of the evaluated stack: max(model bottom, maxDepthKm); the last layer is extended to it. */
  stackBottomKm: number;
  /** Per layer (length nLayers): top and bottom depth (km), thickness (km). The last bottom is stackBottomKm. */
  topKm: Float64Array;
  bottomKm: Float64Array;
  thicknessKm: Float64Array;
  /** k0 (W/m/K) and b (1/K) of k(T) = k0/(1 + bT). */
  k0: Float64Array;
  b: Float64Array;
  /** Heat production at the layer top, µW/m³, and decay depth D, km (0 = constant). */
  aTop: Float64Array;
  decayKm: Float64Array;
  densityKgM3: Float64Array;
  /** ∫A dz over the whole layer, mW/m². */
  i1: Float64Array;
  /** ∫₀ᴴ∫₀ˢ A dz ds over the whole layer, mW/m²·km (so i2/k is K). */
  i2: Float64Array;
  /** ∫A dz from the surface to the layer top, mW/m². */
  heatAboveMWm2: Float64Array;
  /** Lithostatic pressure at the layer top, MPa. */
  pressureTopMPa: Float64Array;
  gravityMS2: number;
  /** Total ∫A dz over the stack, mW/m² (q0 − q_base). */
  totalHeatProductionMWm2: number;
  /**
   * q0 − qr for the layer marked `heatProducingUpperCrust` (index reducedHeatFlowLayer): the heat produced above it
   * plus A_top·D for an exponential layer (the Birch/Lachenbruch intercept q0 = qr + D·A0), or plus the layer's whole
   * ∫A dz for a constant one (the flow entering its base). NaN when no layer is marked ('not-applicable').
   */
  reducedHeatFlowOffsetMWm2: number;
  reducedHeatFlowMethod: 'exponential' | 'constant-layer' | 'not-applicable';
  /** Index of the layer marked heatProducingUpperCrust, −1 when none. */
  reducedHeatFlowLayer: number;
  /** Rock kind per layer, as an index into ROCK_KINDS. */
  rock: Uint8Array;
  /** Mantle potential temperature, °C. */
  mantlePotentialTemperatureC: number;
  warnings: string[];
}

export interface CompileOptions {
  /** Queries stop at this depth; the last layer is extended to it when the model is shallower (km). */
  maxDepthKm?: number;
  /** Gravity for lithostatic pressure, m/s² (default 9.81). */
  gravityMS2?: number;
}

/** ∫₀^dz A: constant A·dz, exponential A·D·(1 − e^(−dz/D)) (mW/m² with A µW/m³, dz km). */
export function layerI1(a: number, d: number, dz: number): number {
  return d > 0 ? a * d * -Math.expm1(-dz / d) : a * dz;
}

/** ∫₀^dz∫₀^s A: constant A·dz²/2, exponential A·D·(dz − D·(1 − e^(−dz/D))) (mW/m²·km). */
export function layerI2(a: number, d: number, dz: number): number {
  return d > 0 ? a * d * (dz + d * Math.expm1(-dz / d)) : 0.5 * a * dz * dz;
}

type ModelLayer = ThermalModel['layers'][number];

/**
 * A layer's k0 (W/m/K) and b (1/K) of k(T) = k0/(1 + bT), from the conductivity given at its reference temperature
 * (k0 = k_ref·(1 + b·T_ref)), and its rock kind as an index into ROCK_KINDS. RangeError naming the layer otherwise.
 */
function layerConductivity(L: ModelLayer, label: string): { k0: number; b: number; rockIndex: number } {
  const kGiven = L.conductivityWmK;
  if (!(kGiven > 0)) throw new RangeError(`${label}: conductivityWmK must be > 0, got ${kGiven}`);
  const bb = L.conductivityTempCoeffPerK ?? 0;
  if (!Number.isFinite(bb)) throw new RangeError(`${label}: conductivityTempCoeffPerK must be finite, got ${bb}`);
  const tRef = L.conductivityReferenceTempC ?? 0;
  if (!Number.isFinite(tRef)) throw new RangeError(`${label}: conductivityReferenceTempC must be finite, got ${tRef}`);
  const k = kGiven * (1 + bb * tRef);
  if (!(k > 0)) throw new RangeError(`${label}: 1 + b·T_ref ≤ 0 at conductivityReferenceTempC ${tRef} °C`);
  const rk: RockKind = L.rock ?? DEFAULT_ROCK;
  const rockIndex = ROCK_KINDS.indexOf(rk);
  if (rockIndex < 0) throw new RangeError(`${label}: unknown rock ${String(rk)}`);
  return { k0: k, b: bb, rockIndex };
}

/**
 * A layer's density (kg/m³; the default with a warning when not given), heat production at its top (µW/m³, given or
 * from U, Th, K by `heatProductionFromRadioelements`) and decay depth (km; 0 = constant). RangeError naming the layer.
 */
function layerHeatSources(L: ModelLayer, label: string, warnings: string[]): { densityKgM3: number; heatProductionUWm3: number; decayKm: number } {
  let rho = L.densityKgM3;
  if (rho === undefined) {
    rho = DEFAULT_DENSITY_KG_M3;
    warnings.push(`${label}: no densityKgM3, ${DEFAULT_DENSITY_KG_M3} kg/m³ assumed for pressure`);
  }
  if (!(rho > 0)) throw new RangeError(`${label}: densityKgM3 must be > 0, got ${rho}`);
  let a = L.heatProductionUWm3;
  if (a === undefined) {
    if (L.uraniumPpm === undefined || L.thoriumPpm === undefined || L.potassiumPct === undefined) {
      throw new RangeError(`${label}: heatProductionUWm3 or all of uraniumPpm, thoriumPpm, potassiumPct are needed`);
    }
    a = heatProductionFromRadioelements(rho, L.uraniumPpm, L.thoriumPpm, L.potassiumPct);
  }
  if (!(a >= 0)) throw new RangeError(`${label}: heat production must be ≥ 0 µW/m³, got ${a}`);
  const d = L.heatProductionDecayKm ?? 0;
  if (L.heatProductionDecayKm !== undefined && !(d > 0)) throw new RangeError(`${label}: heatProductionDecayKm must be > 0, got ${d}`);
  return { densityKgM3: rho, heatProductionUWm3: a, decayKm: d };
}

/** The per-layer arrays of a compiled model (length n), zero-filled. */
function layerArrays(n: number) {
  const f = () => new Float64Array(n);
  return {
    topKm: f(),
    bottomKm: f(),
    thicknessKm: f(),
    k0: f(),
    b: f(),
    aTop: f(),
    decayKm: f(),
    densityKgM3: f(),
    i1: f(),
    i2: f(),
    heatAboveMWm2: f(),
    pressureTopMPa: f(),
  };
}

/**
 * Compiles a deterministic model. Throws RangeError on values no model can have (checked NaN-proof); user input
 * is validated before this by `parseThermalModel` (shared/schema/model.ts), which names the layer and field.
 */
export function compileModel(model: ThermalModel, options: CompileOptions = {}): CompiledModel {
  const layers = model.layers;
  const n = layers.length;
  if (!(n >= 1)) throw new RangeError('a thermal model needs at least one layer');
  const t0 = model.surfaceTemperatureC;
  if (!Number.isFinite(t0)) throw new RangeError(`surfaceTemperatureC must be finite, got ${t0}`);
  const g = options.gravityMS2 ?? DEFAULT_GRAVITY_MS2;
  if (!(g > 0)) throw new RangeError(`gravity must be > 0, got ${g}`);
  const modelBottomKm = layers[n - 1].bottomKm;
  const maxDepthKm = options.maxDepthKm ?? modelBottomKm;
  if (!(maxDepthKm > 0)) throw new RangeError(`maxDepthKm must be > 0, got ${maxDepthKm}`);
  const stackBottomKm = Math.max(modelBottomKm, maxDepthKm);
  const warnings: string[] = [];
  const names: string[] = [];
  const arr = layerArrays(n);
  const { topKm, bottomKm, thicknessKm, k0, b, aTop, decayKm, densityKgM3, i1, i2, heatAboveMWm2, pressureTopMPa } = arr;
  const rock = new Uint8Array(n);
  let reducedLayer = -1;
  let top = 0,
    heat = 0,
    p = 0;
  for (let i = 0; i < n; i++) {
    const L = layers[i];
    const label = L.name !== undefined ? `layers[${i}] (${L.name})` : `layers[${i}]`;
    names.push(L.name ?? `layer ${i + 1}`);
    const bottom = i === n - 1 ? stackBottomKm : L.bottomKm;
    if (!(bottom > top)) throw new RangeError(`${label}: bottomKm must exceed ${top} km, got ${L.bottomKm}`);
    const c = layerConductivity(L, label);
    rock[i] = c.rockIndex;
    if (L.heatProducingUpperCrust === true) {
      if (reducedLayer >= 0) throw new RangeError(`${label}: only one layer may be marked heatProducingUpperCrust`);
      reducedLayer = i;
    }
    if (c.b < 0) warnings.push(`${label}: negative conductivityTempCoeffPerK: k(T) = k0/(1 + bT) grows without bound as T nears ${(-1 / c.b).toFixed(1)} °C`);
    const { densityKgM3: rho, heatProductionUWm3: a, decayKm: d } = layerHeatSources(L, label, warnings);
    const h = bottom - top;
    topKm[i] = top;
    bottomKm[i] = bottom;
    thicknessKm[i] = h;
    k0[i] = c.k0;
    b[i] = c.b;
    aTop[i] = a;
    decayKm[i] = d;
    densityKgM3[i] = rho;
    i1[i] = layerI1(a, d, h);
    i2[i] = layerI2(a, d, h);
    heatAboveMWm2[i] = heat;
    pressureTopMPa[i] = p;
    heat += i1[i];
    p += rho * g * h * 1e-3;
    top = bottom;
  }
  if (stackBottomKm > modelBottomKm) {
    warnings.push(`${names[n - 1]}: the last layer is extrapolated from ${modelBottomKm} km to ${stackBottomKm} km`);
  }
  const markedIsExp = reducedLayer >= 0 && decayKm[reducedLayer] > 0;
  const reducedOffset = reducedLayer < 0 ? NaN : heatAboveMWm2[reducedLayer] + (markedIsExp ? aTop[reducedLayer] * decayKm[reducedLayer] : i1[reducedLayer]);
  const surfaceHeatFlowMWm2 = model.surfaceHeatFlowMWm2 ?? NaN;
  const tp = model.mantlePotentialTemperatureC ?? DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C;
  if (!(tp > -273.15)) throw new RangeError(`mantlePotentialTemperatureC must be above −273.15 °C, got ${tp}`);
  return {
    nLayers: n,
    names,
    surfaceTemperatureC: t0,
    surfaceHeatFlowMWm2,
    modelBottomKm,
    maxDepthKm,
    stackBottomKm,
    ...arr,
    gravityMS2: g,
    totalHeatProductionMWm2: heat,
    reducedHeatFlowOffsetMWm2: reducedOffset,
    reducedHeatFlowMethod: reducedLayer < 0 ? 'not-applicable' : markedIsExp ? 'exponential' : 'constant-layer',
    reducedHeatFlowLayer: reducedLayer,
    rock,
    mantlePotentialTemperatureC: tp,
    warnings,
  };
}
