import { EMBER, ZONE_COLORS, FAULT_STYLE } from '../../shared/grid/ramps.ts';
import type { Legend } from '../../shared/schema/run.ts';
import { el } from './dom.ts';
import { HEAT_FLOW_RANGE } from './style.ts';
import type { LayerEntry } from './layers.ts';

export { el } from './dom.ts';

/** A short number for legend ticks (no trailing zeros; 0 stays 0). */
export function tick(v: number): string {
  if (!Number.isFinite(v)) return '—';
  const a = Math.abs(v);
  return String(a >= 100 ? Math.round(v) : a >= 10 ? Math.round(v * 10) / 10 : Math.round(v * 100) / 100);
}

export function gradientBar(colors: string[], min: number, max: number, units: string): HTMLElement {
  const bar = el('div', { class: 'ramp', style: `background: linear-gradient(to right, ${colors.join(', ')})` });
  const mid = (min + max) / 2;
  const ticks = el('div', { class: 'ramp-ticks' }, el('span', {}, tick(min)), el('span', {}, tick(mid)), el('span', {}, `${tick(max)} ${units}`));
  return el('div', { class: 'ramp-wrap' }, bar, ticks);
}

/** The legend of a run layer from the server's description (a ramp or classes, with units). */
export function legendFromSpec(legend: Legend | null, units: string, range?: [number, number]): HTMLElement {
  if (legend === null) return el('p', { class: 'note' }, units ? `Units: ${units}` : 'No legend');
  const body = legend.type === 'ramp' ? gradientBar(legend.colors, ...(range ?? [legend.min, legend.max]), legend.units || units) : classList(legend);
  return legend.note === undefined ? body : el('div', {}, body, el('p', { class: 'note legend-note' }, legend.note));
}

function classList(legend: Extract<Legend, { type: 'classes' }>): HTMLElement {
  return el(
    'ul',
    { class: 'swatches' },
    ...legend.classes.map((k) => el('li', {}, el('i', { class: 'swatch', style: `background:${k.color}` }), k.label)),
    legend.units ? el('li', { class: 'muted' }, legend.units) : null,
  );
}

/** One line of text for a legend (the PNG export's legend strip). */
export function legendLine(label: string, legend: Legend | null, units: string): string {
  if (legend === null) return label;
  const note = legend.note === undefined ? '' : ` (${legend.note})`;
  if (legend.type === 'ramp') return `${label}: ${tick(legend.min)}–${tick(legend.max)} ${legend.units || units}${note}`;
  return `${label}: ${legend.classes.map((k) => k.label).join(', ')}${note}`;
}

/** The entries of the demo's data layers and the terrain. */
export function legendEntries(): LayerEntry[] {
  const sites = el(
    'div',
    {},
    gradientBar(EMBER.colors, HEAT_FLOW_RANGE[0], HEAT_FLOW_RANGE[1], 'mW/m²'),
    el(
      'div',
      { class: 'sizes' },
      ...(['high', 'medium', 'low'] as const).map((q, i) =>
        el('span', { class: 'size' }, el('i', { class: 'dot', style: `width:${13 - i * 2.5}px;height:${13 - i * 2.5}px` }), `${q} quality`),
      ),
    ),
  );
  const zones = el(
    'ul',
    { class: 'swatches' },
    ...Object.entries(ZONE_COLORS).map(([z, c]) => el('li', {}, el('i', { class: 'swatch round', style: `background:${c}` }), z)),
    el('li', {}, el('i', { class: 'swatch round', style: 'background:#ffffff' }), 'facies or P–T only'),
  );
  const faults = el(
    'ul',
    { class: 'swatches' },
    ...Object.entries(FAULT_STYLE).map(([k, s]) =>
      el(
        'li',
        {},
        el('i', { class: 'line', style: `border-top: ${s.width}px ${s.dash.length ? (s.dash[0] > 2 ? 'dashed' : 'dotted') : 'solid'} ${s.color}` }),
        k,
      ),
    ),
  );
  const terrain = el('p', { class: 'note' }, 'Shaded relief of the ground surface (m above sea level).');
  return [
    { id: 'sites', label: 'Heat-flow sites (by quality)', layers: ['sites-halo', 'sites'], legend: sites, group: 'data' },
    { id: 'samples', label: 'Grade samples (index-mineral zone)', layers: ['samples', 'sample-highlight'], legend: zones, group: 'data' },
    { id: 'faults', label: 'Faults (by kind)', layers: ['faults', 'fault-labels', 'fault-highlight'], legend: faults, group: 'data' },
    { id: 'terrain', label: 'Terrain (hillshade)', layers: ['hillshade', 'project-hillshade'], legend: terrain, group: 'base' },
  ];
}
