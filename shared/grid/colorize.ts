/**
 * Maps grid values to RGBA pixels through the project's ramps (shared/grid/ramps.ts) or a class table, for PNG
 * exports: NaN (no data) is fully transparent. A continuous ramp is sampled into a 256-entry lookup table once, so a
 * cell costs one multiply and four byte copies (8-bit colour has no more levels to show anyway).
 */
import { rampColor, type Ramp } from './ramps.ts';
import type { Legend } from './legend.ts';

function hexToRgb(hex: string): [number, number, number] {
  const n = parseInt(hex.slice(1), 16);
  return [(n >> 16) & 255, (n >> 8) & 255, n & 255];
}

/**
 * RGBA pixels (row-major, 4 bytes a cell) of `values` spread linearly over [min, max] along `ramp`; values outside
 * are clamped to the end colours, NaN is transparent. When min = max every finite cell takes the ramp's middle colour.
 */
export function colorizeRamp(values: ArrayLike<number>, ramp: Ramp, min: number, max: number, out?: Uint8Array): Uint8Array {
  if (!Number.isFinite(min) || !Number.isFinite(max) || max < min) throw new RangeError(`colour range must be finite with min ≤ max, got ${min}, ${max}`);
  const n = values.length;
  const px = out ?? new Uint8Array(4 * n);
  if (px.length < 4 * n) throw new RangeError(`pixel buffer of ${px.length} bytes is shorter than ${4 * n}`);
  const lut = new Uint8Array(256 * 3);
  const c: [number, number, number] = [0, 0, 0];
  for (let i = 0; i < 256; i++) {
    rampColor(ramp, i / 255, c);
    lut[3 * i] = c[0];
    lut[3 * i + 1] = c[1];
    lut[3 * i + 2] = c[2];
  }
  const span = max - min;
  const scale = span > 0 ? 255 / span : 0;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    const o = 4 * i;
    if (!Number.isFinite(v)) {
      px[o] = 0;
      px[o + 1] = 0;
      px[o + 2] = 0;
      px[o + 3] = 0;
      continue;
    }
    let k = span > 0 ? Math.round((v - min) * scale) : 128;
    k = k < 0 ? 0 : k > 255 ? 255 : k;
    px[o] = lut[3 * k];
    px[o + 1] = lut[3 * k + 1];
    px[o + 2] = lut[3 * k + 2];
    px[o + 3] = 255;
  }
  return px;
}

/** RGBA pixels of a class grid: each cell whose value equals a class value takes its colour; others are transparent. */
export function colorizeClasses(values: ArrayLike<number>, classes: { value: number; color: string }[], out?: Uint8Array): Uint8Array {
  const n = values.length;
  const px = out ?? new Uint8Array(4 * n);
  if (px.length < 4 * n) throw new RangeError(`pixel buffer of ${px.length} bytes is shorter than ${4 * n}`);
  const table = new Map<number, [number, number, number]>(classes.map((k) => [k.value, hexToRgb(k.color)]));
  for (let i = 0; i < n; i++) {
    const rgb = Number.isFinite(values[i]) ? table.get(values[i]) : undefined;
    const o = 4 * i;
    if (rgb === undefined) {
      px[o] = 0;
      px[o + 1] = 0;
      px[o + 2] = 0;
      px[o + 3] = 0;
    } else {
      px[o] = rgb[0];
      px[o + 1] = rgb[1];
      px[o + 2] = rgb[2];
      px[o + 3] = 255;
    }
  }
  return px;
}

/** A continuous legend: the ramp's colours spread evenly from min to max, in `units`. */
export function rampLegend(ramp: Ramp, units: string, min: number, max: number): Legend {
  return { type: 'ramp', units, min, max, colors: [...ramp.colors] };
}

/** RGBA pixels for a legend: a ramp legend through colorizeRamp, a class legend through colorizeClasses. */
export function colorizeWithLegend(values: ArrayLike<number>, legend: Legend, ramp: Ramp | null, out?: Uint8Array): Uint8Array {
  if (legend.type === 'classes') return colorizeClasses(values, legend.classes, out);
  if (ramp === null) throw new RangeError('a ramp legend needs its ramp');
  return colorizeRamp(values, ramp, legend.min, legend.max, out);
}

/**
 * Plain-text description of a legend (value → colour, units), one line per stop or class, for a PNG tEXt chunk.
 */
export function legendText(legend: Legend): string {
  const note = legend.note === undefined ? [] : [legend.note];
  if (legend.type === 'classes') {
    return [`classes (${legend.units})`, ...legend.classes.map((k) => `${k.value} ${k.color} ${k.label}`), ...note].join('\n');
  }
  const n = legend.colors.length - 1;
  const lines = legend.colors.map((c, i) => `${+(legend.min + ((legend.max - legend.min) * i) / Math.max(1, n)).toPrecision(6)} ${c}`);
  return [`ramp (${legend.units}), linear between stops; no data transparent`, ...lines, ...note].join('\n');
}
