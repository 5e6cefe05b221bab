/**
 * The layer panel: each entry has a visibility switch, an opacity slider and a legend with units (shown while the
 * entry is ticked). An entry may stand for several MapLibre layers (a line and its labels) and may carry an extra
 * control (the depth chooser). Entries of one product (a run's depth to 300 °C with its P10/P50/P90, mean, spread,
 * probability…) gather in a section that folds; a section opens by itself while one of its entries is ticked.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';
import { fitBbox } from './basemap.ts';
import { el } from './dom.ts';
import type { LayerState } from './state.ts';

export interface LayerEntry {
  id: string;
  /** The entry's full name (the PNG export's legend line, "zoom to"). */
  label: string;
  /** Shown instead of `label` inside its section (the section's title says the rest). */
  shortLabel?: string;
  /** The product section the entry is listed under (absent: listed directly in its group). */
  section?: { key: string; title: string };
  /** MapLibre layer ids drawn by this entry. */
  layers: string[];
  legend: HTMLElement;
  /** Optional control shown under the label (e.g. a depth select). */
  control?: HTMLElement;
  /** Download links etc. */
  extra?: HTMLElement;
  defaultVisible?: boolean;
  /** Starting opacity, 0–1 (default 1). */
  defaultOpacity?: number;
  group: 'data' | 'run' | 'base';
  /** Where the entry's content lies ([west, south, east, north]): offers "zoom to" when given. */
  bounds?: () => [number, number, number, number] | null;
}

/** Paint properties that carry a layer type's opacity (hillshade has none: its exaggeration is scaled instead). */
const OPACITY_PROPS: Record<string, string[]> = {
  circle: ['circle-opacity', 'circle-stroke-opacity'],
  line: ['line-opacity'],
  fill: ['fill-opacity'],
  symbol: ['text-opacity', 'icon-opacity'],
  'color-relief': ['color-relief-opacity'],
  raster: ['raster-opacity'],
};
const HILLSHADE_EXAGGERATION = 0.85;

/** A folding section of entries: its element, its list and whether the user has opened or folded it. */
interface Section {
  root: HTMLDetailsElement;
  list: HTMLElement;
  count: HTMLElement;
  ids: Set<string>;
  userSet: boolean;
}

export class LayerPanel {
  private readonly entries = new Map<string, { entry: LayerEntry; section: HTMLElement; box: HTMLInputElement; slider: HTMLInputElement }>();
  private readonly lists: Record<LayerEntry['group'], HTMLElement>;
  private readonly sections = new Map<string, Section>();

  constructor(
    private readonly map: MapLibreMap,
    root: HTMLElement,
    private readonly state: Record<string, LayerState>,
    private readonly onChange: () => void,
  ) {
    this.lists = {
      run: el(
        'div',
        { class: 'layer-group', id: 'run-layers' },
        el(
          'p',
          { class: 'empty', id: 'run-layers-empty' },
          'No run yet: computed layers (heat-flow surface, isotherm depths, temperature and facies at depth, contours, isograds, residuals) appear here after a run.',
        ),
      ),
      data: el('div', { class: 'layer-group', id: 'data-layers' }),
      base: el('div', { class: 'layer-group', id: 'base-layers' }),
    };
    root.append(el('h2', {}, 'Computed layers'), this.lists.run, el('h2', {}, 'Data'), this.lists.data, el('h2', {}, 'Base'), this.lists.base);
  }

  has(id: string): boolean {
    return this.entries.has(id);
  }

  /** Adds (or replaces) an entry and applies its saved state to the map. */
  add(entry: LayerEntry): void {
    this.remove(entry.id);
    const st = (this.state[entry.id] ??= { visible: entry.defaultVisible ?? true, opacity: entry.defaultOpacity ?? 1 });
    const boxId = `toggle-${entry.id}`;
    const box = el('input', { type: 'checkbox', id: boxId });
    box.checked = st.visible;
    const slider = el('input', {
      type: 'range',
      min: '0',
      max: '100',
      step: '5',
      id: `opacity-${entry.id}`,
      'aria-label': `${entry.label} opacity`,
      class: 'opacity',
    });
    slider.value = String(Math.round(st.opacity * 100));
    const pct = el('output', { for: slider.id, class: 'pct' }, `${slider.value}%`);
    box.addEventListener('change', () => {
      st.visible = box.checked;
      this.apply(entry.id);
      this.onChange();
    });
    slider.addEventListener('input', () => {
      st.opacity = Number(slider.value) / 100;
      pct.textContent = `${slider.value}%`;
      this.apply(entry.id);
      this.onChange();
    });
    const zoom = entry.bounds
      ? el('button', { type: 'button', class: 'zoom-to', id: `zoom-${entry.id}`, 'aria-label': `zoom to ${entry.label}` }, 'zoom to')
      : null;
    zoom?.addEventListener('click', () => {
      const b = entry.bounds?.();
      if (b) fitBbox(this.map, b);
    });
    const section = el(
      'section',
      { class: 'layer', 'data-layer': entry.id },
      el('div', { class: 'layer-head' }, el('label', { for: boxId, title: entry.label }, box, entry.shortLabel ?? entry.label), zoom),
      el('div', { class: 'opacity-row' }, el('span', { class: 'muted' }, 'opacity'), slider, pct),
      entry.control ?? null,
      el('div', { class: 'layer-legend' }, entry.legend),
      entry.extra ?? null,
    );
    (entry.section ? this.sectionOf(entry).list : this.lists[entry.group]).append(section);
    if (entry.group === 'run') document.getElementById('run-layers-empty')?.remove();
    this.entries.set(entry.id, { entry, section, box, slider });
    this.apply(entry.id);
  }

