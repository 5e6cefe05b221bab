/**
 * The vector layers of a run on the map (GeoJSON from the run's .geojson files): isograds with ticks on the
 * high-grade side, contours labelled with their level and units, cross-validation residuals; and their legends.
 */
import type { ExpressionSpecification, LayerSpecification } from 'maplibre-gl';
import type { RunLayer } from './api.ts';
import { el } from './dom.ts';
import { RESIDUAL_COLORS } from './style.ts';
import { ZONE_COLORS } from '../../shared/grid/ramps.ts';

const FONT = ['DejaVu Sans', 'sans-serif'];

/** A contour label: the level rounded to 0.1 and its units (the feature's own `units`, else the layer's). */
function numberLabel(units: string): ExpressionSpecification {
  const v = ['coalesce', ['get', 'value'], ['get', 'depthKm'], ['get', 'level'], 0];
  return ['concat', ['to-string', ['/', ['round', ['*', v, 10]], 10]], ' ', ['coalesce', ['get', 'units'], units]] as unknown as ExpressionSpecification;
}

/** Isograd lines in their zone colours over a dark casing, ticks on the high-grade side, and "<mineral> in" labels. */
function isogradLayers(id: string, source: string): LayerSpecification[] {
  const zoneColor = ['match', ['get', 'mineral'], ...Object.entries(ZONE_COLORS).flat(), '#888888'] as unknown as ExpressionSpecification;
  return [
    { id: `${id}-casing`, type: 'line', source, layout: { 'line-join': 'round' }, paint: { 'line-color': '#2b2b2b', 'line-width': 4 } },
    { id, type: 'line', source, layout: { 'line-join': 'round' }, paint: { 'line-color': zoneColor, 'line-width': 2.2 } },
    // Ticks on the high-grade side: a dashed line offset to that side (positive offset = right of the direction).
    {
      id: `${id}-ticks`,
      type: 'line',
      source,
      paint: {
        'line-color': '#2b2b2b',
        'line-width': 5,
        'line-dasharray': [0.35, 2.2],
        'line-offset': ['match', ['get', 'highSide'], 'left', -4.5, 'right', 4.5, 0] as unknown as ExpressionSpecification,
      },
    },
    {
      id: `${id}-labels`,
      type: 'symbol',
      source,
      layout: {
        'symbol-placement': 'line',
        'text-field': ['concat', ['to-string', ['coalesce', ['get', 'mineral'], ['get', 'zone'], '']], ' in'] as unknown as ExpressionSpecification,
        'text-font': FONT,
        'text-size': 11,
        'text-offset': [0, -1],
      },
      paint: { 'text-color': '#3a1c4a', 'text-halo-color': '#ffffff', 'text-halo-width': 1.4 },
    },
  ];
}

/** Contour lines with their level and units written along them (km for depth contours). */
function contourLayers(id: string, source: string, layer: RunLayer): LayerSpecification[] {
  const km = /depth/.test(layer.name.toLowerCase()) || layer.units === 'km';
  return [
    { id, type: 'line', source, paint: { 'line-color': '#1b1b1b', 'line-width': 0.9 } },
    {
      id: `${id}-labels`,
      type: 'symbol',
      source,
      layout: { 'symbol-placement': 'line', 'symbol-spacing': 220, 'text-field': numberLabel(km ? 'km' : layer.units), 'text-font': FONT, 'text-size': 10.5 },
      paint: { 'text-color': '#1b1b1b', 'text-halo-color': '#ffffff', 'text-halo-width': 1.3 },
    },
  ];
}

/** Cross-validation residuals: circles coloured by sign and sized by magnitude (observed − predicted). */
function residualLayers(id: string, source: string): LayerSpecification[] {
  const r = ['coalesce', ['get', 'residual'], ['get', 'residualMWm2'], ['get', 'error'], 0];
  const color = ['interpolate', ['linear'], r, -20, RESIDUAL_COLORS.negative, 0, RESIDUAL_COLORS.zero, 20, RESIDUAL_COLORS.positive];
  return [
    {
      id,
      type: 'circle',
      source,
      paint: {
        'circle-color': color as unknown as ExpressionSpecification,
        'circle-radius': ['interpolate', ['linear'], ['abs', r], 0, 3, 30, 10] as unknown as ExpressionSpecification,
        'circle-stroke-color': '#222222',
        'circle-stroke-width': 0.8,
      },
    },
  ];
}

/** MapLibre layers for one vector run layer, chosen by what it holds (isograds, contours, residuals, else plain). */
export function vectorLayers(id: string, source: string, layer: RunLayer): LayerSpecification[] {
  const name = layer.name.toLowerCase();
  if (name.includes('isograd')) return isogradLayers(id, source);
  if (name.includes('contour')) return contourLayers(id, source, layer);
  if (name.includes('resid') || name.startsWith('cv')) return residualLayers(id, source);
  // Areas (e.g. cells with no data visible across faults) in the colour of the layer's first class, else grey.
  const fill = layer.legend?.type === 'classes' && layer.legend.classes.length > 0 ? layer.legend.classes[0].color : '#666666';
  return [
    {
      id: `${id}-area`,
      type: 'fill',
      source,
      filter: ['in', ['geometry-type'], ['literal', ['Polygon', 'MultiPolygon']]],
      // The panel's opacity scales this base value (layers.ts), so the map stays readable beneath the area.
      metadata: { baseOpacity: { 'fill-opacity': 0.4 } },
      // No antialiasing: areas made of adjacent cell rectangles then show no seams between them.
      paint: { 'fill-color': fill, 'fill-opacity': 0.4, 'fill-antialias': false },
    },
    {
      id,
      type: 'line',
      source,
      filter: ['in', ['geometry-type'], ['literal', ['LineString', 'MultiLineString']]],
      paint: { 'line-color': '#222222', 'line-width': 1.2 },
    },
    { id: `${id}-points`, type: 'circle', source, filter: ['==', ['geometry-type'], 'Point'], paint: { 'circle-color': '#222222', 'circle-radius': 3 } },
  ];
}

/** The residuals' legend: the diverging ramp from −20 to +20 in the layer's units. */
export function residualLegend(units: string): HTMLElement {
  return el(
    'div',
    {},
    el(
      'div',
      { class: 'ramp-wrap' },
      el('div', {
        class: 'ramp',
        style: `background: linear-gradient(to right, ${RESIDUAL_COLORS.negative}, ${RESIDUAL_COLORS.zero}, ${RESIDUAL_COLORS.positive})`,
      }),
      el('div', { class: 'ramp-ticks' }, el('span', {}, '−20'), el('span', {}, '0'), el('span', {}, `+20 ${units || 'mW/m²'}`)),
    ),
    el('p', { class: 'note' }, 'Leave-one-out residual, observed − predicted; symbol size grows with its size.'),
  );
}

/** The isograds' legend: one swatch per zone's "in" line, and what the ticks mean. */
export function isogradLegend(): HTMLElement {
  return el(
    'div',
    {},
    el(
      'ul',
      { class: 'swatches' },
      ...Object.entries(ZONE_COLORS)
        .slice(1)
        .map(([z, c]) => el('li', {}, el('i', { class: 'line', style: `border-top: 3px solid ${c}; box-shadow: 0 0 0 1px #2b2b2b` }), `${z}-in`)),
    ),
    el('p', { class: 'note' }, 'Ticks mark the high-grade side of each line.'),
  );
}
