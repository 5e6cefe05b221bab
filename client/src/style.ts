import type { StyleSpecification, ExpressionSpecification, LayerSpecification } from 'maplibre-gl';
import { EMBER, ZONE_COLORS, FAULT_STYLE, rampStops } from '../../shared/grid/ramps.ts';
import type { AppConfig, TileInfo } from './api.ts';
import type { Legend } from '../../shared/schema/run.ts';

/** The first layer above the base: computed layers are inserted below it, so they draw over land and sea alike. */
export const BASE_TOP = 'fault-highlight';

/** The heat-flow range the site colours span, mW/m². */
export const HEAT_FLOW_RANGE: [number, number] = [35, 125];

export function heatFlowColor(): ExpressionSpecification {
  const stops = rampStops(EMBER, HEAT_FLOW_RANGE[0], HEAT_FLOW_RANGE[1]).flat();
  // A site without a number (or with text) is grey, never the ramp's end colour or the style's default.
  return [
    'case',
    ['==', ['typeof', ['get', 'heatFlowMWm2']], 'number'],
    ['interpolate', ['linear'], ['get', 'heatFlowMWm2'], ...stops],
    '#9a9a9a',
  ] as unknown as ExpressionSpecification;
}

function zoneColor(): ExpressionSpecification {
  const pairs = Object.entries(ZONE_COLORS).flat();
  return ['match', ['get', 'zone'], ...pairs, '#ffffff'] as unknown as ExpressionSpecification;
}

function faultProp<K extends 'color' | 'width'>(key: K, fallback: string | number): ExpressionSpecification {
  const pairs = Object.entries(FAULT_STYLE).flatMap(([kind, s]) => [kind, s[key]]);
  return ['match', ['get', 'kind'], ...pairs, fallback] as unknown as ExpressionSpecification;
}

/** The layers over the base: the sea mask and coast, the data (faults, samples, sites) and the section line. */
function overlayLayers(): LayerSpecification[] {
  return [
    // The sea is drawn over the demo's relief so the shaded sea floor never shows through: it masks the base only.
    // Computed layers go above BASE_TOP (run rasters, then their contours), under the data.
    { id: 'sea-mask', type: 'fill', source: 'sea-mask', paint: { 'fill-color': '#dfe6ea' } },
    { id: 'world-coast', type: 'line', source: 'world-land', paint: { 'line-color': '#7d8d97', 'line-width': 0.8 } },
    { id: 'coast', type: 'line', source: 'outline', paint: { 'line-color': '#6c7f8c', 'line-width': 1.2 } },
    {
      id: 'graticule',
      type: 'line',
      source: 'graticule',
      paint: { 'line-color': '#8a97a0', 'line-width': 0.5, 'line-opacity': 0.6, 'line-dasharray': [4, 3] },
    },
    {
      id: 'fault-highlight',
      type: 'line',
      source: 'faults',
      filter: ['==', ['get', 'id'], '\u0000none'],
      layout: { 'line-cap': 'round', 'line-join': 'round' },
      metadata: { baseOpacity: { 'line-opacity': 0.75 } },
      paint: { 'line-color': '#f2c14e', 'line-width': 9, 'line-opacity': 0.75 },
    },
    {
      id: 'faults',
      type: 'line',
      source: 'faults',
      layout: { 'line-cap': 'round', 'line-join': 'round' },
      paint: { 'line-color': faultProp('color', '#555555'), 'line-width': faultProp('width', 1.5) },
    },
    {
      id: 'fault-labels',
      type: 'symbol',
      source: 'faults',
      layout: {
        'symbol-placement': 'line',
        'text-field': ['get', 'name'],
        'text-font': ['DejaVu Sans', 'sans-serif'],
        'text-size': 11,
        'text-offset': [0, -0.8],
      },
      paint: { 'text-color': '#3b3530', 'text-halo-color': '#f6f3ec', 'text-halo-width': 1.4 },
    },
    {
      id: 'samples',
      type: 'circle',
      source: 'samples',
      paint: {
        'circle-radius': 4,
        'circle-color': zoneColor(),
        'circle-stroke-color': '#2b2b2b',
        'circle-stroke-width': 0.8,
      },
    },
    {
      id: 'sample-highlight',
      type: 'circle',
      source: 'samples',
      filter: ['in', ['get', 'id'], ['literal', []]],
      paint: { 'circle-radius': 7.5, 'circle-color': 'rgba(0,0,0,0)', 'circle-stroke-color': '#d4462c', 'circle-stroke-width': 2.2 },
    },
    // A dark ring under each site's white edge: the circle stays readable over any surface, light or dark, and even
    // over a heat-flow surface in the same ramp.
    {
      id: 'sites-halo',
      type: 'circle',
      source: 'sites',
      paint: { 'circle-radius': ['match', ['get', 'quality'], 'high', 9, 'medium', 7.2, 5.8], 'circle-color': '#1c1c1c', 'circle-opacity': 0.85 },
    },
    {
      id: 'sites',
      type: 'circle',
      source: 'sites',
      paint: {
        'circle-radius': ['match', ['get', 'quality'], 'high', 6.5, 'medium', 5, 4],
        'circle-color': heatFlowColor(),
        'circle-stroke-color': '#ffffff',
        'circle-stroke-width': ['match', ['get', 'quality'], 'high', 1.8, 'medium', 1.2, 0.8],
      },
    },
  ];
}

