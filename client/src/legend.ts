import { EMBER, ZONE_COLORS, FAULT_STYLE } from '../../shared/grid/ramps.ts';
import { HEAT_FLOW_RANGE } from './style.ts';

/** Creates an element with text content only: user strings never become HTML. */
export function el<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string> = {}, ...children: (Node | string)[]): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  for (const c of children) e.append(typeof c === 'string' ? document.createTextNode(c) : c);
  return e;
}

function gradientBar(colors: string[], min: number, max: number, units: string): HTMLElement {
  const bar = el('div', { class: 'ramp', style: `background: linear-gradient(to right, ${colors.join(', ')})` });
  const mid = (min + max) / 2;
  const ticks = el('div', { class: 'ramp-ticks' }, el('span', {}, String(min)), el('span', {}, String(mid)), el('span', {}, `${max} ${units}`));
  return el('div', { class: 'ramp-wrap' }, bar, ticks);
}

export interface LayerToggle {
  id: string;
  label: string;
  layers: string[];
  legend: HTMLElement;
}

export function legendEntries(): LayerToggle[] {
  const sites = el(
    'div',
    {},
    gradientBar(EMBER.colors, HEAT_FLOW_RANGE[0], HEAT_FLOW_RANGE[1], 'mW/m²'),
    el('div', { class: 'sizes' }, ...(['high', 'medium', 'low'] as const).map((q, i) => el('span', { class: 'size' }, el('i', { class: 'dot', style: `width:${13 - i * 2.5}px;height:${13 - i * 2.5}px` }), `${q} quality`))),
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
      el('li', {}, el('i', { class: 'line', style: `border-top: ${s.width}px ${s.dash.length ? (s.dash[0] > 2 ? 'dashed' : 'dotted') : 'solid'} ${s.color}` }), k),
    ),
  );
  const terrain = el('p', { class: 'note' }, 'Shaded relief of the ground surface (m above sea level).');
  return [
    { id: 'sites', label: 'Heat-flow sites', layers: ['sites'], legend: sites },
    { id: 'samples', label: 'Grade samples (index-mineral zone)', layers: ['samples'], legend: zones },
    { id: 'faults', label: 'Faults', layers: ['faults', 'fault-labels'], legend: faults },
    { id: 'terrain', label: 'Terrain', layers: ['hillshade'], legend: terrain },
  ];
}
