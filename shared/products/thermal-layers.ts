/**
 * The layers of the thermal products: each grid with its title, units, legend, ramp, method text and contours —
 * depth to each isotherm and temperature at each depth (with a Monte Carlo: their P10/P50/P90 and mean over the
 * realizations on the same legend, the mean minus the deterministic map on a diverging legend, and per isotherm the
 * share of the realizations reaching it above the maximum depth), and the limit layers (facies, base heat flow,
 * solidus depth, melt onset, inconsistency flags). Assembled by
 * `computeThermalProducts` (thermal-products.ts) from the filled grid buffers.
 */
import type { Grid, GridSpec } from '../grid/grid.ts';
import { contourGrid, niceContourInterval, type ContourCollection } from '../grid/contours.ts';
import { rampLegend } from '../grid/colorize.ts';
import type { Legend } from '../grid/legend.ts';
import { BALANCE, DEPTH, EMBER, type Ramp } from '../grid/ramps.ts';
import { productGrid, type ThermalGridBuffers } from './thermal-grids.ts';
import type { SummaryGrids, UncertaintyGrids } from './uncertainty.ts';
import { faciesLegend } from './facies-grid.ts';
import type { LayerStats } from './stats.ts';
import {
  BASE_HEAT_FLOW,
  INCONSISTENT,
  MELT_ONSET,
  SOLIDUS_DEPTH,
  depthProductName,
  faciesProductName,
  summaryProductName,
  temperatureProductName,
} from './names.ts';
import type { MonteCarloReport, ProductOptions } from './thermal-products.ts';

export interface ProductLayer {
  name: string;
  title: string;
  units: string;
  grid: Grid<Float32Array>;
  legend: Legend;
  ramp: Ramp | null;
  /** Method text for the provenance of this layer. */
  method: string;
  contours?: ContourCollection;
  stats: LayerStats;
}

/** Ramp legend over the finite range of one or more grids (a flat or empty range gets a nominal span). */
export function sharedRampLegend(ramp: Ramp, units: string, grids: Float32Array[]): Legend {
  let min = Infinity,
    max = -Infinity;
  for (const g of grids)
    for (let i = 0; i < g.length; i++) {
      const v = g[i];
      if (v === v && v !== Infinity && v !== -Infinity) {
        if (v < min) min = v;
        if (v > max) max = v;
      }
    }
  if (!(max >= min)) {
    min = 0;
    max = 1;
  }
  if (max === min) max = min + 1;
  return rampLegend(ramp, units, min, max);
}

const INCONSISTENT_LEGEND: Legend = {
  type: 'classes',
  units: 'flag',
  classes: [
    { value: 0, label: 'consistent', color: '#e6e9e4' },
    { value: 1, label: 'heat flow reaches 0 in the model (surface heat flow too low for its heat production)', color: '#b3342b' },
    { value: 2, label: 'conductivity k(T) undefined (1 + bT ≤ 0)', color: '#6b3fa0' },
    { value: 4, label: 'surface heat flow ≤ 0', color: '#222222' },
  ],
};

const fmt = (v: number) => String(+v.toPrecision(12));

export interface LayerContext {
  heatFlow: GridSpec;
  out: ThermalGridBuffers;
  o: ProductOptions;
  maxDepthKm: number;
  /** The method text shared by every layer. */
  method: string;
  toLonLat: (x: number, y: number) => [number, number];
  add: (l: Omit<ProductLayer, 'stats'>) => void;
  /** The statistics of a layer's values (layerStats: a Float32 grid's median without a copy). */
  stats: (values: Float32Array) => LayerStats;
}

/** The Monte Carlo pass as the layers read it. */
export type MonteCarloGrids = { pct: UncertaintyGrids; report: MonteCarloReport };

/** Symmetric legend about zero over the finite values (a flat or empty grid gets ±1). */
function differenceLegend(units: string, values: Float32Array): Legend {
  let m = 0;
  for (let i = 0; i < values.length; i++) {
    const v = Math.abs(values[i]);
    if (v > m && v !== Infinity) m = v;
  }
  if (!(m > 0)) m = 1;
  return rampLegend(BALANCE, units, -m, m);
}