/**
 * A path the user draws on the map (source `source`): its line in `colour` (dashed by `dash`) and its vertices as
 * white dots ringed in the same colour, as layers `ids` = [line, vertices].
 */
function drawnPathLayers(source: string, ids: [string, string], colour: string, dash?: number[]): LayerSpecification[] {
  return [
    {
      id: ids[0],
      type: 'line',
      source,
      filter: ['==', ['geometry-type'], 'LineString'],
      paint: { 'line-color': colour, 'line-width': 2.5, ...(dash ? { 'line-dasharray': dash } : {}) },
    },
    {
      id: ids[1],
      type: 'circle',
      source,
      filter: ['==', ['geometry-type'], 'Point'],
      paint: { 'circle-radius': 4, 'circle-color': '#ffffff', 'circle-stroke-color': colour, 'circle-stroke-width': 2 },
    },
  ];
}

/** The topmost layers: the section line being drawn and the graticule's degree labels. */
function topLayers(): LayerSpecification[] {
  return [
    ...drawnPathLayers('section-line', ['section-line', 'section-points'], '#111111', [3, 1.5]),
    {
      id: 'hip-area-fill',
      type: 'fill',
      source: 'hip-area',
      filter: ['==', ['geometry-type'], 'Polygon'],
      paint: { 'fill-color': '#2f7487', 'fill-opacity': 0.12 },
    },
    ...drawnPathLayers('hip-area', ['hip-area-line', 'hip-area-points'], '#123c47'),
    {
      id: 'graticule-labels',
      type: 'symbol',
      source: 'graticule',
      layout: {
        'symbol-placement': 'line',
        'symbol-spacing': 420,
        'text-field': ['get', 'label'],
        'text-font': ['DejaVu Sans', 'sans-serif'],
        'text-size': 10,
        'text-keep-upright': true,
      },
      paint: { 'text-color': '#4d5a63', 'text-halo-color': '#f4f6f7', 'text-halo-width': 1.5 },
    },
  ];
}

/**
 * The map's own style: no outside sources, no glyph server (labels use the browser's fonts), terrain as raster-dem
 * tiles from our server.
 */
