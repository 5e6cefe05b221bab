/**
 * The raster-dem encoding of our terrain and scalar tiles, MapLibre's "mapbox" encoding:
 * value = −10000 + (R·256² + G·256 + B)·0.1. The step is 0.1 (0.1 m of elevation) over −10000 … 1,667,721.5, so
 * elevations keep 0.1 m precision. Encoded here once so the server writes and the tests read the same numbers.
 */
export const TERRAIN_RGB = { base: -10000, step: 0.1 } as const;

/** Writes the RGB bytes of `value` at `offset` (3 bytes). Values are clamped into the encodable range. */
export function encodeTerrainRgb(value: number, out: Uint8Array, offset: number): void {
  let n = Math.round((value - TERRAIN_RGB.base) / TERRAIN_RGB.step);
  if (!(n >= 0)) n = 0;
  if (n > 0xffffff) n = 0xffffff;
  out[offset] = (n >> 16) & 0xff;
  out[offset + 1] = (n >> 8) & 0xff;
  out[offset + 2] = n & 0xff;
}

/** Decodes the value of one RGB pixel. */
export function decodeTerrainRgb(r: number, g: number, b: number): number {
  return TERRAIN_RGB.base + (r * 65536 + g * 256 + b) * TERRAIN_RGB.step;
}
