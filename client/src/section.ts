/**
 * Cross-sections: draw a line on the map (click points; double-click or Enter finishes; Escape cancels), then
 * POST /api/section draws the vertical temperature section beneath it: temperature coloured with the project's
 * ramp with its limits and crossings (section-plot.ts). The panel holds the draw button and the section's depth; the
 * answer opens in the drawer under the map.
 */
import type { GeoJSONSource, Map as MapLibreMap, MapMouseEvent } from 'maplibre-gl';
import { ApiError, sendJson } from './api.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, replace } from './dom.ts';
import { sectionPlot, type SectionAnswer } from './section-plot.ts';

/**
 * Line (or polygon) drawing on the map. `onFinish` gets the vertices [lon, lat]; `onState` reports drawing on/off.
 * With `closed`, the vertices are a ring (at least 3, shown filled) drawn into the GeoJSON source `sourceId`.
 */
export class LineDrawer {
  private points: [number, number][] = [];
  private active = false;

  constructor(
    private readonly map: MapLibreMap,
    private readonly onFinish: (line: [number, number][]) => void,
    private readonly onState: (drawing: boolean, n: number) => void,
    private readonly shape: { sourceId: string; closed: boolean } = { sourceId: 'section-line', closed: false },
  ) {
    map.on('click', (e: MapMouseEvent) => {
      if (!this.active) return;
      this.points.push([e.lngLat.lng, e.lngLat.lat]);
      this.render();
    });
    map.on('dblclick', (e: MapMouseEvent) => {
      if (!this.active) return;
      e.preventDefault();
      this.finish();
    });
    window.addEventListener('keydown', (ev) => {
      if (!this.active) return;
      if (ev.key === 'Enter') {
        ev.preventDefault();
        this.finish();
      } else if (ev.key === 'Escape') {
        ev.preventDefault();
        this.cancel();
      }
    });
  }

  get drawing(): boolean {
    return this.active;
  }

  start(): void {
    this.setDrawing(true);
  }

  cancel(): void {
    this.setDrawing(false);
  }

  /** Starts or ends drawing: no points yet; double-click zoom off and a crosshair cursor while drawing. */
  private setDrawing(on: boolean): void {
    this.active = on;
    this.points = [];
    if (on) this.map.doubleClickZoom.disable();
    else this.map.doubleClickZoom.enable();
    this.map.getCanvas().style.cursor = on ? 'crosshair' : '';
    this.render();
  }

  private finish(): void {
    // A double-click adds its two clicks' points first: drop repeats closer than a few pixels.
    const pts: [number, number][] = [];
    for (const p of this.points) {
      const last = pts[pts.length - 1];
      if (last) {
        const a = this.map.project(last),
          b = this.map.project(p);
        if (Math.hypot(a.x - b.x, a.y - b.y) < 5) continue;
      }
      pts.push(p);
    }
    this.points = pts;
    this.active = false;
    this.map.doubleClickZoom.enable();
    this.map.getCanvas().style.cursor = '';
    this.render();
    if (pts.length >= (this.shape.closed ? 3 : 2)) this.onFinish(pts);
  }

  /** Shows a finished line (e.g. restored). */
  show(line: [number, number][]): void {
    this.points = line;
    this.render();
  }

  private render(): void {
    const features: GeoJSON.Feature[] = this.points.map((p) => ({ type: 'Feature', properties: {}, geometry: { type: 'Point', coordinates: p } }));
    if (this.points.length >= 2)
      features.push({
        type: 'Feature',
        properties: {},
        geometry: { type: 'LineString', coordinates: this.shape.closed ? [...this.points, this.points[0]] : this.points },
      });
    if (this.shape.closed && this.points.length >= 3)
      features.push({ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [[...this.points, this.points[0]]] } });
    void this.map.getSource<GeoJSONSource>(this.shape.sourceId)?.setData({ type: 'FeatureCollection', features });
    this.onState(this.active, this.points.length);
  }
}

export interface SectionPanel {
  root: HTMLElement;
  drawer: LineDrawer;
  /** Updates the hint once a run is shown. */
  setRunDone(done: boolean): void;
}

export function sectionPanel(ctx: AppContext): SectionPanel {
  const hint = el('p', { class: 'note', id: 'section-hint' }, 'A section needs a finished run: its heat-flow surface feeds each column.');
  const drawBtn = el('button', { type: 'button', id: 'section-draw' }, 'Draw a section line');
  const depth = el('input', { id: 'section-depth', type: 'number', min: '1', max: '300', step: '1', value: '40' });
  const out = el('div', { id: 'section-out', 'aria-live': 'polite' });
  const drawState = el('p', { class: 'note', id: 'section-state', 'aria-live': 'polite' });
  const drawer = document.getElementById('drawer')!;
  const drawerBody = document.getElementById('drawer-body')!;
  document.getElementById('drawer-close')!.addEventListener('click', () => {
    drawer.hidden = true;
  });
  const onLine = async (line: [number, number][]) => {
    const run = ctx.app.run?.run;
    if (!run) {
      replace(out, errorBox('Run the model first: the section reads the run’s heat-flow surface.'));
      return;
    }
    const maxDepthKm = Number(depth.value) || 40;
    replace(out, el('p', { class: 'loading' }, 'Computing the section…'));
    ctx.selectTab('section');
    try {
      const s = await sendJson<SectionAnswer>('POST', '/api/section', { runId: run.id, line, maxDepthKm });
      ctx.app.lastSection = s;
      replace(drawerBody, sectionPlot(s));
      drawer.hidden = false;
      document.getElementById('drawer-title')!.textContent = `Cross-section, ${s.lengthKm.toFixed(1)} km`;
      replace(out, el('p', { class: 'ok', role: 'status' }, `Section of ${s.lengthKm.toFixed(1)} km to ${maxDepthKm} km depth: shown under the map.`));
    } catch (e) {
      replace(out, e instanceof ApiError ? errorBox(`Section: ${e.message}`, e.details) : errorBox(`Section: ${message(e)}`));
    }
  };
  const lineDrawer = new LineDrawer(
    ctx.map,
    (line) => void onLine(line),
    (drawing, n) => {
      drawBtn.textContent = drawing ? 'Drawing… (Enter or double-click to finish, Escape to cancel)' : 'Draw a section line';
      drawBtn.setAttribute('aria-pressed', String(drawing));
      drawState.textContent = drawing ? `${n} point${n === 1 ? '' : 's'}` : '';
    },
  );
  drawBtn.addEventListener('click', () => (lineDrawer.drawing ? lineDrawer.cancel() : lineDrawer.start()));
  const root = el(
    'div',
    {},
    el('h3', {}, 'Cross-section'),
    hint,
    el('div', { class: 'field-row' }, el('label', { for: depth.id }, 'Depth of the section (km)'), depth),
    el('div', { class: 'button-row' }, drawBtn),
    drawState,
    out,
  );
  return {
    root,
    drawer: lineDrawer,
    setRunDone(done: boolean) {
      replace(hint, done ? 'Draw a line to see the section beneath it.' : '');
    },
  };
}
