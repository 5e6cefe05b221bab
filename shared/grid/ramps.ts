/**
 * Colour ramps of this project, shared by the map (MapLibre expressions) and the server's PNG exports, so a legend
 * always means the same colours. Stops run from low to high; lightness rises monotonically along each continuous
 * ramp, so the order reads in greyscale and for the common colour-vision deficiencies.
 */
export interface Ramp {
  name: string;
  /** Colours as #rrggbb, low → high. */
  colors: string[];
}

/** "Ember": deep indigo → slate blue → teal → moss → ochre → pale straw. For heat flow and temperature. */
export const EMBER: Ramp = { name: 'ember', colors: ['#1f1846', '#33407a', '#2f7487', '#5b9f72', '#c9b64d', '#f4ecc2'] };

/** "Depth": pale straw (shallow) → rust → plum → ink. For depth to an isotherm: hot = shallow = light. */
export const DEPTH: Ramp = { name: 'depth', colors: ['#f6e8b8', '#e7a55a', '#c0573e', '#7f2f55', '#3a1c4a', '#150f24'] };

/** "Haze": white → slate, for standard deviations and other uncertainties. */
export const HAZE: Ramp = { name: 'haze', colors: ['#f7f7f4', '#cfd6dc', '#97a6b4', '#5f7284', '#33404e'] };

/**
 * "Balance": teal (negative) → pale grey (zero) → rust (positive). The one diverging ramp, for differences; its
 * legend is symmetric about zero so the pale middle is 0. Lightness falls away from the middle on both sides.
 */
export const BALANCE: Ramp = { name: 'balance', colors: ['#1d5a63', '#5f9ea0', '#e9e7e1', '#d48a5a', '#8a3320'] };

/** Index-mineral zones, chlorite → sillimanite: an ordinal ramp from sage to aubergine. */
export const ZONE_COLORS: Record<string, string> = {
  chlorite: '#cfe3b4',
  biotite: '#8fbf7f',
  garnet: '#e6b84a',
  staurolite: '#d27a3c',
  kyanite: '#a64662',
  sillimanite: '#55286b',
};

/** Fault styling by kind: colour, width (px) and dash pattern (in line widths; empty = solid). */
export const FAULT_STYLE: Record<string, { color: string; width: number; dash: number[] }> = {
  normal: { color: '#7a1e1e', width: 2.2, dash: [] },
  reverse: { color: '#1e3f66', width: 2.2, dash: [] },
  thrust: { color: '#1e3f66', width: 3.2, dash: [] },
  'strike-slip': { color: '#3f3a33', width: 2, dash: [4, 2] },
  unknown: { color: '#5a5a5a', width: 1.6, dash: [1, 2] },
};

function hexToRgb(hex: string): [number, number, number] {
  const n = parseInt(hex.slice(1), 16);
  return [(n >> 16) & 255, (n >> 8) & 255, n & 255];
}

/** Colour (RGB 0–255) of t ∈ [0, 1] along a ramp, linear in RGB between stops. Out-of-range t is clamped. */
export function rampColor(ramp: Ramp, t: number, out: [number, number, number] = [0, 0, 0]): [number, number, number] {
  const n = ramp.colors.length - 1;
  const x = Math.max(0, Math.min(1, Number.isFinite(t) ? t : 0)) * n;
  const i = Math.min(n - 1, Math.floor(x));
  const f = x - i;
  const a = hexToRgb(ramp.colors[i]);
  const b = hexToRgb(ramp.colors[i + 1]);
  out[0] = Math.round(a[0] + (b[0] - a[0]) * f);
  out[1] = Math.round(a[1] + (b[1] - a[1]) * f);
  out[2] = Math.round(a[2] + (b[2] - a[2]) * f);
  return out;
}

/** Stops [value, colour] spreading a ramp evenly over [min, max], e.g. for a MapLibre interpolate expression. */
export function rampStops(ramp: Ramp, min: number, max: number): [number, string][] {
  const n = ramp.colors.length - 1;
  return ramp.colors.map((c, i) => [min + ((max - min) * i) / n, c]);
}
