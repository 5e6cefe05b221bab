import type { RockKind } from '../schema/model.ts';

/**
 * Solidus curves, temperature (°C) as a function of pressure, and the pair of curves of each rock kind.
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

/** PCHIP derivatives (Fritsch & Carlson 1980; endpoint formula of Moler, Numerical Computing with MATLAB §3.6). */
function pchipSlopes(x: number[], y: number[]): number[] {
  const n = x.length;
  const h = x.slice(1).map((v, i) => v - x[i]);
  const del = h.map((hi, i) => (y[i + 1] - y[i]) / hi);
  const d = new Array<number>(n).fill(0);
  for (let k = 1; k < n - 1; k++) {
    if (del[k - 1] * del[k] > 0) {
      const w1 = 2 * h[k] + h[k - 1],
        w2 = h[k] + 2 * h[k - 1];
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

/**
 * The one evaluator of node-defined solidus curves: through [pressure, temperature °C] nodes, NaN below the first
 * node, held at the last above it; between nodes a straight line, or the monotone cubic Hermite (PCHIP) with
 * Fritsch–Carlson slopes.
 */
function nodeCurve(nodes: readonly (readonly [number, number, ...unknown[]])[], shape: 'linear' | 'pchip'): (pressure: number) => number {
  const P = nodes.map((n) => n[0]);
  const T = nodes.map((n) => n[1]);
  const slopes = shape === 'pchip' ? pchipSlopes(P, T) : null;
  const n = P.length;
  return (p) => {
    if (!(p >= P[0])) return NaN;
    if (p >= P[n - 1]) return T[n - 1];
    let k = 0;
    while (p > P[k + 1]) k++;
    const h = P[k + 1] - P[k];
    if (slopes === null) return T[k] + ((T[k + 1] - T[k]) * (p - P[k])) / h;
    const s = (p - P[k]) / h;
    const h00 = (1 + 2 * s) * (1 - s) * (1 - s),
      h10 = s * (1 - s) * (1 - s),
      h01 = s * s * (3 - 2 * s),
      h11 = s * s * (s - 1);
    return h00 * T[k] + h10 * h * slopes[k] + h01 * T[k + 1] + h11 * h * slopes[k + 1];
  };
}

/** Water-saturated granite solidus, °C, at pressureKbar (NaN below 0.5 kbar). See isWetGraniteSolidusApproximate. */
export const wetGraniteSolidusC: (pressureKbar: number) => number = nodeCurve(WET_GRANITE_SOLIDUS_NODES, 'pchip');

/** True where the wet granite curve is not between the checked points (below 2 kbar or above 10 kbar). */
export function isWetGraniteSolidusApproximate(pressureKbar: number): boolean {
  return !(pressureKbar >= 2 && pressureKbar <= 10);
}

/** One named solidus curve: temperature (°C) at lithostatic pressure (MPa), NaN where the curve is not defined. */
export interface SolidusCurve {
  id: string;
  /** What crossing it means: `water-saturated` (melting if free water is present) or `fluid-absent` (dry). */
  kind: 'water-saturated' | 'fluid-absent';
  label: string;
  /** The published source, and whether the values were checked against it or are from memory. */
  source: string;
  temperatureC: (pressureMPa: number) => number;
}

/** Water-saturated granite (Huang & Wyllie 1973; see wetGraniteSolidusC). */
export const WET_GRANITE: SolidusCurve = {
  id: 'wet-granite',
  kind: 'water-saturated',
  label: 'water-saturated granite',
  source: 'Huang & Wyllie (1973): 680 °C at 2 kbar, 620 °C at 10 kbar [checked]; below 2 kbar approximate [from memory]',
  temperatureC: (p) => wetGraniteSolidusC(p / 100),
};

/**
 * Fluid-absent (dehydration) melting of biotite in metapelite and granitic gneiss: Le Breton & Thompson (1988)
 * bracket its onset between 760 and 800 °C at 10 kbar and find a steep positive dP/dT up to 10 kbar [checked against
 * the abstract]; the curve is held at the bracket's middle, 780 °C, at every pressure (this project's approximation
 * of a near-vertical reaction line).
 */
export const FLUID_ABSENT_FELSIC: SolidusCurve = {
  id: 'fluid-absent-felsic',
  kind: 'fluid-absent',
  label: 'fluid-absent (biotite dehydration) melting of felsic rock',
  source: 'Le Breton & Thompson (1988): onset 760–800 °C at 10 kbar [checked, abstract]; held at 780 °C at all pressures (approximation)',
  temperatureC: (p) => (p >= 0 ? 780 : NaN),
};

const WET_BASALT_KBAR = nodeCurve(
  [
    [0.5, 800],
    [2, 720],
    [5, 680],
    [10, 650],
    [25, 640],
  ],
  'linear',
);

/** Water-saturated basalt (gabbro) solidus after Lambert & Wyllie (1972); node values from memory. */
export const WET_BASALT: SolidusCurve = {
  id: 'wet-basalt',
  kind: 'water-saturated',
  label: 'water-saturated basalt',
  source: 'after Lambert & Wyllie (1972) for gabbro: about 720 °C at 2 kbar falling to about 650 °C at 10 kbar [from memory]',
  temperatureC: (p) => WET_BASALT_KBAR(p / 100),
};

/** Dry basalt (gabbro) solidus, about 1100 °C at low pressure rising about 10 °C/kbar (Yoder & Tilley 1962; from memory). */
export const DRY_BASALT: SolidusCurve = {
  id: 'dry-basalt',
  kind: 'fluid-absent',
  label: 'dry basalt',
  source: 'after Yoder & Tilley (1962) and Lambert & Wyllie (1972): T = 1100 °C + 10 °C/kbar·P [from memory]',
  temperatureC: (p) => (p >= 0 ? 1100 + 0.1 * p : NaN),
};

const WET_PERIDOTITE_GPA = nodeCurve(
  [
    [0.5, 1050],
    [1, 1000],
    [2, 900],
    [3.2, 810],
  ],
  'linear',
);

/** Water-saturated peridotite solidus after Grove et al. (2006), about 810 °C at 3.2 GPa; node values from memory. */
export const WET_PERIDOTITE: SolidusCurve = {
  id: 'wet-peridotite',
  kind: 'water-saturated',
  label: 'water-saturated peridotite',
  source: 'after Grove, Chatterjee, Parman & Médard (2006): about 1000 °C at 1 GPa, 810 °C at 3.2 GPa [from memory]',
  temperatureC: (p) => WET_PERIDOTITE_GPA(p / 1000),
};

/** Dry peridotite (Hirschmann 2000; see dryPeridotiteSolidusC). */
export const DRY_PERIDOTITE: SolidusCurve = {
  id: 'dry-peridotite',
  kind: 'fluid-absent',
  label: 'dry peridotite',
  source: 'Hirschmann (2000): T = −5.104·P² + 132.899·P + 1120.661, P in GPa (0–10) [checked]',
  temperatureC: (p) => dryPeridotiteSolidusC(p / 1000),
};

/**
 * The two solidus curves of each rock kind: `wet` (water-saturated: crossing it means melting if free water is
 * present, a warning) and `dry` (fluid-absent or dry: crossing it ends the conductive column). Sediment is treated as
 * metapelite, which melts with water near the granite minimum and without it by biotite dehydration.
 */
export const ROCK_SOLIDUS: Readonly<Record<RockKind, { wet: SolidusCurve; dry: SolidusCurve }>> = Object.freeze({
  sediment: { wet: WET_GRANITE, dry: FLUID_ABSENT_FELSIC },
  'felsic-crust': { wet: WET_GRANITE, dry: FLUID_ABSENT_FELSIC },
  'mafic-crust': { wet: WET_BASALT, dry: DRY_BASALT },
  mantle: { wet: WET_PERIDOTITE, dry: DRY_PERIDOTITE },
});
