/**
 * The section figure under the map: distance across, depth down, temperature coloured with the project's ramp,
 * isotherm curves, approximate facies boundaries and labels, the melt onset (hatched below: no temperature there),
 * the lithosphere base (the adiabat below it) and the fault and isograd crossings.
 */
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
  /** Melt onset per column, km (null: not reached above the section's depth): no temperature is given below it. */
  meltOnsetKm?: (number | null)[];
  /** Lithosphere base per column, km (null: not reached above the section's depth): the mantle adiabat below it. */
  lithosphereBaseKm?: (number | null)[];
  faultCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  isogradCrossings?: { id: string | number | null; distanceKm: number; properties: Record<string, unknown> }[];
  warnings?: string[];
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

/**
 * The base of the thermal lithosphere: where each column's conductive geotherm meets the mantle adiabat (the
 * temperature follows the adiabat below it), drawn as a dashed line across the columns that reach it, labelled once.
 */
function lithosphereBaseMarks(s: SectionAnswer, f: Frame): SVGElement[] {
  const base = s.lithosphereBaseKm ?? [];
  const dx = f.pw / s.width;
  let line = '',
    pen = false;
  base.forEach((z, j) => {
    if (z === null) return void (pen = false);
    line += `${pen ? 'L' : 'M'}${(f.M.l + (j + 0.5) * dx).toFixed(1)},${f.y(z).toFixed(1)}`;
    pen = true;
  });
  if (!line) return [];
  // Labelled where the base is shallowest.
  let j = base.findIndex((z) => z !== null);
  base.forEach((z, k) => {
    if (z !== null && z < base[j]!) j = k;
  });
  const xl = Math.min(Math.max(f.M.l + (j + 0.5) * dx, f.M.l + 100), f.M.l + f.pw - 100);
  return [
    svg('path', { d: line, class: 'lithosphere-line', id: 'section-lithosphere-base' }),
    svg(
      'text',
      { x: xl, y: f.y(base[j]!) - 5, 'text-anchor': 'middle', class: 'limit-label', id: 'section-lithosphere-label' },
      'lithosphere base: mantle adiabat below',
    ),
  ];
}

type Crossings = NonNullable<SectionAnswer['faultCrossings']>;
/** Width of a character of the crossing labels (9 px DejaVu Sans), SVG units, and the height of a row of them. */
const LABEL_CHAR = 5.4,
  LABEL_ROW = 11,
  LABEL_ROWS = 3;

/**
 * A row for each label centred at x (SVG units) so that no two labels in a row overlap: greedy from left to right,
 * each label in the first row whose last label ends before it starts; −1 when all `maxRows` rows are taken there.
 */
export function labelRows(items: { x: number; text: string }[], charPx: number, maxRows: number): number[] {
  const order = items.map((_, i) => i).sort((a, b) => items[a].x - items[b].x);
  const ends: number[] = [];
  const rows = new Array<number>(items.length).fill(-1);
  for (const i of order) {
    const half = (items[i].text.length * charPx) / 2 + 2;
    const free = ends.findIndex((e) => e <= items[i].x - half);
    const row = free >= 0 ? free : ends.length < maxRows ? ends.length : -1;
    if (row < 0) continue;
    ends[row] = items[i].x + half;
    rows[i] = row;
  }
  return rows;
}

/** The fault and isograd crossings with their labels and each label's row (labelRows). */
function crossingLabels(s: SectionAnswer, x: (d: number) => number): { c: Crossings[number]; cls: string; text: string; row: number }[] {
  const all = [
    ...(s.faultCrossings ?? []).map((c) => ({ c, cls: 'fault-cross', text: String(c.properties.name ?? c.properties.id ?? c.id ?? 'fault') })),
    ...(s.isogradCrossings ?? []).map((c) => ({ c, cls: 'isograd-cross', text: `${String(c.properties.mineral ?? c.properties.zone ?? 'isograd')} in` })),
  ];
  const rows = labelRows(
    all.map((a) => ({ x: x(a.c.distanceKm), text: a.text })),
    LABEL_CHAR,
    LABEL_ROWS,
  );
  return all.map((a, i) => ({ ...a, row: rows[i] }));
}

/**
 * Crossings (faults, isograds) as ticks from above the frame with their labels in rows that do not overlap (a label
 * with no room is the tick's tooltip); then the frame and the axes.
 */
function crossingsAndAxes(s: SectionAnswer, f: Frame, L: number, maxZ: number): SVGElement[] {
  const out: SVGElement[] = [];
  for (const { c, cls, text, row } of crossingLabels(s, (d) => f.x(d))) {
    const x = f.x(c.distanceKm);
    out.push(svg('line', { x1: x, x2: x, y1: f.M.t - 8 - Math.max(0, row) * LABEL_ROW, y2: f.M.t + f.ph, class: cls }, svg('title', {}, text)));
    if (row >= 0) out.push(svg('text', { x, y: f.M.t - 10 - row * LABEL_ROW, 'text-anchor': 'middle', class: `${cls}-label` }, text));
  }
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
  const M = { l: 46, r: 14, t: 22, b: 34 };
  const W = 640,
    pw = W - M.l - M.r,
    ph = 244;
  const maxZ = s.depthKm[s.depthKm.length - 1] || 1;
  const L = s.lengthKm || 1;
  const x = (d: number) => M.l + (d / L) * pw;
  // Room above the frame for the rows of crossing labels.
  M.t += LABEL_ROW * Math.max(0, ...crossingLabels(s, x).map((c) => c.row));
  const H = M.t + ph + M.b;
  const f: Frame = { W, H, M, pw, ph, x, y: (z) => M.t + (z / maxZ) * ph };
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
  root.append(
    ...faciesMarks(s, f),
    ...isothermMarks(s, f),
    ...meltOnsetMarks(s, f, hatchId),
    ...lithosphereBaseMarks(s, f),
    ...crossingsAndAxes(s, f, L, maxZ),
  );
  const legend = el(
    'div',
    { class: 'ramp-wrap' },
    el('div', { class: 'ramp', style: `background: linear-gradient(to right, ${EMBER.colors.join(', ')})` }),
    el('div', { class: 'ramp-ticks' }, el('span', {}, fmt(tMin, 0)), el('span', {}, fmt((tMin + tMax) / 2, 0)), el('span', {}, `${fmt(tMax, 0)} °C`)),
  );
  const warn = (s.warnings ?? []).map((w) => el('p', { class: 'note warning' }, String(w)));
  if (s.lithosphereBaseKm?.every((z) => z === null))
    warn.unshift(
      el(
        'p',
        { class: 'note', id: 'section-lithosphere-note' },
        `No column's conductive geotherm meets the mantle adiabat (the lithosphere base) above ${maxZ} km: a deeper section shows where it lies.`,
      ),
    );
  return el(
    'figure',
    { class: 'section', id: 'section-figure' },
    root,
    legend,
    el('p', { class: 'note' }, 'Steady conduction per column, no lateral heat flow; facies boundaries approximate (gradational).'),
    ...warn,
  );
}
