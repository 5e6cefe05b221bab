/**
 * How a run's layers are grouped: names that differ only by depth (`temperature-5km`, `temperature-10km.p10`) share
 * one entry with a depth chooser; the entries then gather under their product (surface heat flow, depth to each
 * isotherm, temperature at depth, facies, isograds, cross-validation, model limits), each a section of the layer panel
 * that folds. Names follow shared/products/names.ts.
 */
import type { RunLayer } from './api.ts';
import type { LayerState } from './state.ts';

export interface RunLayerGroup {
  key: string;
  title: string;
  /** By depth (km) when the group is depth-indexed, else one layer under NaN. */
  layers: { depthKm: number | null; layer: RunLayer }[];
}

/** A product of the run in the layer panel: its key, its title and the words its layers' titles start with. */
export interface ProductSection {
  key: string;
  title: string;
  /** The shared start of its layers' titles, dropped from their labels inside the section. */
  stem: string;
}

/** A depth-indexed name: product, depth in km, and a Monte Carlo summary's suffix (`.p10`, `.mean-diff`, …). */
const DEPTH_NAME = /^(.+?)-(\d+(?:\.\d+)?)km(\.(?:p10|p50|p90|mean|mean-diff))?$/;

/** The group key of a depth-indexed layer name (its depth taken out), else null. */
function depthGroup(name: string): { key: string; depthKm: number } | null {
  const m = DEPTH_NAME.exec(name);
  return m ? { key: `${m[1]}${m[3] ?? ''}`, depthKm: Number(m[2]) } : null;
}

/** The map layer id (and layer-panel entry id) of a group of run layers. */
export function groupLayerId(key: string): string {
  return `run-${key.replace(/[^A-Za-z0-9_-]/g, '_')}`;
}

/** The map layer id of a raster run layer by its name (depth-indexed names share their group's). */
export function runLayerId(name: string): string {
  return groupLayerId(depthGroup(name)?.key ?? name);
}

/**
 * Shows the raster layers just added (a spread or probability layer the user asked for) alone among the run's
 * rasters: each is read against its own legend, not blended over the heat flow or an isotherm depth below it. The
 * other rasters stay in the layer list, unticked (their legends follow their boxes); vector layers stay as they are.
 */
export function showAddedAlone(layers: RunLayer[], added: string[], states: Record<string, LayerState>): void {
  if (added.length === 0) return;
  const shown = new Set(added.map(runLayerId));
  for (const l of layers) {
    const id = runLayerId(l.name);
    if (l.kind !== 'raster' || shown.has(id)) continue;
    states[id] = { opacity: states[id]?.opacity ?? 0.85, visible: false };
  }
  for (const id of shown) states[id] = { visible: true, opacity: 0.85 };
}

/** The product a group belongs to (by its key). */
export function productSection(key: string): ProductSection {
  const iso = /^(depth-([\d.]+)C)(?:$|\.)/.exec(key);
  if (iso) return { key: iso[1], title: `Depth to the ${iso[2]} °C isotherm`, stem: `Depth to the ${iso[2]} °C isotherm` };
  if (/^heat-?flow/.test(key)) return { key: 'heat-flow', title: 'Surface heat flow', stem: 'Surface heat flow' };
  if (/^temperature/.test(key)) return { key: 'temperature', title: 'Temperature at depth', stem: 'Temperature' };
  if (/^facies/.test(key)) return { key: 'facies', title: 'Metamorphic facies at depth', stem: 'Metamorphic facies' };
  if (/isograd/.test(key)) return { key: 'isograds', title: 'Isograds', stem: 'Isograds' };
  if (/resid|^cv/.test(key)) return { key: 'cross-validation', title: 'Cross-validation', stem: 'Cross-validation' };
  return { key: 'model-checks', title: 'Model checks and gaps', stem: '' };
}

/** A layer's label inside its section: its title without the section's stem ("Depth to the 300 °C isotherm, P10" → "P10"). */
export function labelInSection(title: string, section: ProductSection): string {
  const s = section.stem;
  if (s === '') return title;
  if (title.toLowerCase() === `contours: ${s.toLowerCase()}`) return 'Contours';
  if (!title.startsWith(s)) return title;
  const rest = title.slice(s.length).replace(/^[,:]\s*/, '');
  if (rest === '' || rest === title.slice(s.length)) return title;
  return `${rest.charAt(0).toUpperCase()}${rest.slice(1)}`;
}

/** A raster's .geojson file holds its contours (computed by the server from the full grid): isotherm-depth and
 * heat-flow contours get their own entries, labelled along the line with their units. */
function withContours(input: RunLayer[]): RunLayer[] {
  const layers: RunLayer[] = [...input];
  for (const l of input) {
    if (l.kind === 'raster' && l.formats.includes('geojson') && (/^depth-[\d.]+C$/.test(l.name) || /^heat-?flow$/.test(l.name))) {
      layers.push({
        ...l,
        name: `${l.name}.contours`,
        kind: 'vector',
        title: `Contours: ${l.title.charAt(0).toLowerCase()}${l.title.slice(1)}`,
        legend: null,
        formats: ['geojson'],
        contourOf: l,
      });
    }
  }
  return layers;
}

/** The panel order of a group: heat flow first, then isotherm depths, temperature, facies, isograds, residuals. */
function rank(g: RunLayerGroup): number {
  const k = g.key;
  if (/^heat-?flow$/i.test(k)) return 0;
  if (/sd|std|uncert/i.test(k) && /heat/i.test(k)) return 1;
  if (/^depth-[\d.]+C$/.test(k)) return 2;
  if (/^depth-/.test(k) && !/contour/.test(k)) return 2.5;
  if (/^temperature/.test(k)) return 3;
  if (/^facies/.test(k)) return 4;
  if (/contour/.test(k)) return 1.5;
  if (/isograd/.test(k)) return 6;
  if (/resid|cv/.test(k)) return 7;
  return 8;
}

/** Groups a run's layers: names like `temperature-5km` group by prefix with their depths; others stand alone. */
export function groupRunLayers(input: RunLayer[]): RunLayerGroup[] {
  const groups = new Map<string, RunLayerGroup>();
  for (const layer of withContours(input)) {
    const d = layer.kind === 'raster' ? depthGroup(layer.name) : null;
    if (d) {
      const g = groups.get(d.key) ?? { key: d.key, title: layer.title.replace(/\s*(at\s*)?\d+(\.\d+)?\s*km\b/i, '').trim() || d.key, layers: [] };
      g.layers.push({ depthKm: d.depthKm, layer });
      groups.set(d.key, g);
    } else {
      groups.set(layer.name, { key: layer.name, title: layer.title, layers: [{ depthKm: null, layer }] });
    }
  }
  for (const g of groups.values()) g.layers.sort((a, b) => (a.depthKm ?? 0) - (b.depthKm ?? 0));
  return [...groups.values()].sort((a, b) => rank(a) - rank(b) || a.key.localeCompare(b.key, 'en', { numeric: true }));
}
