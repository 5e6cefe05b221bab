/**
 * The column inspector: the temperature–depth plot of one column as POST /api/column computes it (the numbers are
 * the server's, never read from pixel colours). Drawn as SVG: approximate facies fields behind, the solidus curves,
 * the P10–P90 band, the geotherm, isotherm depths marked, depth on the left and lithostatic pressure (kbar) on
 * the right, and the values under the cursor.
 */
import { FACIES_FIELDS, dryPeridotiteSolidusC, wetGraniteSolidusC } from '../../shared/petrology/index.ts';
import { el, fmt, niceTicks, svg } from './dom.ts';

export interface ColumnPoint {
  depthKm: number;
  temperatureC: number | null;
  heatFlowMWm2: number | null;
  pressureMPa: number | null;
  facies: string | null;
  faciesApproximate?: boolean;
}

export interface ColumnAnswer {
  surfaceHeatFlowMWm2?: number;
  heatFlowSdMWm2?: number | null;
  surfaceTemperatureC?: number;
  isothermDepthsKm: Record<string, number | null | { p10: number | null; p50: number | null; p90: number | null }>;
  basalHeatFlowMWm2?: number | null;
  reducedHeatFlowMWm2?: number | null;
  solidusCrossingKm?: { wetSolidus: number | null; meltOnset: number | null };
  meltOnset?: { layer: string; label: string } | null;
  wetSolidus?: { layer: string; label: string } | null;
  lithosphereBaseKm?: number | null;
  profile: ColumnPoint[];
  band?: {
    depthKm: number[];
    temperatureC: { p10: (number | null)[]; p50: (number | null)[]; p90: (number | null)[] };
    isothermDepthsKm?: Record<string, { p10: number | null; p50: number | null; p90: number | null }>;
    realizations?: number;
  } | null;
  warnings?: string[];
  [k: string]: unknown;
}

/** Pale tints for the facies fields (drawn behind the geotherm at low opacity; the project's own choice). */
const FACIES_TINTS: Record<string, string> = {
  zeolite: '#e9efe0',
  'prehnite-pumpellyite': '#e3ecd6',
  greenschist: '#cfe3c2',
  amphibolite: '#e5d9b8',
  granulite: '#ecd0c3',
  blueschist: '#d5dde9',
  eclogite: '#e2d3e4',
  hornfels: '#efe6d6',
};

const W = 360, H = 430;
const M = { left: 46, right: 52, top: 30, bottom: 36 };

/** Depth (km) at a pressure (kbar) along the profile, linear between samples and extrapolated past the ends. */
function depthAtPressure(profile: ColumnPoint[], pKbar: number): number {
  const pts = profile.filter((p) => p.pressureMPa !== null && Number.isFinite(p.pressureMPa));
  if (pts.length < 2) return NaN;
  for (let i = 1; i < pts.length; i++) {
    const a = pts[i - 1], b = pts[i];
    const pa = a.pressureMPa! / 100, pb = b.pressureMPa! / 100;
    if (pKbar <= pb || i === pts.length - 1) {
      const t = pb === pa ? 0 : (pKbar - pa) / (pb - pa);
      return a.depthKm + t * (b.depthKm - a.depthKm);
    }
  }
  return NaN;
}

/** Linear interpolation of a profile field at a depth. */
export function profileAt(profile: ColumnPoint[], depthKm: number): ColumnPoint | null {
  if (profile.length === 0) return null;
  let i = profile.findIndex((p) => p.depthKm >= depthKm);
  if (i < 0) return profile[profile.length - 1];
  if (i === 0) return profile[0];
  const a = profile[i - 1], b = profile[i];
  const t = (depthKm - a.depthKm) / (b.depthKm - a.depthKm || 1);
  const lerp = (x: number | null, y: number | null) => (x === null || y === null ? null : x + t * (y - x));
  return { depthKm, temperatureC: lerp(a.temperatureC, b.temperatureC), heatFlowMWm2: lerp(a.heatFlowMWm2, b.heatFlowMWm2), pressureMPa: lerp(a.pressureMPa, b.pressureMPa), facies: t < 0.5 ? a.facies : b.facies, faciesApproximate: t < 0.5 ? a.faciesApproximate : b.faciesApproximate };
}

function isoValue(v: ColumnAnswer['isothermDepthsKm'][string]): number | null {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return v;
  return v.p50;
}

