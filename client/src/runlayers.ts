/**
 * A finished run's layers on the map. Scalar and class grids arrive as raster-dem tiles in MapLibre's `custom`
 * encoding and are coloured on the GPU by a `color-relief` layer built from the layer's legend; vector layers
 * (contours, isograds, cross-validation residuals) are GeoJSON sources from the run's .geojson files.
 * Layers that exist at several depths (temperature-5km, facies-10km, …) share one panel entry with a depth chooser.
 */
import type { ExpressionSpecification, Map as MapLibreMap } from 'maplibre-gl';
import { ApiError, getJson, type RunLayer, type RunState, type TileInfo } from './api.ts';
import { el } from './dom.ts';
import type { LayerEntry, LayerPanel } from './layers.ts';
import { legendFromSpec } from './legend.ts';
import { readableRasters } from './readout.ts';
import { BASE_TOP, colorReliefExpression } from './style.ts';
import { isogradLegend, residualLegend, vectorLayers } from './run-vector-layers.ts';
import { groupLayerId, groupRunLayers, labelInSection, productSection, type RunLayerGroup } from './run-layer-groups.ts';

export { showAddedAlone } from './run-layer-groups.ts';

/**
 * Draw order: the whole base (land, sea mask, relief, coastlines, graticule) under every computed layer, so results
 * show wherever they lie; run rasters under the run's contours, both under the data; isograds and residual symbols
 * above the data outlines.
 */
function rasterBefore(map: MapLibreMap): string | undefined {
  const first = map.getStyle().layers.find((l) => l.id.startsWith('run-') && l.type !== 'color-relief' && l.type !== 'raster');
  return first?.id ?? (map.getLayer(BASE_TOP) ? BASE_TOP : undefined);
}
function vectorBefore(map: MapLibreMap, layer: RunLayer): string | undefined {
  if (layer.contourOf === undefined) return map.getLayer(BASE_TOP) ? BASE_TOP : undefined;
  const firstVector = map.getStyle().layers.find((l) => l.id.startsWith('run-') && l.type !== 'color-relief' && l.type !== 'raster' && !/_contours/.test(l.id));
  return firstVector?.id ?? (map.getLayer(BASE_TOP) ? BASE_TOP : undefined);
}

export function layerUrl(runId: string, layer: RunLayer, ext: string): string {
  if (layer.contourOf) return layerUrl(runId, layer.contourOf, ext);
  return layer.urls?.[ext] ?? `/api/runs/${encodeURIComponent(runId)}/layers/${encodeURIComponent(layer.name)}.${ext}`;
}

