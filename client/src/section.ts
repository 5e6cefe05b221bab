/**
 * Cross-sections: draw a line on the map (click points; double-click or Enter finishes; Escape cancels), then
 * POST /api/section draws the vertical temperature section beneath it: temperature coloured with the project's
 * ramp, isotherm curves, approximate facies boundaries and labels, fault and isograd crossings.
 */
import type { GeoJSONSource, Map as MapLibreMap, MapMouseEvent } from 'maplibre-gl';
import { EMBER, rampColor } from '../../shared/grid/ramps.ts';
import { el, fmt, niceTicks, svg } from './dom.ts';

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
  faultCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  isogradCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  warnings?: string[];
}

/** Line drawing on the map. `onFinish` gets the vertices [lon, lat]; `onState` reports drawing on/off. */
export class LineDrawer {
  private points: [number, number][] = [];
  private active = false;

  constructor(
    private readonly map: MapLibreMap,
    private readonly onFinish: (line: [number, number][]) => void,
    private readonly onState: (drawing: boolean, n: number) => void,
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
        const a = this.map.project(last), b = this.map.project(p);
        if (Math.hypot(a.x - b.x, a.y - b.y) < 5) continue;
      }
      pts.push(p);
    }
    this.points = pts;
    this.active = false;
    this.map.doubleClickZoom.enable();
    this.map.getCanvas().style.cursor = '';
    this.render();
    if (pts.length >= 2) this.onFinish(pts);
  }

  /** Shows a finished line (e.g. restored). */
  show(line: [number, number][]): void {
    this.points = line;
    this.render();
  }

  private render(): void {
    const features: GeoJSON.Feature[] = this.points.map((p) => ({ type: 'Feature', properties: {}, geometry: { type: 'Point', coordinates: p } }));
    if (this.points.length >= 2) features.push({ type: 'Feature', properties: {}, geometry: { type: 'LineString', coordinates: this.points } });
    (this.map.getSource('section-line') as GeoJSONSource | undefined)?.setData({ type: 'FeatureCollection', features });
    this.onState(this.active, this.points.length);
  }
}