export function buildStyle(cfg: AppConfig, origin: string, demoBase = true): StyleSpecification {
  const ds = cfg.demo.datasets;
  const url = (id: string) => `${origin}/api/datasets/${encodeURIComponent(id)}`;
  const empty = { type: 'FeatureCollection' as const, features: [] };
  const style: StyleSpecification = {
    version: 8,
    name: 'subtherm',
    sources: {
      // The demo island's outline on the demo's page only (demoBase false: another project's page).
      outline: { type: 'geojson', data: demoBase ? url(ds.regions) : empty },
      'sea-mask': { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      'world-land': { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      graticule: { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      // The data sources start empty: the page fills them with the data sets the state names (a new project none).
      faults: { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      samples: { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      sites: { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      'section-line': { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
      'hip-area': { type: 'geojson', data: { type: 'FeatureCollection', features: [] } },
    },
    layers: [
      { id: 'sea', type: 'background', paint: { 'background-color': '#dfe6ea' } },
      { id: 'world-land', type: 'fill', source: 'world-land', paint: { 'fill-color': '#efebe2' } },
      { id: 'land', type: 'fill', source: 'outline', paint: { 'fill-color': '#f1ede4' } },
    ],
  };
  // The demo's relief, like its outline, on the demo's page only.
  if (cfg.terrain && demoBase) {
    style.sources.terrain = {
      type: 'raster-dem',
      tiles: [origin + cfg.terrain.tiles],
      tileSize: cfg.terrain.tileSize,
      bounds: cfg.terrain.bounds,
      minzoom: cfg.terrain.minzoom,
      maxzoom: cfg.terrain.maxzoom,
      encoding: cfg.terrain.encoding,
    };
    style.layers.push({
      id: 'hillshade',
      type: 'hillshade',
      source: 'terrain',
      paint: {
        'hillshade-exaggeration': 0.85,
        'hillshade-shadow-color': '#4a4540',
        'hillshade-highlight-color': '#ffffff',
        'hillshade-accent-color': '#8a8276',
      },
    });
  }
  style.layers.push(...overlayLayers(), ...topLayers());
  return style;
}

/** A polygon covering the map view except the region outlines: the world ring with each outline as a hole. */
export function seaMask(outline: { features: { geometry: { type: string; coordinates: unknown } }[] }): {
  type: 'FeatureCollection';
  features: { type: 'Feature'; properties: Record<string, never>; geometry: { type: 'Polygon'; coordinates: number[][][] } }[];
} {
  const holes: number[][][] = [];
  for (const f of outline.features) {
    if (f.geometry.type === 'Polygon') holes.push((f.geometry.coordinates as number[][][])[0]);
    else if (f.geometry.type === 'MultiPolygon') for (const p of f.geometry.coordinates as number[][][][]) holes.push(p[0]);
  }
  const world = [
    [-180, -85],
    [180, -85],
    [180, 85],
    [-180, 85],
    [-180, -85],
  ];
  return { type: 'FeatureCollection', features: [{ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [world, ...holes] } }] };
}

// ---- Run layers --------------------------------------------------------------------------------------------------

const TRANSPARENT = 'rgba(0,0,0,0)';

/** The smallest value step the tile encoding can express (the first real value sits one step above no data). */
function encodingStep(t: TileInfo): number {
  const f = [t.redFactor, t.greenFactor, t.blueFactor].map(Math.abs).filter((x) => x > 0);
  return f.length > 0 ? Math.min(...f) : 1;
}

/**
 * A `color-relief-color` expression from a legend. MapLibre turns the stops of an `interpolate` on ["elevation"]
 * into a lookup texture (only `interpolate` is read, so classes become flat plateaus between close stops), and
 * packs each stop into the tile encoding: stops closer than one encoding step would share a code (and divide by
 * zero in the shader), so every stop sits at least one step above the last. The no-data code decodes to
 * noDataValue, one step below every real value: that code is transparent, the next one already coloured.
 */
export function colorReliefExpression(legend: Legend, tile: TileInfo, range?: [number, number]): ExpressionSpecification {
  const step = encodingStep(tile);
  const first = tile.noDataValue + step;
  const stops: [number, string][] = [[tile.noDataValue, TRANSPARENT]];
  const push = (v: number, c: string) => {
    // Tolerance of a millionth of a step: (noDataValue + step) − noDataValue is not exactly step in binary.
    if (v - stops[stops.length - 1][0] >= step * (1 - 1e-6)) stops.push([v, c]);
  };
  if (legend.type === 'ramp') {
    const [min, max] = range ?? [legend.min, legend.max];
    const n = legend.colors.length - 1;
    push(first, legend.colors[0]);
    legend.colors.forEach((c, i) => push(min + ((max - min) * i) / Math.max(1, n), c));
  } else {
    const classes = [...legend.classes].sort((a, b) => a.value - b.value);
    classes.forEach((k, i) => {
      const prev = classes[i - 1]?.value ?? k.value - 1;
      const next = classes[i + 1]?.value ?? k.value + 1;
      push(Math.max(first, k.value - (k.value - prev) * 0.49), k.color);
      push(k.value + (next - k.value) * 0.49, k.color);
    });
  }
  return ['interpolate', ['linear'], ['elevation'], ...stops.flat()] as unknown as ExpressionSpecification;
}

/** The diverging colours of cross-validation residuals (observed − predicted): indigo below, rust above. */
export const RESIDUAL_COLORS = { negative: '#33407a', zero: '#f7f7f4', positive: '#c0573e' } as const;
