/**
 * RGB encodings of scalar grids as raster-dem tiles, decoded on the GPU by MapLibre:
 * value = baseShift + (R·256² + G·256 + B)·step (MapLibre's `custom` encoding with redFactor = 65536·step,
 * greenFactor = 256·step, blueFactor = step). The code 0 is reserved for no data in scalar layers.
 * Terrain uses MapLibre's `mapbox` encoding, the same form with step 0.1 m and baseShift −10000 m.
 */
export interface RgbEncoding {
  /** Value of one code step (the precision), in the grid's units. */
  step: number;
  /** Value of code 0. */
  baseShift: number;
  /** Code 0 means no data (scalar layers); false for terrain, where code 0 is simply −10000 m. */
  noDataAtZero: boolean;
}

export const TERRAIN_RGB: RgbEncoding = { step: 0.1, baseShift: -10000, noDataAtZero: false };

const MAX_CODE = 0xffffff;

/**
 * The encoding for a quantity: the step is chosen so the precision fits it (DESIGN.md §7) — 1 m for depths in km,
 * 0.01 mW/m² for heat flow, 0.01 °C for temperatures, 0.001 for probabilities and other small numbers — and the
 * range starts one step below `min` so code 0 stays free for no data. The 2²⁴ − 1 codes then span 16,777 km of
 * depth, 167,772 mW/m² or °C: far beyond any grid.
 */
export function encodingForUnits(units: string, min: number): RgbEncoding {
  const step = units === 'km' ? 0.001 : units === 'mW/m²' || units === '°C' ? 0.01 : units === 'm' ? 0.1 : 0.001;
  const lo = Number.isFinite(min) ? min : 0;
  return { step, baseShift: Math.floor(lo / step) * step - step, noDataAtZero: true };
}

/** Writes the RGB bytes of `value` at `offset` (3 bytes); NaN → code 0 when the encoding reserves it. */
export function encodeRgb(enc: RgbEncoding, value: number, out: Uint8Array, offset: number): void {
  let n: number;
  if (!Number.isFinite(value)) n = 0;
  else {
    n = Math.round((value - enc.baseShift) / enc.step);
    if (enc.noDataAtZero && n < 1) n = 1;
    if (!(n >= 0)) n = 0;
    if (n > MAX_CODE) n = MAX_CODE;
  }
  out[offset] = (n >> 16) & 0xff;
  out[offset + 1] = (n >> 8) & 0xff;
  out[offset + 2] = n & 0xff;
}

/** Decodes one RGB pixel (NaN for the no-data code). */
export function decodeRgb(enc: RgbEncoding, r: number, g: number, b: number): number {
  const n = r * 65536 + g * 256 + b;
  if (enc.noDataAtZero && n === 0) return NaN;
  return enc.baseShift + n * enc.step;
}

/**
 * MapLibre raster-dem source fields for an encoding. MapLibre decodes value = R·redFactor + G·greenFactor +
 * B·blueFactor − baseShift (its "mapbox" preset is 6553.6, 25.6, 0.1, 10000), so its baseShift is the negative of
 * this module's (the value of code 0).
 */
export function maplibreEncoding(enc: RgbEncoding): { encoding: 'custom'; redFactor: number; greenFactor: number; blueFactor: number; baseShift: number } {
  return { encoding: 'custom', redFactor: 65536 * enc.step, greenFactor: 256 * enc.step, blueFactor: enc.step, baseShift: -enc.baseShift };
}

/** Terrain shorthands. */
export function encodeTerrainRgb(value: number, out: Uint8Array, offset: number): void {
  encodeRgb(TERRAIN_RGB, Number.isFinite(value) ? value : 0, out, offset);
}
export function decodeTerrainRgb(r: number, g: number, b: number): number {
  return decodeRgb(TERRAIN_RGB, r, g, b);
}
