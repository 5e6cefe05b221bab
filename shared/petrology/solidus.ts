/**
 * Solidus curves, temperature (°C) as a function of pressure.
 *
 * Dry peridotite: Hirschmann (2000, Geochem. Geophys. Geosyst. 1), T = −5.104·P² + 132.899·P + 1120.661,
 * P in GPa, fitted for 0–10 GPa.
 *
 * Water-saturated granite: a monotone cubic (Fritsch–Carlson / PCHIP) through Huang & Wyllie (1973) values
 * 680 °C at 2 kbar and 620 °C at 10 kbar [checked], plus this project's approximate low-pressure branch (720 °C at
 * 1 kbar, 760 °C at 0.5 kbar, from memory: the wet solidus rises steeply as water pressure falls). Outside 2–10 kbar
 * the curve is marked approximate; above 10 kbar it is held at 620 °C (approximate); below 0.5 kbar it is undefined.
 */

/** Hirschmann (2000) dry peridotite solidus, °C, at pressureGPa (0–10 GPa; NaN outside). */
export function dryPeridotiteSolidusC(pressureGPa: number): number {
  if (!(pressureGPa >= 0 && pressureGPa <= 10)) return NaN;
  return -5.104 * pressureGPa * pressureGPa + 132.899 * pressureGPa + 1120.661;
}

/** Nodes of the water-saturated granite curve: [pressure kbar, temperature °C, checked against the source?]. */
export const WET_GRANITE_SOLIDUS_NODES: readonly [number, number, boolean][] = Object.freeze([
  [0.5, 760, false],
  [1, 720, false],
  [2, 680, true],
  [10, 620, true],
] as [number, number, boolean][]);

const NODES_P = WET_GRANITE_SOLIDUS_NODES.map((n) => n[0]);
const NODES_T = WET_GRANITE_SOLIDUS_NODES.map((n) => n[1]);

/** PCHIP derivatives (Fritsch & Carlson 1980; endpoint formula of Moler, Numerical Computing with MATLAB §3.6). */
function pchipSlopes(x: number[], y: number[]): number[] {
  const n = x.length;
  const h = x.slice(1).map((v, i) => v - x[i]);
  const del = h.map((hi, i) => (y[i + 1] - y[i]) / hi);
  const d = new Array<number>(n).fill(0);
  for (let k = 1; k < n - 1; k++) {
    if (del[k - 1] * del[k] > 0) {
      const w1 = 2 * h[k] + h[k - 1], w2 = h[k] + 2 * h[k - 1];
      d[k] = (w1 + w2) / (w1 / del[k - 1] + w2 / del[k]);
    }
  }
  const end = (h0: number, h1: number, d0: number, d1: number) => {
    let s = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    if (Math.sign(s) !== Math.sign(d0)) s = 0;
    else if (Math.sign(d0) !== Math.sign(d1) && Math.abs(s) > Math.abs(3 * d0)) s = 3 * d0;
    return s;
  };
  d[0] = end(h[0], h[1], del[0], del[1]);
  d[n - 1] = end(h[n - 2], h[n - 3], del[n - 2], del[n - 3]);
  return d;
}

const SLOPES = pchipSlopes(NODES_P, NODES_T);

/** Water-saturated granite solidus, °C, at pressureKbar (NaN below 0.5 kbar). See isWetGraniteSolidusApproximate. */
export function wetGraniteSolidusC(pressureKbar: number): number {
  const p = pressureKbar;
  if (!(p >= NODES_P[0])) return NaN;
  const n = NODES_P.length;
  if (p >= NODES_P[n - 1]) return NODES_T[n - 1];
  let k = 0;
  while (p > NODES_P[k + 1]) k++;
  const h = NODES_P[k + 1] - NODES_P[k];
  const s = (p - NODES_P[k]) / h;
  const h00 = (1 + 2 * s) * (1 - s) * (1 - s), h10 = s * (1 - s) * (1 - s), h01 = s * s * (3 - 2 * s), h11 = s * s * (s - 1);
  return h00 * NODES_T[k] + h10 * h * SLOPES[k] + h01 * NODES_T[k + 1] + h11 * h * SLOPES[k + 1];
}

/** True where the wet granite curve is not between the checked points (below 2 kbar or above 10 kbar). */
export function isWetGraniteSolidusApproximate(pressureKbar: number): boolean {
  return !(pressureKbar >= 2 && pressureKbar <= 10);
}
