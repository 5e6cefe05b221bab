/**
 * Cross-sections: draw a line on the map (click points; double-click or Enter finishes; Escape cancels), then
 * POST /api/section draws the vertical temperature section beneath it: temperature coloured with the project's
 * ramp, isotherm curves, approximate facies boundaries and labels, fault and isograd crossings. The panel holds
 * the draw button and the section's depth; the answer opens in the drawer under the map.
 */
import type { GeoJSONSource, Map as MapLibreMap, MapMouseEvent } from 'maplibre-gl';
import { EMBER, rampColor } from '../../shared/grid/ramps.ts';
import { ApiError, sendJson } from './api.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, fmt, niceTicks, replace, svg } from './dom.ts';

export interface SectionAnswer {
  lengthKm: number;
  width: number;
  height: number;
  distanceKm: number[];
  depthKm: number[];
  temperatureC: (number | null)[];
  faciesNames?: string[];
  faciesClass?: number[];
  isotherms: { temperatureC: number; depthKm: (number | null)[] }[];
  /** Melt onset per column, km (null: not reached above the section's depth): no temperature is given below it. */
  meltOnsetKm?: (number | null)[];
  faultCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  isogradCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  warnings?: string[];
}

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
    this.active = true;
    this.points = [];
    this.map.doubleClickZoom.disable();
    this.map.getCanvas().style.cursor = 'crosshair';
    this.render();
  }

  cancel(): void {
    this.active = false;
    this.points = [];
    this.map.doubleClickZoom.enable();
    this.map.getCanvas().style.cursor = '';
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

interface Frame {
  W: number;
  H: number;
  M: { l: number; r: number; t: number; b: number };
  pw: number;
  ph: number;
  x(d: number): number;
  y(z: number): number;
}

/** The temperature image: one pixel per sample, scaled up by the SVG (the section's own resolution, no smoothing). */
function temperatureImage(s: SectionAnswer, tMin: number, tMax: number): string {
  const cv = document.createElement('canvas');
  cv.width = s.width;
  cv.height = s.height;
  const ctx = cv.getContext('2d')!;
  const img = ctx.createImageData(s.width, s.height);
  const rgb: [number, number, number] = [0, 0, 0];
  for (let i = 0; i < s.width * s.height; i++) {
    const t = s.temperatureC[i];
    if (t === null) continue;
    rampColor(EMBER, (t - tMin) / (tMax - tMin || 1), rgb);
    img.data.set([rgb[0], rgb[1], rgb[2], 255], i * 4);
  }
  ctx.putImageData(img, 0, 0);
  return cv.toDataURL();
}

/** Facies boundaries (where the class changes between neighbouring cells) and labels at each class's centre. */
function faciesMarks(s: SectionAnswer, f: Frame): SVGElement[] {
  if (!s.faciesClass || !s.faciesNames) return [];
  const cls = s.faciesClass;
  const dx = f.pw / s.width,
    dy = f.ph / s.height;
  let d = '';
  const sums = new Map<number, [number, number, number]>();
  for (let k = 0; k < s.height; k++) {
    for (let j = 0; j < s.width; j++) {
      const c = cls[k * s.width + j];
      if (c >= 0) {
        const e = sums.get(c) ?? [0, 0, 0];
        e[0] += j;
        e[1] += k;
        e[2]++;
        sums.set(c, e);
      }
      if (j + 1 < s.width && cls[k * s.width + j + 1] !== c) d += `M${(f.M.l + (j + 1) * dx).toFixed(1)},${(f.M.t + k * dy).toFixed(1)}v${dy.toFixed(1)}`;
      if (k + 1 < s.height && cls[(k + 1) * s.width + j] !== c) d += `M${(f.M.l + j * dx).toFixed(1)},${(f.M.t + (k + 1) * dy).toFixed(1)}h${dx.toFixed(1)}`;
    }
  }
  const out: SVGElement[] = d ? [svg('path', { d, class: 'facies-boundary' })] : [];
  for (const [c, [sj, sk, n]] of sums) {
    if (n < 6) continue;
    out.push(
      svg(
        'text',
        { x: f.M.l + (sj / n + 0.5) * dx, y: f.M.t + (sk / n + 0.5) * dy, class: 'facies-label on-dark', 'text-anchor': 'middle' },
        `${s.faciesNames[c]} (approx.)`,
      ),
    );
  }
  return out;
}

/** Isotherm curves with a label at each curve's first point. */
function isothermMarks(s: SectionAnswer, f: Frame): SVGElement[] {
  const out: SVGElement[] = [];
  for (const iso of s.isotherms) {
    let d = '';
    let pen = false;
    iso.depthKm.forEach((z, j) => {
      if (z === null) {
        pen = false;
        return;
      }
      d += `${pen ? 'L' : 'M'}${f.x(s.distanceKm[j]).toFixed(1)},${f.y(z).toFixed(1)}`;
      pen = true;
    });
    if (!d) continue;
    out.push(svg('path', { d, class: 'isotherm-curve', 'data-temperature': iso.temperatureC }));
    const j = iso.depthKm.findIndex((z) => z !== null);
    if (j >= 0) out.push(svg('text', { x: f.x(s.distanceKm[j]) + 3, y: f.y(iso.depthKm[j]!) - 3, class: 'isotherm-label on-dark' }, `${iso.temperatureC} °C`));
  }
  return out;
}

/**
 * Where the columns melt: below each column's melt onset the section gives no temperature, so that part is hatched
 * and the melt onset drawn as a line across the columns that reach it, labelled once.
 */
function meltOnsetMarks(s: SectionAnswer, f: Frame, hatchId: string): SVGElement[] {
  const melt = s.meltOnsetKm ?? [];
  const dx = f.pw / s.width;
  let zone = '',
    line = '',
    pen = false;
  melt.forEach((z, j) => {
    if (z === null) return void (pen = false);
    const x0 = f.M.l + j * dx,
      y = f.y(z);
    zone += `M${x0.toFixed(1)},${y.toFixed(1)}h${dx.toFixed(1)}V${(f.M.t + f.ph).toFixed(1)}h${(-dx).toFixed(1)}Z`;
    line += `${pen ? 'L' : 'M'}${(x0 + dx / 2).toFixed(1)},${y.toFixed(1)}`;
    pen = true;
  });
  if (!zone) return [];
  const j = melt.findIndex((z) => z !== null);
  return [
    svg('path', { d: zone, fill: `url(#${hatchId})`, class: 'invalid-zone' }),
    svg('path', { d: line, class: 'melt-onset-line' }),
    svg('text', { x: f.M.l + (j + 0.5) * dx + 3, y: f.y(melt[j]!) + 12, class: 'limit-label', id: 'section-melt-label' }, 'melt onset: no temperature below'),
  ];
}

/** Crossings (faults, isograds) as ticks at the surface with labels; then the frame and the axes. */
function crossingsAndAxes(s: SectionAnswer, f: Frame, L: number, maxZ: number): SVGElement[] {
  const out: SVGElement[] = [];
  const cross = (list: SectionAnswer['faultCrossings'], cls: string, label: (p: Record<string, unknown>, id: unknown) => string) => {
    for (const c of list ?? []) {
      out.push(svg('line', { x1: f.x(c.distanceKm), x2: f.x(c.distanceKm), y1: f.M.t - 8, y2: f.M.t + f.ph, class: cls }));
      out.push(svg('text', { x: f.x(c.distanceKm), y: f.M.t - 10, 'text-anchor': 'middle', class: `${cls}-label` }, label(c.properties, c.id)));
    }
  };
  cross(s.faultCrossings, 'fault-cross', (p, id) => String(p.name ?? p.id ?? id ?? 'fault'));
  cross(s.isogradCrossings, 'isograd-cross', (p) => `${String(p.mineral ?? p.zone ?? 'isograd')} in`);
  out.push(svg('rect', { x: f.M.l, y: f.M.t, width: f.pw, height: f.ph, class: 'frame' }));
  for (const d of niceTicks(0, L, 6)) out.push(svg('text', { x: f.x(d), y: f.H - f.M.b + 14, 'text-anchor': 'middle' }, String(d)));
  for (const z of niceTicks(0, maxZ, 5)) out.push(svg('text', { x: f.M.l - 5, y: f.y(z) + 4, 'text-anchor': 'end' }, String(z)));
  out.push(svg('text', { x: f.M.l + f.pw / 2, y: f.H - 4, 'text-anchor': 'middle', class: 'axis-title' }, 'distance along the line (km)'));
  out.push(
    svg('text', { x: 11, y: f.M.t + f.ph / 2, transform: `rotate(-90 11 ${f.M.t + f.ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'depth (km)'),
  );
  return out;
}

/** The section as SVG: distance across, depth down, temperature colours, isotherms, facies and crossings. */
export function sectionPlot(s: SectionAnswer): HTMLElement {
  const W = 640,
    H = 300,
    M = { l: 46, r: 14, t: 22, b: 34 };
  const pw = W - M.l - M.r,
    ph = H - M.t - M.b;
  const maxZ = s.depthKm[s.depthKm.length - 1] || 1;
  const L = s.lengthKm || 1;
  const f: Frame = { W, H, M, pw, ph, x: (d) => M.l + (d / L) * pw, y: (z) => M.t + (z / maxZ) * ph };
  const temps = s.temperatureC.filter((t): t is number => t !== null);
  const tMin = Math.min(...temps),
    tMax = Math.max(...temps);
  const root = svg('svg', {
    viewBox: `0 0 ${W} ${H}`,
    width: '100%',
    class: 'section-plot',
    role: 'img',
    'aria-label': `temperature section, ${fmt(L, 1)} km long, to ${maxZ} km depth`,
  });
  root.append(
    svg('image', {
      href: temperatureImage(s, tMin, tMax),
      x: M.l,
      y: M.t,
      width: pw,
      height: ph,
      preserveAspectRatio: 'none',
      style: 'image-rendering: pixelated',
    }),
  );
  const hatchId = `section-hatch-${Math.random().toString(36).slice(2, 8)}`;
  root.append(
    svg(
      'defs',
      {},
      svg(
        'pattern',
        { id: hatchId, patternUnits: 'userSpaceOnUse', width: 6, height: 6, patternTransform: 'rotate(45)' },
        svg('rect', { width: 6, height: 6, class: 'hatch-bg' }),
        svg('line', { x1: 0, y1: 0, x2: 0, y2: 6, class: 'hatch-line' }),
      ),
    ),
  );
  root.append(...faciesMarks(s, f), ...isothermMarks(s, f), ...meltOnsetMarks(s, f, hatchId), ...crossingsAndAxes(s, f, L, maxZ));
  const legend = el(
    'div',
    { class: 'ramp-wrap' },
    el('div', { class: 'ramp', style: `background: linear-gradient(to right, ${EMBER.colors.join(', ')})` }),
    el('div', { class: 'ramp-ticks' }, el('span', {}, fmt(tMin, 0)), el('span', {}, fmt((tMin + tMax) / 2, 0)), el('span', {}, `${fmt(tMax, 0)} °C`)),
  );
  const warn = (s.warnings ?? []).map((w) => el('p', { class: 'note warning' }, String(w)));
  return el(
    'figure',
    { class: 'section', id: 'section-figure' },
    root,
    legend,
    el('p', { class: 'note' }, 'Steady conduction per column, no lateral heat flow; facies boundaries approximate (gradational).'),
    ...warn,
  );
}

// ---- The panel ----------------------------------------------------------------------------------------------

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
