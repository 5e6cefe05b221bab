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
  basalHeatFlowMWm2?: unknown;
  reducedHeatFlowMWm2?: unknown;
  solidusCrossingKm?: { wetSolidus: unknown; meltOnset: unknown };
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

const W = 360,
  H = 430;
const M = { left: 46, right: 52, top: 30, bottom: 36 };

/** Depth (km) at a pressure (kbar) along the profile, linear between samples and extrapolated past the ends. */
function depthAtPressure(profile: ColumnPoint[], pKbar: number): number {
  const pts = profile.filter((p) => p.pressureMPa !== null && Number.isFinite(p.pressureMPa));
  if (pts.length < 2) return NaN;
  for (let i = 1; i < pts.length; i++) {
    const a = pts[i - 1],
      b = pts[i];
    const pa = a.pressureMPa! / 100,
      pb = b.pressureMPa! / 100;
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
  const i = profile.findIndex((p) => p.depthKm >= depthKm);
  if (i < 0) return profile[profile.length - 1];
  if (i === 0) return profile[0];
  const a = profile[i - 1],
    b = profile[i];
  const t = (depthKm - a.depthKm) / (b.depthKm - a.depthKm || 1);
  const lerp = (x: number | null, y: number | null) => (x === null || y === null ? null : x + t * (y - x));
  return {
    depthKm,
    temperatureC: lerp(a.temperatureC, b.temperatureC),
    heatFlowMWm2: lerp(a.heatFlowMWm2, b.heatFlowMWm2),
    pressureMPa: lerp(a.pressureMPa, b.pressureMPa),
    facies: t < 0.5 ? a.facies : b.facies,
    faciesApproximate: t < 0.5 ? a.faciesApproximate : b.faciesApproximate,
  };
}

type Band = NonNullable<ColumnAnswer['band']>;

/** The P50 of an uncertain number `{ p10, p50, p90, … }`, or the number itself. */
function mid(v: unknown): number | null {
  if (v !== null && typeof v === 'object') return (v as { p50: number | null }).p50;
  return typeof v === 'number' ? v : null;
}

/** The P10–P90 band along the profile from the column answer's Monte Carlo (shared/schema/column.ts), or null. */
function bandOf(c: ColumnAnswer): Band | null {
  const mc = c.monteCarlo as
    { realizations: number; profileTemperatureC: { p10: number | null; p50: number | null; p90: number | null }[] | null } | null | undefined;
  if (!mc || !mc.profileTemperatureC) return null;
  const t = mc.profileTemperatureC;
  return {
    depthKm: c.profile.map((p) => p.depthKm),
    temperatureC: { p10: t.map((s) => s.p10), p50: t.map((s) => s.p50), p90: t.map((s) => s.p90) },
    realizations: mc.realizations,
  };
}

function isoValue(v: ColumnAnswer['isothermDepthsKm'][string]): number | null {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return v;
  return v.p50;
}

/** Approximate width of a label in px at the plot's small font sizes (about 0.56 em per character). */
function labelWidth(text: string, fontPx: number): number {
  return text.length * fontPx * 0.56;
}

/** Moves labels (sorted by y) apart so that no two overlap vertically; returns the new y of each, same order. */
export function spreadLabels(ys: number[], gapPx: number, top: number, bottom: number): number[] {
  const order = ys.map((y, i) => ({ y, i })).sort((p, q) => p.y - q.y);
  const out = new Array<number>(ys.length);
  let last = -Infinity;
  for (const o of order) {
    const y = Math.max(o.y, last + gapPx, top);
    out[o.i] = y;
    last = y;
  }
  // Pushed past the bottom: shift the whole stack up, keeping the spacing.
  const over = Math.max(0, ...out.map((y) => y - bottom));
  return out.map((y) => y - over);
}

interface PlotFrame {
  pw: number;
  ph: number;
  tMax: number;
  zMax: number;
  x(t: number): number;
  y(z: number): number;
}

/**
 * The plotted window: depth down to the valid part of the column (to the first solidus crossing, where conduction
 * alone stops describing the rock) or a little past the deepest isotherm asked for, whichever is deeper; the
 * temperature axis spans the temperatures in that window and the isotherms asked for.
 */
export function plotWindow(c: ColumnAnswer): { zMax: number; tMax: number } {
  const prof = c.profile.filter((p) => p.temperatureC !== null);
  const full = prof.length > 0 ? prof[prof.length - 1].depthKm : 1;
  const isoDepths = Object.values(c.isothermDepthsKm)
    .map(isoValue)
    .filter((z): z is number => z !== null && Number.isFinite(z));
  const bandIso = Object.values(bandOf(c)?.isothermDepthsKm ?? {})
    .map((v) => v.p90)
    .filter((z): z is number => z !== null && Number.isFinite(z));
  const melt = mid(c.solidusCrossingKm?.wetSolidus) ?? mid(c.solidusCrossingKm?.meltOnset) ?? null;
  const wanted = Math.max(10, ...isoDepths.map((z) => z * 1.3), ...bandIso.map((z) => z * 1.1), melt ?? 0);
  const zMax = Math.min(full, isoDepths.length > 0 || melt !== null ? wanted : full);
  const inWindow = (z: number) => z <= zMax + 1e-9;
  const temps = prof.filter((p) => inWindow(p.depthKm)).map((p) => p.temperatureC!);
  const p90 = (bandOf(c)?.depthKm ?? []).flatMap((z, i) => (inWindow(z) ? [bandOf(c)!.temperatureC.p90[i]] : [])).filter((v): v is number => v !== null);
  const isoT = Object.keys(c.isothermDepthsKm).map(Number).filter(Number.isFinite);
  const tTop = Math.max(100, ...temps, ...p90, ...isoT);
  return { zMax, tMax: Math.ceil((tTop * 1.05) / 50) * 50 };
}

/** Facies fields in T–depth, through the profile's own pressure–depth relation (edges subdivided: a straight edge
 * in P–T is only nearly straight in depth), each labelled inside the plot at the centre of its visible part. */
function faciesFields(c: ColumnAnswer, f: PlotFrame): SVGGElement {
  const fields = svg('g', { class: 'facies-fields' });
  for (const fa of FACIES_FIELDS) {
    const pts: string[] = [];
    for (let i = 0; i < fa.polygon.length; i++) {
      const [t0, p0] = fa.polygon[i];
      const [t1, p1] = fa.polygon[(i + 1) % fa.polygon.length];
      for (let k = 0; k < 8; k++) {
        const z = depthAtPressure(c.profile, p0 + ((p1 - p0) * k) / 8);
        if (Number.isFinite(z)) pts.push(`${f.x(t0 + ((t1 - t0) * k) / 8).toFixed(1)},${f.y(z).toFixed(1)}`);
      }
    }
    if (pts.length < 3) continue;
    fields.append(
      svg('polygon', { points: pts.join(' '), fill: FACIES_TINTS[fa.name] ?? '#eeeeee', stroke: '#ffffff', 'stroke-width': 1, 'data-facies': fa.name }),
    );
    let sx = 0,
      sy = 0,
      n = 0;
    for (const [t, p] of fa.polygon) {
      const zc = Math.min(Math.max(depthAtPressure(c.profile, p), 0), f.zMax);
      if (!Number.isFinite(zc)) continue;
      sx += Math.min(t, f.tMax);
      sy += zc;
      n++;
    }
    if (n === 0 || sx / n >= f.tMax * 0.97 || sy / n >= f.zMax * 0.97) continue;
    const half = labelWidth(fa.name, 9) / 2 + 2;
    const lx = Math.min(Math.max(f.x(sx / n), M.left + half), M.left + f.pw - half);
    fields.append(svg('text', { x: lx, y: Math.max(f.y(sy / n), M.top + 10), class: 'facies-label', 'text-anchor': 'middle' }, fa.name));
  }
  return fields;
}

/** Solidus curves (T at the lithostatic pressure of each depth), the P10–P90 band and the geotherm. */
function curves(c: ColumnAnswer, f: PlotFrame): SVGElement[] {
  const out: SVGElement[] = [];
  const solidus = (fn: (p: ColumnPoint) => number, cls: string, label: string) => {
    const pts = c.profile.map((p) => [fn(p), p.depthKm] as const).filter(([t, z]) => Number.isFinite(t) && t <= f.tMax && z <= f.zMax);
    if (pts.length < 2) return;
    out.push(svg('polyline', { points: pts.map(([t, z]) => `${f.x(t).toFixed(1)},${f.y(z).toFixed(1)}`).join(' '), class: `solidus ${cls}` }));
    const [lt, lz] = pts[Math.floor(pts.length * 0.5)];
    out.push(svg('text', { x: Math.max(f.x(lt) - 4, M.left + labelWidth(label, 9)), y: f.y(lz), class: `solidus-label ${cls}`, 'text-anchor': 'end' }, label));
  };
  solidus((p) => (p.pressureMPa === null ? NaN : wetGraniteSolidusC(p.pressureMPa / 100)), 'wet-granite', 'wet granite solidus');
  solidus((p) => (p.pressureMPa === null ? NaN : dryPeridotiteSolidusC(p.pressureMPa / 1000)), 'dry-peridotite', 'dry peridotite solidus');
  const band = bandOf(c);
  if (band && band.depthKm.length > 1) {
    const lo: string[] = [],
      hi: string[] = [];
    band.depthKm.forEach((z, i) => {
      const a = band.temperatureC.p10[i],
        b = band.temperatureC.p90[i];
      if (a === null || b === null) return;
      lo.push(`${f.x(a).toFixed(1)},${f.y(z).toFixed(1)}`);
      hi.unshift(`${f.x(b).toFixed(1)},${f.y(z).toFixed(1)}`);
    });
    if (lo.length > 1) out.push(svg('polygon', { points: [...lo, ...hi].join(' '), class: 'band' }));
  }
  const prof = c.profile.filter((p) => p.temperatureC !== null);
  out.push(svg('polyline', { points: prof.map((p) => `${f.x(p.temperatureC!).toFixed(1)},${f.y(p.depthKm).toFixed(1)}`).join(' '), class: 'geotherm' }));
  return out;
}

/** Isotherm depths: a mark, a dot and a label each; labels spread apart so that none overlaps another. */
function isothermMarks(c: ColumnAnswer, f: PlotFrame): SVGElement[] {
  const marks = Object.entries(c.isothermDepthsKm)
    .map(([tc, v]) => ({ tc, t: Number(tc), z: isoValue(v) }))
    .filter((m): m is { tc: string; t: number; z: number } => m.z !== null && Number.isFinite(m.z) && m.z <= f.zMax);
  const ys = spreadLabels(
    marks.map((m) => f.y(m.z) - 4),
    12,
    M.top + 10,
    M.top + f.ph - 4,
  );
  return marks.flatMap((m, i) => {
    const right = f.x(m.t) < M.left + f.pw * 0.55;
    return [
      svg('line', { x1: M.left, x2: f.x(m.t), y1: f.y(m.z), y2: f.y(m.z), class: 'isotherm-mark' }),
      svg('circle', { cx: f.x(m.t), cy: f.y(m.z), r: 3.5, class: 'isotherm-dot' }),
      svg(
        'text',
        { x: f.x(m.t) + (right ? 6 : -6), y: ys[i], class: 'isotherm-label', 'text-anchor': right ? 'start' : 'end' },
        `${m.tc} °C at ${fmt(m.z, 1)} km`,
      ),
    ];
  });
}

/** Axes: temperature on top, depth on the left, lithostatic pressure (kbar) on the right. */
function axes(c: ColumnAnswer, f: PlotFrame, full: number): SVGGElement {
  const g = svg('g', { class: 'axes' });
  g.append(svg('rect', { x: M.left, y: M.top, width: f.pw, height: f.ph, class: 'frame' }));
  for (const t of niceTicks(0, f.tMax, 5))
    g.append(svg('line', { x1: f.x(t), x2: f.x(t), y1: M.top, y2: M.top - 4 }), svg('text', { x: f.x(t), y: M.top - 7, 'text-anchor': 'middle' }, String(t)));
  g.append(svg('text', { x: M.left + f.pw / 2, y: 11, 'text-anchor': 'middle', class: 'axis-title' }, 'temperature (°C)'));
  for (const z of niceTicks(0, f.zMax, 6))
    g.append(
      svg('line', { x1: M.left, x2: M.left - 4, y1: f.y(z), y2: f.y(z) }),
      svg('text', { x: M.left - 7, y: f.y(z) + 4, 'text-anchor': 'end' }, String(z)),
    );
  g.append(
    svg('text', { x: 12, y: M.top + f.ph / 2, transform: `rotate(-90 12 ${M.top + f.ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'depth (km)'),
  );
  const pMax = (profileAt(c.profile, f.zMax)?.pressureMPa ?? 0) / 100;
  for (const p of niceTicks(0, pMax, 6)) {
    const z = depthAtPressure(c.profile, p);
    if (!Number.isFinite(z) || z > f.zMax) continue;
    g.append(
      svg('line', { x1: M.left + f.pw, x2: M.left + f.pw + 4, y1: f.y(z), y2: f.y(z) }),
      svg('text', { x: M.left + f.pw + 7, y: f.y(z) + 4 }, String(p)),
    );
  }
  const rx = W - 8;
  g.append(
    svg(
      'text',
      { x: rx, y: M.top + f.ph / 2, transform: `rotate(90 ${rx} ${M.top + f.ph / 2})`, 'text-anchor': 'middle', class: 'axis-title' },
      'lithostatic pressure (kbar)',
    ),
  );
  g.append(svg('text', { x: M.left + 4, y: H - 20, class: 'note-text' }, 'facies fields approximate (gradational ±50 °C, ±1.5 kbar)'));
  if (f.zMax < full - 1e-9)
    g.append(
      svg(
        'text',
        { x: M.left + 4, y: H - 8, class: 'note-text', id: 'column-window-note' },
        `shown to ${fmt(f.zMax, 0)} km of the ${fmt(full, 0)} km column (readout and table cover all)`,
      ),
    );
  return g;
}

/** The cursor line and dot, and the readout they feed (pointer or ↑ ↓ keys). */
function cursorReadout(root: SVGSVGElement, c: ColumnAnswer, f: PlotFrame): HTMLElement {
  const cursor = svg('g', { class: 'cursor', visibility: 'hidden' });
  const hline = svg('line', { x1: M.left, x2: M.left + f.pw, class: 'cursor-line' });
  const dot = svg('circle', { r: 4, class: 'cursor-dot' });
  cursor.append(hline, dot);
  root.append(cursor);
  const readout = el('p', { class: 'readout', 'aria-live': 'polite' }, 'Move the pointer over the plot (or focus it and use ↑ ↓) to read values.');
  const maxDepth = c.profile.length > 0 ? c.profile[c.profile.length - 1].depthKm : 1;
  let cursorDepth = 0;
  const show = (z: number) => {
    cursorDepth = Math.max(0, Math.min(maxDepth, z));
    const p = profileAt(c.profile, cursorDepth);
    if (!p) return;
    const visible = cursorDepth <= f.zMax;
    cursor.setAttribute('visibility', visible ? 'visible' : 'hidden');
    for (const [k, v] of [
      ['y1', f.y(cursorDepth)],
      ['y2', f.y(cursorDepth)],
    ] as const)
      hline.setAttribute(k, String(v));
    dot.setAttribute('cx', String(f.x(p.temperatureC ?? 0)));
    dot.setAttribute('cy', String(f.y(cursorDepth)));
    readout.textContent = `${fmt(cursorDepth, 1)} km · ${fmt(p.temperatureC, 0)} °C · ${fmt((p.pressureMPa ?? NaN) / 100, 2)} kbar · ${fmt(p.heatFlowMWm2, 1)} mW/m²${p.facies ? ` · ${p.facies} (approximate)` : ''}`;
    readout.dataset.depthKm = String(cursorDepth);
    readout.dataset.temperatureC = String(p.temperatureC ?? '');
  };
  root.addEventListener('mousemove', (ev) => {
    const r = root.getBoundingClientRect();
    const sy = ((ev.clientY - r.top) / r.height) * H;
    if (sy >= M.top && sy <= M.top + f.ph) show(((sy - M.top) / f.ph) * f.zMax);
  });
  root.addEventListener('keydown', (ev) => {
    const step = ev.shiftKey ? 5 : 1;
    if (ev.key !== 'ArrowDown' && ev.key !== 'ArrowUp') return;
    show(cursorDepth + (ev.key === 'ArrowDown' ? step : -step));
    ev.preventDefault();
  });
  return readout;
}

/** Builds the plot and its readout. */
export function columnPlot(c: ColumnAnswer): { plot: SVGSVGElement; readout: HTMLElement } {
  const { zMax, tMax } = plotWindow(c);
  const full = c.profile.length > 0 ? c.profile[c.profile.length - 1].depthKm : 1;
  const pw = W - M.left - M.right,
    ph = H - M.top - M.bottom;
  const f: PlotFrame = { pw, ph, tMax, zMax, x: (t) => M.left + (t / tMax) * pw, y: (z) => M.top + (z / zMax) * ph };
  const root = svg('svg', {
    viewBox: `0 0 ${W} ${H}`,
    width: W,
    height: H,
    class: 'column-plot',
    role: 'img',
    tabindex: 0,
    'aria-label': 'Temperature against depth; use the up and down arrow keys to move the cursor',
  });
  const clipId = `clip-${Math.random().toString(36).slice(2, 8)}`;
  root.append(svg('defs', {}, svg('clipPath', { id: clipId }, svg('rect', { x: M.left, y: M.top, width: pw, height: ph }))));
  const plotArea = svg('g', { 'clip-path': `url(#${clipId})` });
  plotArea.append(faciesFields(c, f), ...curves(c, f), ...isothermMarks(c, f));
  root.append(plotArea, axes(c, f, full));
  return { plot: root, readout: cursorReadout(root, c, f) };
}

/** The summary table under the plot: heat flow at the surface and at the base, isotherm depths, solidus. */
export function columnSummary(c: ColumnAnswer, heatFlowSource: string): HTMLElement {
  const rows: [string, string, string][] = [
    ['Surface heat flow', `${fmt(c.surfaceHeatFlowMWm2, 1)}${typeof c.heatFlowSdMWm2 === 'number' ? ` ± ${fmt(c.heatFlowSdMWm2, 1)}` : ''}`, 'mW/m²'],
    ['Heat flow at the base', fmt(mid(c.basalHeatFlowMWm2), 1), 'mW/m²'],
    ['Reduced heat flow', fmt(mid(c.reducedHeatFlowMWm2), 1), 'mW/m²'],
  ];
  for (const [t, v] of Object.entries(c.isothermDepthsKm)) {
    if (v !== null && typeof v === 'object') rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${fmt(v.p10, 2)} / ${fmt(v.p50, 2)} / ${fmt(v.p90, 2)}`, 'km']);
    else rows.push([`Depth to ${t} °C`, v === null ? 'not reached' : fmt(v, 2), v === null ? '' : 'km']);
  }
  for (const [t, v] of Object.entries(bandOf(c)?.isothermDepthsKm ?? {})) {
    // A null percentile: the isotherm is not reached above the model's base in that share of realizations.
    const f = (x: number | null) => (x === null ? 'deeper' : fmt(x, 2));
    rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${f(v.p10)} / ${f(v.p50)} / ${f(v.p90)}`, 'km']);
  }
  if (c.solidusCrossingKm) {
    // Rock-aware crossings: no temperature is shown below the melt onset.
    const w = mid(c.solidusCrossingKm.wetSolidus),
      m = mid(c.solidusCrossingKm.meltOnset);
    rows.push([
      `Water-saturated solidus reached at${c.wetSolidus ? ` (${c.wetSolidus.label}, ${c.wetSolidus.layer})` : ''}`,
      w === null ? 'not reached' : fmt(w, 1),
      w === null ? '' : 'km',
    ]);
    rows.push([
      `Melt onset, no temperature below${c.meltOnset ? ` (${c.meltOnset.label}, ${c.meltOnset.layer})` : ''}`,
      m === null ? 'not reached' : fmt(m, 1),
      m === null ? '' : 'km',
    ]);
    if (c.lithosphereBaseKm !== undefined)
      rows.push([
        'Lithosphere base (mantle adiabat below)',
        c.lithosphereBaseKm === null ? 'not reached' : fmt(c.lithosphereBaseKm, 1),
        c.lithosphereBaseKm === null ? '' : 'km',
      ]);
  }
  const table = el(
    'table',
    { class: 'kv', id: 'column-summary' },
    el('tbody', {}, ...rows.map(([k, v, u]) => el('tr', {}, el('th', { scope: 'row' }, k), el('td', { class: 'num' }, v), el('td', { class: 'unit' }, u)))),
  );
  const src = el('p', { class: 'note', id: 'column-source' }, `Heat flow from: ${heatFlowSource}`);
  const warn = (c.warnings ?? []).length > 0 ? el('ul', { class: 'warnings' }, ...(c.warnings ?? []).map((w) => el('li', {}, String(w)))) : null;
  const bandNote = bandOf(c)
    ? el('p', { class: 'note' }, `Shaded band: P10–P90 of ${bandOf(c)?.realizations ?? 'the'} realizations.`)
    : el('p', { class: 'note' }, 'No uncertainty band: the run has no realizations.');
  return el('div', {}, src, table, bandNote, warn);
}