/** The tile description of a raster layer: from the layer info when it carries one, else from tiles/:layer.json. */
export async function tileInfo(runId: string, layer: RunLayer): Promise<TileInfo> {
  const t = layer.tiles;
  // Not through URL(): it would percent-encode the {z}/{x}/{y} placeholders of a tile template.
  const abs = (u: string) => (/^https?:\/\//.test(u) ? u : `${window.location.origin}${u.startsWith('/') ? '' : '/'}${u}`);
  if (t && !Array.isArray(t) && Array.isArray(t.tiles)) return { ...t, tiles: t.tiles.map(abs) };
  if (Array.isArray(t) && typeof layer.baseShift === 'number' && typeof layer.noDataValue === 'number') {
    return { ...(layer as unknown as TileInfo), tiles: t.map(abs) };
  }
  const info = await getJson<TileInfo>(`/api/runs/${encodeURIComponent(runId)}/tiles/${encodeURIComponent(layer.name)}.json`);
  return { ...info, tiles: info.tiles.map(abs) };
}

/** Tile descriptions by run and layer: fetched once, all of a run's at once when it is shown. */
const tileInfos = new Map<string, Promise<TileInfo>>();
function cachedTileInfo(runId: string, layer: RunLayer): Promise<TileInfo> {
  const key = `${runId}/${layer.name}`;
  let p = tileInfos.get(key);
  if (!p) {
    p = tileInfo(runId, layer);
    p.catch(() => tileInfos.delete(key));
    tileInfos.set(key, p);
  }
  return p;
}

function downloads(runId: string, layer: RunLayer): HTMLElement {
  const label: Record<string, string> = { tif: 'GeoTIFF', geojson: 'GeoJSON', csv: 'CSV', png: 'PNG' };
  return el(
    'p',
    { class: 'downloads' },
    el('span', { class: 'muted' }, 'download '),
    ...layer.formats.map((ext) =>
      el('a', { href: layerUrl(runId, layer, ext), download: `${layer.name}.${ext}`, class: 'dl', 'data-format': ext }, label[ext] ?? ext),
    ),
  );
}

/** Two number fields that restretch a ramp over [min, max] (reset to the layer's own range when emptied). */
function rangeControl(id: string, legend: Extract<RunLayer['legend'], { type: 'ramp' }>, units: string, apply: (range: [number, number]) => void): HTMLElement {
  const round = (v: number) => String(Math.round(v * 100) / 100);
  const lo = el('input', { type: 'number', id: `range-min-${id}`, class: 'range-input', step: 'any', 'aria-label': `colour range minimum (${units})` });
  const hi = el('input', { type: 'number', id: `range-max-${id}`, class: 'range-input', step: 'any', 'aria-label': `colour range maximum (${units})` });
  lo.value = round(legend.min);
  hi.value = round(legend.max);
  const msg = el('span', { class: 'field-error', 'aria-live': 'polite' });
  const change = () => {
    const a = lo.value.trim() === '' ? legend.min : Number(lo.value);
    const b = hi.value.trim() === '' ? legend.max : Number(hi.value);
    if (!(Number.isFinite(a) && Number.isFinite(b) && b > a)) {
      msg.textContent = 'the maximum must be above the minimum';
      return;
    }
    msg.textContent = '';
    apply([a, b]);
  };
  lo.addEventListener('change', change);
  hi.addEventListener('change', change);
  return el(
    'div',
    { class: 'range-row' },
    el('span', { class: 'muted' }, 'colours from'),
    lo,
    el('span', { class: 'muted' }, 'to'),
    hi,
    el('span', { class: 'muted' }, units),
    msg,
  );
}

function removeMapLayers(map: MapLibreMap, prefix: string): void {
  for (const l of map.getStyle().layers) if (l.id === prefix || l.id.startsWith(`${prefix}-`)) map.removeLayer(l.id);
  for (const s of Object.keys(map.getStyle().sources)) if (s === `${prefix}-src` || s.startsWith(`${prefix}-src-`)) map.removeSource(s);
}

export interface ShownRun {
  run: RunState;
  groups: RunLayerGroup[];
  /** Depths offered by the depth-indexed groups. */
  depthsKm: number[];
}

/** The run's grid extent, [west, south, east, north] (lon/lat grids), else its sites' extent when it reports one. */
export function runBounds(run: RunState): [number, number, number, number] | null {
  const g = run.summary?.grid;
  return g && g.crs === 'EPSG:4326' ? [g.west, g.north - g.dy * g.height, g.west + g.dx * g.width, g.north] : null;
}

type ShowOptions = { depthKm: number | null; onDepth: (d: number) => void; onError: (msg: string) => void };

/** No tile service for run layers on this server: place the run's own coloured PNG of the whole grid by its
 * corners. MapLibre interpolates an image linearly in Web Mercator, so a lon/lat grid is placed within a fraction
 * of a cell over a region of a few degrees; colours are the server's legend. False when that is impossible. */
function drawPngFallback(map: MapLibreMap, run: RunState, layer: RunLayer, id: string): boolean {
  const grid = run.summary?.grid;
  if (!(layer.formats.includes('png') && grid?.crs === 'EPSG:4326')) return false;
  const e0 = grid.west + grid.dx * grid.width,
    s0 = grid.north - grid.dy * grid.height;
  map.addSource(`${id}-src`, {
    type: 'image',
    url: new URL(layerUrl(run.id, layer, 'png'), window.location.origin).href,
    coordinates: [
      [grid.west, grid.north],
      [e0, grid.north],
      [e0, s0],
      [grid.west, s0],
    ],
  });
  map.addLayer(
    {
      id,
      type: 'raster',
      source: `${id}-src`,
      metadata: { runLayer: layer.name, fallback: 'png' },
      paint: { 'raster-resampling': 'nearest', 'raster-fade-duration': 0 },
    },
    rasterBefore(map),
  );
  return true;
}

/** A raster run layer as raster-dem tiles coloured by a color-relief layer from its legend (or the PNG fallback). */
async function drawRaster(map: MapLibreMap, run: RunState, layer: RunLayer, id: string, legendBox: HTMLElement): Promise<void> {
  let t: TileInfo;
  try {
    t = await cachedTileInfo(run.id, layer);
  } catch (e) {
    if (!(e instanceof ApiError && e.status === 404) || !drawPngFallback(map, run, layer, id)) throw e;
    legendBox.replaceChildren(legendFromSpec(layer.legend, layer.units));
    return;
  }
  map.addSource(`${id}-src`, {
    type: 'raster-dem',
    tiles: t.tiles,
    bounds: t.bounds,
    minzoom: t.minzoom ?? 0,
    maxzoom: t.maxzoom ?? 12,
    tileSize: t.tileSize ?? 256,
    encoding: 'custom',
    redFactor: t.redFactor,
    greenFactor: t.greenFactor,
    blueFactor: t.blueFactor,
    baseShift: t.baseShift,
  });
  const legend = layer.legend;
  const noLegend = [
    'interpolate',
    ['linear'],
    ['elevation'],
    t.noDataValue,
    'rgba(0,0,0,0)',
    t.noDataValue + Math.abs(t.blueFactor || 1),
    '#888888',
  ] as unknown as ExpressionSpecification;
  map.addLayer(
    {
      id,
      type: 'color-relief',
      source: `${id}-src`,
      metadata: { runLayer: layer.name },
      paint: { 'color-relief-color': legend ? colorReliefExpression(legend, t) : noLegend },
    },
    rasterBefore(map),
  );
  readableRasters.set(id, { tile: t, units: legend?.units || layer.units, title: layer.title });
  legendBox.replaceChildren(legendFromSpec(legend, layer.units));
  if (legend?.type === 'ramp') {
    legendBox.append(
      rangeControl(id, legend, layer.units, (range) => {
        // A new range is a new colour expression over the same tiles: nothing is fetched again.
        map.setPaintProperty(id, 'color-relief-color', colorReliefExpression(legend, t, range));
        legendBox.firstElementChild?.replaceWith(legendFromSpec(legend, layer.units, range));
      }),
    );
  }
}

/** A vector run layer from its .geojson file; returns the MapLibre layer ids it drew. */
function drawVector(map: MapLibreMap, run: RunState, layer: RunLayer, id: string, legendBox: HTMLElement): string[] {
  map.addSource(`${id}-src`, { type: 'geojson', data: new URL(layerUrl(run.id, layer, 'geojson'), window.location.origin).href });
  const specs = vectorLayers(id, `${id}-src`, layer);
  for (const s of specs) map.addLayer({ ...s, metadata: { ...(s.metadata as object | undefined), runLayer: layer.name } }, vectorBefore(map, layer));
  const name = layer.name.toLowerCase();
  legendBox.replaceChildren(
    name.includes('isograd')
      ? isogradLegend()
      : name.includes('resid') || name.startsWith('cv')
        ? residualLegend(layer.units)
        : layer.legend
          ? legendFromSpec(layer.legend, layer.units)
          : el('p', { class: 'note' }, layer.units ? `Labels in ${/contour/.test(name) && /depth/.test(name) ? 'km' : layer.units}` : ''),
  );
  return specs.map((s) => s.id);
}

/** One group's panel entry (with its depth chooser when depth-indexed) and its layer on the map. */
async function showGroup(map: MapLibreMap, panel: LayerPanel, run: RunState, g: RunLayerGroup, visible: boolean, opts: ShowOptions): Promise<void> {
  const id = groupLayerId(g.key);
  const first = g.layers[0].layer;
  const depthIndexed = g.layers[0].depthKm !== null;
  const pick = () => {
    if (!depthIndexed) return g.layers[0];
    const want = opts.depthKm ?? g.layers[0].depthKm!;
    return g.layers.reduce((best, l) => (Math.abs(l.depthKm! - want) < Math.abs(best.depthKm! - want) ? l : best));
  };
  const legendBox = el('div', { class: 'legend-box' });
  const extraBox = el('div', {});
  const label = depthIndexed ? g.title : first.title;
  const section = productSection(g.key);
  const entry: LayerEntry = {
    id,
    label,
    shortLabel: labelInSection(label, section),
    section: { key: section.key, title: section.title },
    layers: [],
    legend: legendBox,
    extra: extraBox,
    group: 'run',
    defaultOpacity: first.kind === 'raster' ? 0.85 : 1,
    defaultVisible: visible,
    bounds: () => runBounds(run),
  };
  const draw = async (choice: { depthKm: number | null; layer: RunLayer }) => {
    removeMapLayers(map, id);
    if (choice.layer.kind === 'raster') {
      await drawRaster(map, run, choice.layer, id, legendBox);
      entry.layers = [id];
    } else entry.layers = drawVector(map, run, choice.layer, id, legendBox);
    extraBox.replaceChildren(downloads(run.id, choice.layer));
    panel.apply(id);
  };
  if (depthIndexed) {
    const sel = el(
      'select',
      { id: `depth-${id}`, 'aria-label': `${g.title}: depth`, class: 'depth-select' },
      ...g.layers.map((l) => el('option', { value: String(l.depthKm) }, `${l.depthKm} km`)),
    );
    sel.value = String(pick().depthKm);
    sel.addEventListener('change', () => {
      const d = Number(sel.value);
      opts.onDepth(d);
      const c = g.layers.find((l) => l.depthKm === d);
      if (c) draw(c).catch((e: unknown) => opts.onError(e instanceof Error ? e.message : String(e)));
    });
    entry.control = el('div', { class: 'depth-row' }, el('label', { for: sel.id, class: 'muted' }, 'depth'), sel);
  }
  panel.add(entry);
  try {
    await draw(pick());
  } catch (e) {
    opts.onError(`${g.title}: ${e instanceof Error ? e.message : String(e)}`);
  }
}

/**
 * Puts a run's layers on the map and in the panel. `depthKm` picks the depth of depth-indexed groups (the nearest
 * available). Returns what it showed; raster tile descriptions that fail are reported through onError.
 */
export async function showRunLayers(map: MapLibreMap, panel: LayerPanel, run: RunState, opts: ShowOptions): Promise<ShownRun> {
  for (const l of map.getStyle().layers) if (l.id.startsWith('run-')) map.removeLayer(l.id);
  for (const s of Object.keys(map.getStyle().sources)) if (s.startsWith('run-')) map.removeSource(s);
  panel.clearRun();
  const groups = groupRunLayers(run.layers ?? []);
  const depths = [...new Set(groups.flatMap((g) => g.layers.map((l) => l.depthKm)).filter((d): d is number => d !== null))].sort((a, b) => a - b);
  // Every raster's tile description is asked for at once; the groups then draw in order from the answers.
  for (const l of run.layers ?? []) if (l.kind === 'raster') void cachedTileInfo(run.id, l).catch(() => undefined);
  const firstDepthContour = groups.find((g) => /^depth-[\d.]+C\.contours$/.test(g.key))?.key;
  for (const g of groups)
    await showGroup(map, panel, run, g, /^heat-?flow$/i.test(g.key) || g.key === firstDepthContour || /isograd/.test(g.key) || /^no-data/.test(g.key), opts);
  return { run, groups, depthsKm: depths };
}
