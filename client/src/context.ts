/**
 * What every panel shares: the map, the server's configuration, the page state and its link, the layer list, and
 * a few page-wide actions (show an error, switch tab). main.ts builds it once and hands it to each panel.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';
import type { AppConfig } from './api.ts';
import type { LayerPanel } from './layers.ts';
import type { AppState } from './state.ts';
import type { ShownRun } from './runlayers.ts';
import type { ColumnAnswer } from './inspector.ts';
import type { SectionAnswer } from './section-plot.ts';
import type { HeatInPlaceResult } from './heat.ts';
import { el } from './dom.ts';

/** The page's public handle (window.subtherm): tests and the console read it. */
export interface AppHandle {
  map: MapLibreMap;
  config: AppConfig;
  state: AppState;
  readOnly: boolean;
  run: ShownRun | null;
  lastColumn: { request: Record<string, unknown>; answer: ColumnAnswer } | null;
  lastSection: SectionAnswer | null;
  /** The last heat-in-place job the page finished: its request, report and download links. */
  heatInPlace: HeatInPlaceResult | null;
  /** Resolves once the page has restored its state (and a saved run's layers). */
  ready: Promise<void>;
}

declare global {
  interface Window {
    subtherm?: AppHandle;
  }
}

export interface AppContext {
  map: MapLibreMap;
  cfg: AppConfig;
  state: AppState;
  app: AppHandle;
  layerPanel: LayerPanel;
  /** A saved project's id (null for a link-only page) and its edit token (null when read-only). */
  projectId: string | null;
  editToken: string | null;
  readOnly: boolean;
  /** Records the view and writes the compact state into the address bar (debounced). */
  syncUrl(): void;
  showError(message: string): void;
  selectTab(id: string): void;
}

export function message(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

/** A page-wide error line at the top of the left panel. */
export function showError(text: string): void {
  const panel = document.getElementById('panel');
  panel?.prepend(el('div', { class: 'error', role: 'alert' }, text));
}

/** An accessible tab list over `defs`; returns the function that selects a tab by id. */
export function tabs(root: HTMLElement, defs: { id: string; label: string; body: HTMLElement }[]): (id: string) => void {
  const list = el('div', { class: 'tabs', role: 'tablist', 'aria-label': 'Tools' });
  const bodies = el('div', { class: 'tab-bodies' });
  const buttons: HTMLButtonElement[] = [];
  const select = (id: string) => {
    for (const b of buttons) {
      const on = b.dataset.tab === id;
      b.setAttribute('aria-selected', String(on));
      b.tabIndex = on ? 0 : -1;
    }
    for (const d of defs) d.body.hidden = d.id !== id;
  };
  defs.forEach((d, i) => {
    const b = el('button', { type: 'button', role: 'tab', id: `tab-${d.id}`, 'aria-controls': `tabpanel-${d.id}`, 'data-tab': d.id }, d.label);
    b.addEventListener('click', () => select(d.id));
    b.addEventListener('keydown', (ev) => {
      const k = ev.key === 'ArrowRight' ? 1 : ev.key === 'ArrowLeft' ? -1 : 0;
      if (k === 0) return;
      const next = defs[(i + k + defs.length) % defs.length];
      select(next.id);
      document.getElementById(`tab-${next.id}`)?.focus();
    });
    buttons.push(b);
    list.append(b);
    d.body.id = `tabpanel-${d.id}`;
    d.body.setAttribute('role', 'tabpanel');
    d.body.setAttribute('aria-labelledby', b.id);
    d.body.classList.add('tab-body');
    bodies.append(d.body);
  });
  root.append(list, bodies);
  select(defs[0].id);
  return select;
}