/** Builds the plot and its readout. */
export function columnPlot(c: ColumnAnswer): { plot: SVGSVGElement; readout: HTMLElement } {
  const prof = c.profile.filter((p) => p.temperatureC !== null);
  const maxDepth = c.profile.length > 0 ? c.profile[c.profile.length - 1].depthKm : 1;
  const p90 = c.band?.temperatureC.p90.filter((v): v is number => v !== null) ?? [];
  // The axis reaches past the dry peridotite solidus near the surface (about 1120 °C), so both solidus curves
  // are always in view beside the geotherm.
  const tTop = Math.max(1200, ...prof.map((p) => p.temperatureC!), ...p90);
  const tMax = Math.ceil((tTop * 1.05) / 100) * 100;
  const pw = W - M.left - M.right, ph = H - M.top - M.bottom;
  const x = (t: number) => M.left + (t / tMax) * pw;
  const y = (z: number) => M.top + (z / maxDepth) * ph;
  const root = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'column-plot', role: 'img', tabindex: 0, 'aria-label': 'Temperature against depth; use the up and down arrow keys to move the cursor' });
  const clipId = `clip-${Math.random().toString(36).slice(2, 8)}`;
  root.append(svg('defs', {}, svg('clipPath', { id: clipId }, svg('rect', { x: M.left, y: M.top, width: pw, height: ph }))));
  const plotArea = svg('g', { 'clip-path': `url(#${clipId})` });
  root.append(plotArea);

  // Facies fields in T–depth, through the profile's own pressure–depth relation; edges subdivided because a
  // straight edge in P–T is only nearly straight in depth.
  const fields = svg('g', { class: 'facies-fields' });
  for (const f of FACIES_FIELDS) {
    const pts: string[] = [];
    let sx = 0, sy = 0, n = 0;
    for (let i = 0; i < f.polygon.length; i++) {
      const [t0, p0] = f.polygon[i];
      const [t1, p1] = f.polygon[(i + 1) % f.polygon.length];
      for (let k = 0; k < 8; k++) {
        const t = t0 + ((t1 - t0) * k) / 8, p = p0 + ((p1 - p0) * k) / 8;
        const z = depthAtPressure(c.profile, p);
        if (!Number.isFinite(z)) continue;
        pts.push(`${x(t).toFixed(1)},${y(z).toFixed(1)}`);
      }
    }
    if (pts.length < 3) continue;
    fields.append(svg('polygon', { points: pts.join(' '), fill: FACIES_TINTS[f.name] ?? '#eeeeee', stroke: '#ffffff', 'stroke-width': 1, 'data-facies': f.name }));
    // Label at the centre of the visible part of the field.
    for (const [t, p] of f.polygon) {
      const z = depthAtPressure(c.profile, p);
      const tc = Math.min(t, tMax), zc = Math.min(Math.max(z, 0), maxDepth);
      if (Number.isFinite(zc)) {
        sx += tc;
        sy += zc;
        n++;
      }
    }
    if (n > 0 && sx / n < tMax * 0.97 && sy / n < maxDepth * 0.97) {
      fields.append(svg('text', { x: x(sx / n), y: y(sy / n), class: 'facies-label', 'text-anchor': 'middle' }, f.name));
    }
  }
  plotArea.append(fields);

  // Solidus curves, T at the lithostatic pressure of each depth.
  const solidus = (fn: (p: ColumnPoint) => number, cls: string, label: string) => {
    const pts = c.profile.map((p) => [fn(p), p.depthKm] as const).filter(([t]) => Number.isFinite(t) && t <= tMax);
    if (pts.length < 2) return;
    plotArea.append(svg('polyline', { points: pts.map(([t, z]) => `${x(t).toFixed(1)},${y(z).toFixed(1)}`).join(' '), class: `solidus ${cls}` }));
    const [lt, lz] = pts[Math.floor(pts.length * 0.15)];
    plotArea.append(svg('text', { x: x(lt) - 4, y: y(lz), class: `solidus-label ${cls}`, 'text-anchor': 'end' }, label));
  };
  solidus((p) => (p.pressureMPa === null ? NaN : wetGraniteSolidusC(p.pressureMPa / 100)), 'wet-granite', 'wet granite solidus');
  solidus((p) => (p.pressureMPa === null ? NaN : dryPeridotiteSolidusC(p.pressureMPa / 1000)), 'dry-peridotite', 'dry peridotite solidus');

  // P10–P90 band.
  if (c.band && c.band.depthKm.length > 1) {
    const lo: string[] = [], hi: string[] = [];
    c.band.depthKm.forEach((z, i) => {
      const a = c.band!.temperatureC.p10[i], b = c.band!.temperatureC.p90[i];
      if (a === null || b === null) return;
      lo.push(`${x(a).toFixed(1)},${y(z).toFixed(1)}`);
      hi.unshift(`${x(b).toFixed(1)},${y(z).toFixed(1)}`);
    });
    if (lo.length > 1) plotArea.append(svg('polygon', { points: [...lo, ...hi].join(' '), class: 'band' }));
  }

  // Geotherm.
  plotArea.append(svg('polyline', { points: prof.map((p) => `${x(p.temperatureC!).toFixed(1)},${y(p.depthKm).toFixed(1)}`).join(' '), class: 'geotherm' }));

  // Isotherm depths.
  for (const [tc, v] of Object.entries(c.isothermDepthsKm)) {
    const z = isoValue(v);
    const t = Number(tc);
    if (z === null || !Number.isFinite(z)) continue;
    plotArea.append(svg('line', { x1: M.left, x2: x(t), y1: y(z), y2: y(z), class: 'isotherm-mark' }));
    plotArea.append(svg('circle', { cx: x(t), cy: y(z), r: 3.5, class: 'isotherm-dot' }));
    const right = x(t) < M.left + pw * 0.55;
    plotArea.append(svg('text', { x: x(t) + (right ? 6 : -6), y: y(z) - 4, class: 'isotherm-label', 'text-anchor': right ? 'start' : 'end' }, `${tc} °C at ${fmt(z, 1)} km`));
  }

  // Axes: temperature on top, depth on the left, pressure (kbar) on the right.
  const axes = svg('g', { class: 'axes' });
  axes.append(svg('rect', { x: M.left, y: M.top, width: pw, height: ph, class: 'frame' }));
  for (const t of niceTicks(0, tMax, 5)) {
    axes.append(svg('line', { x1: x(t), x2: x(t), y1: M.top, y2: M.top - 4 }), svg('text', { x: x(t), y: M.top - 7, 'text-anchor': 'middle' }, String(t)));
  }
  axes.append(svg('text', { x: M.left + pw / 2, y: 11, 'text-anchor': 'middle', class: 'axis-title' }, 'temperature (°C)'));
  for (const z of niceTicks(0, maxDepth, 6)) {
    axes.append(svg('line', { x1: M.left, x2: M.left - 4, y1: y(z), y2: y(z) }), svg('text', { x: M.left - 7, y: y(z) + 4, 'text-anchor': 'end' }, String(z)));
  }
  axes.append(svg('text', { x: 12, y: M.top + ph / 2, transform: `rotate(-90 12 ${M.top + ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'depth (km)'));
  const pMax = (c.profile[c.profile.length - 1]?.pressureMPa ?? 0) / 100;
  for (const p of niceTicks(0, pMax, 6)) {
    const z = depthAtPressure(c.profile, p);
    if (!Number.isFinite(z) || z > maxDepth) continue;
    axes.append(svg('line', { x1: M.left + pw, x2: M.left + pw + 4, y1: y(z), y2: y(z) }), svg('text', { x: M.left + pw + 7, y: y(z) + 4 }, String(p)));
  }
  const rx = W - 8;
  axes.append(svg('text', { x: rx, y: M.top + ph / 2, transform: `rotate(90 ${rx} ${M.top + ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'lithostatic pressure (kbar)'));
  axes.append(svg('text', { x: M.left + 4, y: H - 20, class: 'note-text' }, 'facies fields approximate (gradational ±50 °C, ±1.5 kbar)'));
  root.append(axes);

  // Cursor and readout.
  const cursor = svg('g', { class: 'cursor', visibility: 'hidden' });
  const hline = svg('line', { x1: M.left, x2: M.left + pw, class: 'cursor-line' });
  const dot = svg('circle', { r: 4, class: 'cursor-dot' });
  cursor.append(hline, dot);
  root.append(cursor);
  const readout = el('p', { class: 'readout', 'aria-live': 'polite' }, 'Move the pointer over the plot (or focus it and use ↑ ↓) to read values.');
  let cursorDepth = 0;
  const show = (z: number) => {
    cursorDepth = Math.max(0, Math.min(maxDepth, z));
    const p = profileAt(c.profile, cursorDepth);
    if (!p) return;
    cursor.setAttribute('visibility', 'visible');
    hline.setAttribute('y1', String(y(cursorDepth)));
    hline.setAttribute('y2', String(y(cursorDepth)));
    dot.setAttribute('cx', String(x(p.temperatureC ?? 0)));
    dot.setAttribute('cy', String(y(cursorDepth)));
    readout.textContent = `${fmt(cursorDepth, 1)} km · ${fmt(p.temperatureC, 0)} °C · ${fmt((p.pressureMPa ?? NaN) / 100, 2)} kbar · ${fmt(p.heatFlowMWm2, 1)} mW/m²${p.facies ? ` · ${p.facies} (approximate)` : ''}`;
    readout.dataset.depthKm = String(cursorDepth);
    readout.dataset.temperatureC = String(p.temperatureC ?? '');
  };
  root.addEventListener('mousemove', (ev) => {
    const r = root.getBoundingClientRect();
    const sy = ((ev.clientY - r.top) / r.height) * H;
    if (sy < M.top || sy > M.top + ph) return;
    show(((sy - M.top) / ph) * maxDepth);
  });
  root.addEventListener('keydown', (ev) => {
    const step = ev.shiftKey ? 5 : 1;
    if (ev.key === 'ArrowDown') show(cursorDepth + step);
    else if (ev.key === 'ArrowUp') show(cursorDepth - step);
    else return;
    ev.preventDefault();
  });
  return { plot: root, readout };
}

/** The summary table under the plot: heat flow at the surface and at the base, isotherm depths, solidus. */
export function columnSummary(c: ColumnAnswer, heatFlowSource: string): HTMLElement {
  const rows: [string, string, string][] = [
    ['Surface heat flow', `${fmt(c.surfaceHeatFlowMWm2, 1)}${typeof c.heatFlowSdMWm2 === 'number' ? ` ± ${fmt(c.heatFlowSdMWm2, 1)}` : ''}`, 'mW/m²'],
    ['Heat flow at the base', fmt(c.basalHeatFlowMWm2, 1), 'mW/m²'],
    ['Reduced heat flow', fmt(c.reducedHeatFlowMWm2, 1), 'mW/m²'],
  ];
  for (const [t, v] of Object.entries(c.isothermDepthsKm)) {
    if (v !== null && typeof v === 'object') rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${fmt(v.p10, 2)} / ${fmt(v.p50, 2)} / ${fmt(v.p90, 2)}`, 'km']);
    else rows.push([`Depth to ${t} °C`, v === null ? 'not reached' : fmt(v, 2), v === null ? '' : 'km']);
  }
  for (const [t, v] of Object.entries(c.band?.isothermDepthsKm ?? {})) {
    // A null percentile: the isotherm is not reached above the model's base in that share of realizations.
    const f = (x: number | null) => (x === null ? 'deeper' : fmt(x, 2));
    rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${f(v.p10)} / ${f(v.p50)} / ${f(v.p90)}`, 'km']);
  }
  if (c.solidusCrossingKm) {
    // Rock-aware crossings: no temperature is shown below the melt onset.
    const w = c.solidusCrossingKm.wetSolidus, m = c.solidusCrossingKm.meltOnset;
    rows.push([`Water-saturated solidus reached at${c.wetSolidus ? ` (${c.wetSolidus.label}, ${c.wetSolidus.layer})` : ''}`, w === null ? 'not reached' : fmt(w, 1), w === null ? '' : 'km']);
    rows.push([`Melt onset, no temperature below${c.meltOnset ? ` (${c.meltOnset.label}, ${c.meltOnset.layer})` : ''}`, m === null ? 'not reached' : fmt(m, 1), m === null ? '' : 'km']);
    if (c.lithosphereBaseKm !== undefined) rows.push(['Lithosphere base (mantle adiabat below)', c.lithosphereBaseKm === null ? 'not reached' : fmt(c.lithosphereBaseKm, 1), c.lithosphereBaseKm === null ? '' : 'km']);
  }
  const table = el('table', { class: 'kv', id: 'column-summary' }, el('tbody', {}, ...rows.map(([k, v, u]) => el('tr', {}, el('th', { scope: 'row' }, k), el('td', { class: 'num' }, v), el('td', { class: 'unit' }, u)))));
  const src = el('p', { class: 'note', id: 'column-source' }, `Heat flow from: ${heatFlowSource}`);
  const warn = (c.warnings ?? []).length > 0 ? el('ul', { class: 'warnings' }, ...(c.warnings ?? []).map((w) => el('li', {}, String(w)))) : null;
  const bandNote = c.band ? el('p', { class: 'note' }, `Shaded band: P10–P90 of ${c.band.realizations ?? 'the'} realizations.`) : el('p', { class: 'note' }, 'No uncertainty band: the run has no realizations.');
  return el('div', {}, src, table, bandNote, warn);
}
