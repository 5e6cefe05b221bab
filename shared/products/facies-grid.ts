/**
 * Metamorphic facies reached at a chosen depth, per cell: the petrology engine's classifier (shared/petrology/
 * facies.ts, the project's simplified P–T fields) applied to the temperature at that depth and the lithostatic
 * pressure there (P = ∫ρ g dz from the cell's model, shared/thermal/pressure.ts). Facies boundaries are gradational
 * (about ±50 °C, ±1–2 kbar); the class grid says which field the point falls in, and `approximate` marks cells
 * within one boundary width of another field.
 */
import { classifyFacies, FACIES_NAMES, type FaciesName } from '../petrology/index.ts';
import type { Legend } from '../grid/legend.ts';

/** Class code of each facies in the grid (1-based, in FACIES_NAMES order; NaN = none / no data). */
export const FACIES_CODES: Readonly<Record<FaciesName, number>> = Object.freeze(
  Object.fromEntries(FACIES_NAMES.map((n, i) => [n, i + 1])) as Record<FaciesName, number>,
);

/** The project's facies colours (its own choice): low-grade pale and warm, high-grade dark. */
export const FACIES_COLORS: Readonly<Record<FaciesName, string>> = Object.freeze({
  zeolite: '#f1e9cf',
  'prehnite-pumpellyite': '#ddd08e',
  greenschist: '#9cbf8a',
  amphibolite: '#4f7d5c',
  granulite: '#6e3f63',
  blueschist: '#7c96c2',
  eclogite: '#3b4f6b',
  hornfels: '#c98e5f',
});

/** Class legend of the facies grid. */
export function faciesLegend(): Legend {
  return {
    type: 'classes',
    units: 'facies (gradational boundaries, about ±50 °C and ±1–2 kbar)',
    classes: FACIES_NAMES.map((n) => ({ value: FACIES_CODES[n], label: n, color: FACIES_COLORS[n] })),
  };
}

/** Facies code at (temperatureC °C, pressureKbar kbar); NaN outside the diagram or for NaN input. */
export function faciesCode(temperatureC: number, pressureKbar: number, approximateOut?: { approximate: boolean }): number {
  if (!(temperatureC === temperatureC) || !(pressureKbar === pressureKbar)) {
    if (approximateOut) approximateOut.approximate = false;
    return NaN;
  }
  const r = classifyFacies(temperatureC, pressureKbar);
  if (approximateOut) approximateOut.approximate = r.approximate;
  return r.facies === null ? NaN : FACIES_CODES[r.facies];
}

/** Name of a facies code (null for NaN or an unknown code). */
export function faciesNameOfCode(code: number): FaciesName | null {
  return Number.isInteger(code) && code >= 1 && code <= FACIES_NAMES.length ? FACIES_NAMES[code - 1] : null;
}