/** The section as SVG: distance across, depth down, temperature colours, isotherms, facies and crossings. */
export function sectionPlot(s: SectionAnswer): HTMLElement {
  const W = 640, H = 300, M = { l: 46, r: 14, t: 22, b: 34 };
  const pw = W - M.l - M.r, ph = H - M.t - M.b;
  const maxZ = s.depthKm[s.depthKm.length - 1] || 1;
  const L = s.lengthKm || 1;
  const x = (d: number) => M.l + (d / L) * pw;
  const y = (z: number) => M.t + (z / maxZ) * ph;
  const temps = s.temperatureC.filter((t): t is number => t !== null);
  const tMin = Math.min(...temps), tMax = Math.max(...temps);
  // Temperature image: one pixel per sample, scaled up by the SVG (the section's own resolution, no smoothing lies).
  const cv = document.createElement('canvas');
  cv.width = s.width;
  cv.height = s.height;
  const ctx = cv.getContext('2d')!;
  const img = ctx.createImageData(s.width, s.height);
  const rgb: [number, number, number] = [0, 0, 0];
  for (let k = 0; k < s.height; k++) {
    for (let j = 0; j < s.width; j++) {
      const t = s.temperatureC[k * s.width + j];
      const o = (k * s.width + j) * 4;
      if (t === null) continue;
      rampColor(EMBER, (t - tMin) / (tMax - tMin || 1), rgb);
      img.data[o] = rgb[0];
      img.data[o + 1] = rgb[1];
      img.data[o + 2] = rgb[2];
      img.data[o + 3] = 255;
    }
  }
  ctx.putImageData(img, 0, 0);
  const root = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: '100%', class: 'section-plot', role: 'img', 'aria-label': `temperature section, ${fmt(L, 1)} km long, to ${maxZ} km depth` });
  root.append(svg('image', { href: cv.toDataURL(), x: M.l, y: M.t, width: pw, height: ph, preserveAspectRatio: 'none', style: 'image-rendering: pixelated' }));

  // Facies boundaries (where the class changes between neighbouring cells) and labels at each class's centre.
  if (s.faciesClass && s.faciesNames) {
    const cls = s.faciesClass;
    const dx = pw / s.width, dy = ph / s.height;
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
        if (j + 1 < s.width && cls[k * s.width + j + 1] !== c) d += `M${(M.l + (j + 1) * dx).toFixed(1)},${(M.t + k * dy).toFixed(1)}v${dy.toFixed(1)}`;
        if (k + 1 < s.height && cls[(k + 1) * s.width + j] !== c) d += `M${(M.l + j * dx).toFixed(1)},${(M.t + (k + 1) * dy).toFixed(1)}h${dx.toFixed(1)}`;
      }
    }
    if (d) root.append(svg('path', { d, class: 'facies-boundary' }));
    for (const [c, [sj, sk, n]] of sums) {
      if (n < 6) continue;
      root.append(svg('text', { x: M.l + (sj / n + 0.5) * dx, y: M.t + (sk / n + 0.5) * dy, class: 'facies-label on-dark', 'text-anchor': 'middle' }, `${s.faciesNames[c]} (approx.)`));
    }
  }
  // Isotherms.
  for (const iso of s.isotherms) {
    let d = '';
    let pen = false;
    iso.depthKm.forEach((z, j) => {
      if (z === null) {
        pen = false;
        return;
      }
      d += `${pen ? 'L' : 'M'}${x(s.distanceKm[j]).toFixed(1)},${y(z).toFixed(1)}`;
      pen = true;
    });
    if (!d) continue;
    root.append(svg('path', { d, class: 'isotherm-curve', 'data-temperature': iso.temperatureC }));
    const j = iso.depthKm.findIndex((z) => z !== null);
    if (j >= 0) root.append(svg('text', { x: x(s.distanceKm[j]) + 3, y: y(iso.depthKm[j]!) - 3, class: 'isotherm-label on-dark' }, `${iso.temperatureC} °C`));
  }
  // Crossings: faults and isograds as ticks at the surface with labels.
  const cross = (list: SectionAnswer['faultCrossings'], cls: string, label: (p: Record<string, unknown>, id: unknown) => string) => {
    for (const c of list ?? []) {
      root.append(svg('line', { x1: x(c.distanceKm), x2: x(c.distanceKm), y1: M.t - 8, y2: M.t + ph, class: cls }));
      root.append(svg('text', { x: x(c.distanceKm), y: M.t - 10, 'text-anchor': 'middle', class: `${cls}-label` }, label(c.properties, c.id)));
    }
  };
  cross(s.faultCrossings, 'fault-cross', (p, id) => String(p.name ?? p.id ?? id ?? 'fault'));
  cross(s.isogradCrossings, 'isograd-cross', (p) => `${String(p.mineral ?? p.zone ?? 'isograd')} in`);
  // Axes.
  root.append(svg('rect', { x: M.l, y: M.t, width: pw, height: ph, class: 'frame' }));
  for (const d of niceTicks(0, L, 6)) root.append(svg('text', { x: x(d), y: H - M.b + 14, 'text-anchor': 'middle' }, String(d)));
  for (const z of niceTicks(0, maxZ, 5)) root.append(svg('text', { x: M.l - 5, y: y(z) + 4, 'text-anchor': 'end' }, String(z)));
  root.append(svg('text', { x: M.l + pw / 2, y: H - 4, 'text-anchor': 'middle', class: 'axis-title' }, 'distance along the line (km)'));
  root.append(svg('text', { x: 11, y: M.t + ph / 2, transform: `rotate(-90 11 ${M.t + ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'depth (km)'));
  const legend = el('div', { class: 'ramp-wrap' }, el('div', { class: 'ramp', style: `background: linear-gradient(to right, ${EMBER.colors.join(', ')})` }), el('div', { class: 'ramp-ticks' }, el('span', {}, fmt(tMin, 0)), el('span', {}, fmt((tMin + tMax) / 2, 0)), el('span', {}, `${fmt(tMax, 0)} °C`)));
  const warn = (s.warnings ?? []).map((w) => el('p', { class: 'note warning' }, String(w)));
  return el('figure', { class: 'section', id: 'section-figure' }, root, legend, el('p', { class: 'note' }, 'Steady conduction per column, no lateral heat flow; facies boundaries approximate (gradational).'), ...warn);
}