/** Cell by cell: mean − deterministic where both are finite, else NaN. */
export function meanMinusDeterministic(mean: Float32Array, det: Float32Array): Float32Array {
  const out = new Float32Array(mean.length);
  for (let i = 0; i < out.length; i++) {
    const d = mean[i] - det[i];
    out[i] = Number.isFinite(d) ? d : NaN;
  }
  return out;
}

/** What one product's summary layers need: its name, title, units, what it is in words, and the NoData rule of its mean. */
interface SummarySubject {
  product: string;
  title: string;
  units: string;
  ramp: Ramp;
  legend: Legend;
  what: string;
  notFinite: string;
  /** The mean's NoData rule in a sentence, for its legend. */
  meanRule: string;
  deterministic: Float32Array;
}

/** P10, P50, P90 and mean of a product over the realizations (on the product's legend), and mean − deterministic. */
function summaryLayers(c: LayerContext, mc: MonteCarloGrids, s: SummaryGrids, sub: SummarySubject): void {
  const r = mc.report;
  const over = `over ${r.realizations} Monte Carlo realizations (seed ${r.seed}; ${r.heatFlow})`;
  for (const p of ['p10', 'p50', 'p90'] as const) {
    c.add({
      name: summaryProductName(sub.product, p),
      title: `${sub.title}, ${p.toUpperCase()}`,
      units: sub.units,
      grid: productGrid(c.heatFlow, s[p], sub.units),
      legend: sub.legend,
      ramp: sub.ramp,
      method: `${p.toUpperCase()} (Hyndman & Fan type 7) of the ${sub.what} ${over}; ${sub.notFinite}, NoData where the percentile falls there; ${c.method}`,
    });
  }
  c.add({
    name: summaryProductName(sub.product, 'mean'),
    title: `${sub.title}, mean of the realizations`,
    units: sub.units,
    grid: productGrid(c.heatFlow, s.mean, sub.units),
    legend: { ...sub.legend, note: sub.meanRule },
    ramp: sub.ramp,
    method: `mean of the ${sub.what} ${over}, the central value of the Monte Carlo (invalid realizations left out); ${sub.notFinite}, so the mean is NoData in every cell where any valid realization has such a value (${sub.meanRule}); ${c.method}`,
  });
  const diff = meanMinusDeterministic(s.mean, sub.deterministic);
  c.add({
    name: summaryProductName(sub.product, 'mean-diff'),
    title: `${sub.title}: mean of the realizations − deterministic map`,
    units: sub.units,
    grid: productGrid(c.heatFlow, diff, sub.units),
    legend: differenceLegend(sub.units, diff),
    ramp: BALANCE,
    method: `the mean of the ${sub.what} ${over} minus the deterministic map (the interpolated heat flow with each model distribution at its central value); NoData where either is; ${c.method}`,
  });
}

/**
 * The share of the valid realizations reaching the isotherm T above the maximum depth (0–1): where it is below 1 the
 * mean depth is NoData.
 */
function reachedLayer(c: LayerContext, mc: MonteCarloGrids, s: SummaryGrids, T: number, exhausted: string): void {
  const r = mc.report;
  const product = depthProductName(T);
  const reached = summaryProductName(product, 'reached');
  c.add({
    name: reached,
    title: `Depth to the ${fmt(T)} °C isotherm: share of realizations reaching it above ${c.maxDepthKm} km`,
    units: 'fraction',
    grid: productGrid(c.heatFlow, s.finiteFraction, 'fraction'),
    legend: {
      ...rampLegend(EMBER, 'fraction', 0, 1),
      note: `1: every realization reaches ${fmt(T)} °C above ${c.maxDepthKm} km (only there is the mean defined)`,
    },
    ramp: EMBER,
    method: `share of the valid realizations (${r.realizations} Monte Carlo realizations, seed ${r.seed}; ${r.heatFlow}; invalid ones left out) whose ${fmt(T)} °C isotherm lies above ${c.maxDepthKm} km${exhausted}; the mean depth (${summaryProductName(product, 'mean')}) is defined only where it is 1; ${c.method}`,
  });
}