  /** The folding section of an entry's product (made on its first entry). */
  private sectionOf(entry: LayerEntry): Section {
    const { key, title } = entry.section!;
    let s = this.sections.get(key);
    if (!s) {
      const count = el('span', { class: 'muted section-count' });
      const list = el('div', { class: 'layer-section-list' });
      const root = el('details', { class: 'layer-section', id: `layer-section-${key}`, 'data-section': key }, el('summary', {}, title, ' ', count), list);
      const made: Section = { root, list, count, ids: new Set(), userSet: false };
      // Once the user folds, opens or ticks inside it, the section stays as they left it.
      root.querySelector('summary')!.addEventListener('click', () => (made.userSet = true));
      list.addEventListener('change', () => (made.userSet = true));
      this.lists[entry.group].append(root);
      this.sections.set(key, made);
      s = made;
    }
    s.ids.add(entry.id);
    return s;
  }

  /** A section's count of entries and of those ticked; it opens while one is ticked unless the user folded it. */
  private updateSection(key: string): void {
    const s = this.sections.get(key);
    if (!s) return;
    const shown = [...s.ids].filter((id) => this.state[id]?.visible).length;
    s.count.textContent = `(${s.ids.size} layer${s.ids.size === 1 ? '' : 's'}${shown > 0 ? `, ${shown} shown` : ''})`;
    if (!s.userSet) s.root.open = shown > 0 || s.ids.size === 1;
  }

  remove(id: string): void {
    const e = this.entries.get(id);
    if (!e) return;
    e.section.remove();
    this.entries.delete(id);
    const key = e.entry.section?.key;
    const s = key === undefined ? undefined : this.sections.get(key);
    if (s && key !== undefined) {
      s.ids.delete(id);
      if (s.ids.size === 0) {
        s.root.remove();
        this.sections.delete(key);
      } else this.updateSection(key);
    }
  }

  /**
   * Lists an entry or leaves it out while it has nothing to draw (a project's faults before any are uploaded, a
   * terrain entry without a terrain); listed again, its saved visibility and opacity reach the map layers that now
   * exist. A group whose entries are all left out says so.
   */
  setAvailable(id: string, available: boolean): void {
    const e = this.entries.get(id);
    if (!e) return;
    e.section.hidden = !available;
    if (available) this.apply(id);
    const group = e.entry.group;
    if (group === 'run') return;
    const listed = [...this.entries.values()].some((x) => x.entry.group === group && !x.section.hidden);
    let note = this.lists[group].querySelector<HTMLElement>(':scope > p.empty');
    if (!note) {
      note = el(
        'p',
        { class: 'empty', id: `${group}-layers-empty` },
        group === 'data'
          ? 'No data yet: heat-flow sites, grade samples and faults appear here once the project holds them (Data tab).'
          : 'World land, coastlines and graticule, always drawn. A terrain GeoTIFF uploaded in the Data tab is listed here, as hillshade.',
      );
      this.lists[group].prepend(note);
    }
    note.hidden = listed;
  }

  /** Removes every run entry (a new run replaces the old one's layers). */
  clearRun(): void {
    for (const [id, e] of this.entries) if (e.entry.group === 'run') this.remove(id);
  }

  /** Pushes an entry's visibility and opacity to its map layers. */
  apply(id: string): void {
    const e = this.entries.get(id);
    const st = this.state[id];
    if (!e || !st) return;
    // A legend shows while its layer is ticked: an unticked layer's colour bar would describe nothing on the map.
    e.section.classList.toggle('layer-off', !st.visible);
    if (e.entry.section) this.updateSection(e.entry.section.key);
    for (const layerId of e.entry.layers) {
      const layer = this.map.getLayer(layerId);
      if (!layer) continue;
      // Only real changes reach the map: any layout change makes MapLibre reload the layer's source (tiles are
      // fetched and prepared again), so an unchanged visibility is not set again.
      const visibility = st.visible ? 'visible' : 'none';
      if ((this.map.getLayoutProperty(layerId, 'visibility') ?? 'visible') !== visibility) this.map.setLayoutProperty(layerId, 'visibility', visibility);
      const paint = (prop: string, v: number) => {
        if (this.map.getPaintProperty(layerId, prop as 'line-opacity') !== v) this.map.setPaintProperty(layerId, prop as 'line-opacity', v);
      };
      if (layer.type === 'hillshade') paint('hillshade-exaggeration', HILLSHADE_EXAGGERATION * st.opacity);
      for (const prop of OPACITY_PROPS[layer.type] ?? []) {
        // Highlight layers keep their own opacity relation: scale the layer's base value.
        const base = (layer.metadata as { baseOpacity?: Record<string, number> } | undefined)?.baseOpacity?.[prop] ?? 1;
        if (prop === 'icon-opacity') continue; // no icons are drawn (no sprite)
        paint(prop, base * st.opacity);
      }
    }
  }

  /** Re-reads the state (after a restore) into the controls and the map. */
  sync(): void {
    for (const [id, e] of this.entries) {
      const st = this.state[id];
      if (!st) continue;
      e.box.checked = st.visible;
      e.slider.value = String(Math.round(st.opacity * 100));
      const out = e.section.querySelector('output.pct');
      if (out) out.textContent = `${e.slider.value}%`;
      this.apply(id);
    }
  }

  /** Entries currently visible, in panel order (for the PNG export's legend line). */
  visibleEntries(): LayerEntry[] {
    // An entry left out for want of data draws nothing, so it is not named either.
    return [...this.entries.values()].filter((e) => this.state[e.entry.id]?.visible && !e.section.hidden).map((e) => e.entry);
  }

  /** The entry with this id, if present. */
  entry(id: string): LayerEntry | undefined {
    return this.entries.get(id)?.entry;
  }
}