/** Depth-to-isotherm layers with their contours, and their P10/P50/P90, mean (same legend), mean − deterministic and share reaching it. */
export async function isothermLayers(c: LayerContext, mc: MonteCarloGrids | null, step: (message: string) => Promise<void>): Promise<void> {
  const { o, method, maxDepthKm } = c;
  for (let k = 0; k < o.isothermsC.length; k++) {
    const T = o.isothermsC[k];
    const g = productGrid(c.heatFlow, c.out.isothermDepthKm[k], 'km');
    const pk = mc?.pct.isotherms[k];
    const legend = sharedRampLegend(DEPTH, 'km', pk ? [g.values, pk.p10, pk.p50, pk.p90, pk.mean] : [g.values]);
    const interval = o.contourIntervalKm === undefined ? 1 : o.contourIntervalKm;
    const contours = interval === null ? undefined : contourGrid(g, { interval, units: 'km', toLonLat: c.toLonLat });
    c.add({
      name: depthProductName(T),
      title: `Depth to the ${fmt(T)} °C isotherm`,
      units: 'km',
      grid: g,
      legend,
      ramp: DEPTH,
      method: `depth to the ${fmt(T)} °C isotherm (km below the surface; NoData where not reached above ${maxDepthKm} km), ${method}`,
      contours,
    });
    if (pk && mc) {
      const ex = mc.report.heatFlowExhausted;
      const exhausted =
        ex.cellRealizations > 0
          ? ` (a realization whose heat flow runs out above ${maxDepthKm} km peaks in temperature where it does: it reaches only isotherms up to that peak; ${ex.cellRealizations} cell-realizations in ${ex.cells} cells)`
          : '';
      summaryLayers(c, mc, pk, {
        product: depthProductName(T),
        title: `Depth to the ${fmt(T)} °C isotherm`,
        units: 'km',
        ramp: DEPTH,
        legend,
        what: `depth to the ${fmt(T)} °C isotherm`,
        notFinite: `an isotherm not reached above ${maxDepthKm} km${exhausted} counts as deeper than any depth`,
        meanRule: `no mean where some realizations do not reach ${fmt(T)} °C above ${maxDepthKm} km; see the share layer ${summaryProductName(depthProductName(T), 'reached')}`,
        deterministic: g.values,
      });
      reachedLayer(c, mc, pk, T, exhausted);
    }
    await step(`contours of ${depthProductName(T)}`);
  }
}

/** Temperature-at-depth layers with their contours, and with a Monte Carlo their summaries as for the isotherms. */
export async function temperatureLayers(c: LayerContext, mc: MonteCarloGrids | null, step: (message: string) => Promise<void>): Promise<void> {
  const { o, method } = c;
  for (let k = 0; k < o.depthsKm.length; k++) {
    const d = o.depthsKm[k];
    const g = productGrid(c.heatFlow, c.out.temperatureC[k], '°C');
    const pk = mc?.pct.temperatures[k];
    const legend = sharedRampLegend(EMBER, '°C', pk ? [g.values, pk.p10, pk.p50, pk.p90, pk.mean] : [g.values]);
    const st = c.stats(g.values);
    const interval =
      o.contourIntervalC === null ? null : (o.contourIntervalC ?? (st.min !== null && st.max !== null ? niceContourInterval(st.min, st.max) : null));
    const contours = interval === null ? undefined : contourGrid(g, { interval, units: '°C', toLonLat: c.toLonLat });
    c.add({
      name: temperatureProductName(d),
      title: `Temperature at ${fmt(d)} km`,
      units: '°C',
      grid: g,
      legend,
      ramp: EMBER,
      method: `temperature at ${fmt(d)} km below the surface, ${method}`,
      contours,
    });
    if (pk && mc)
      summaryLayers(c, mc, pk, {
        product: temperatureProductName(d),
        title: `Temperature at ${fmt(d)} km`,
        units: '°C',
        ramp: EMBER,
        legend,
        what: `temperature at ${fmt(d)} km`,
        notFinite: 'a depth below the melt onset (no conductive temperature) counts as hotter than any temperature',
        meanRule: `no mean where some realizations reach the melt onset above ${fmt(d)} km`,
        deterministic: g.values,
      });
    await step(`contours of ${temperatureProductName(d)}`);
  }
}

/** Facies, base heat flow, solidus depth, melt onset and the inconsistency flags. */
export function limitLayers(c: LayerContext, warnings: string[]): void {
  const { o, out, method, maxDepthKm } = c;
  const grid = (v: Float32Array, units: string) => productGrid(c.heatFlow, v, units);
  if (o.faciesDepthKm !== null && out.facies !== null && out.faciesApproximate !== null) {
    let approx = 0;
    for (let i = 0; i < out.faciesApproximate.length; i++) approx += out.faciesApproximate[i];
    if (approx > 0)
      warnings.push(
        `${approx} cell(s) of the facies grid lie within one boundary width (about ±50 °C, ±1.5 kbar) of another facies: facies boundaries are gradational`,
      );
    c.add({
      name: faciesProductName(o.faciesDepthKm),
      title: `Metamorphic facies at ${fmt(o.faciesDepthKm)} km (approximate fields)`,
      units: 'class',
      grid: grid(out.facies, 'class'),
      legend: faciesLegend(),
      ramp: null,
      method: `facies field (the project's simplified P–T diagram, gradational boundaries) of the temperature at ${fmt(o.faciesDepthKm)} km and the lithostatic pressure there, ${method}`,
    });
  }
  c.add({
    name: BASE_HEAT_FLOW,
    title: 'Heat flow at the base of the model',
    units: 'mW/m²',
    grid: grid(out.baseHeatFlowMWm2, 'mW/m²'),
    legend: sharedRampLegend(EMBER, 'mW/m²', [out.baseHeatFlowMWm2]),
    ramp: EMBER,
    method: `heat flow at ${maxDepthKm} km: surface heat flow − ∫A dz over the model (negative where the model is inconsistent), ${method}`,
  });
  if (out.solidusDepthKm !== null) {
    c.add({
      name: SOLIDUS_DEPTH,
      title: 'Depth where the water-saturated solidus is reached',
      units: 'km',
      grid: grid(out.solidusDepthKm, 'km'),
      legend: sharedRampLegend(DEPTH, 'km', [out.solidusDepthKm]),
      ramp: DEPTH,
      method: `shallowest depth where the geotherm reaches the water-saturated solidus of the layer's rock (granite, Huang & Wyllie 1973, in sediment and felsic crust; basalt in mafic crust; peridotite in mantle) at lithostatic pressure: melting there if free water is present; NoData where not reached above ${maxDepthKm} km; ${method}`,
    });
  }
  if (out.meltOnsetKm !== null) {
    c.add({
      name: MELT_ONSET,
      title: 'Melt onset (no temperatures below)',
      units: 'km',
      grid: grid(out.meltOnsetKm, 'km'),
      legend: sharedRampLegend(DEPTH, 'km', [out.meltOnsetKm]),
      ramp: DEPTH,
      method: `shallowest depth where the geotherm (the mantle adiabat below the lithosphere base) reaches the fluid-absent or dry solidus of the layer's rock (biotite dehydration melting, Le Breton & Thompson 1988, in sediment and felsic crust; dry basalt in mafic crust; dry peridotite, Hirschmann 2000, in mantle); the conductive column is not valid below it and the deeper grids have NoData there; NoData where not reached above ${maxDepthKm} km; ${method}`,
    });
  }
  c.add({
    name: INCONSISTENT,
    title: 'Cells where the model is inconsistent with the heat flow',
    units: 'flag',
    grid: grid(out.inconsistent, 'flag'),
    legend: INCONSISTENT_LEGEND,
    ramp: null,
    method: `flag: 0 consistent, 1 heat flow reaches 0 inside the model, 2 k(T) undefined, 4 heat flow ≤ 0 (melt onset is not a contradiction: see the ${MELT_ONSET} grid); ${method}`,
  });
}
