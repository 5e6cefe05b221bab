/**
 * The frame of the column plot: its size and margins, the window of depth and temperature it shows, the axes
 * (temperature on top, depth on the left, lithostatic pressure on the right), label placement, and the cursor with
 * the readout of the values at its depth (none below the depth where the column stops being valid).
 */
import { el, fmt, niceTicks, svg } from './dom.ts';
import { bandOf, columnDepthKm, depthAtPressure, invalidFrom, isoValue, mid, profileAt, type ColumnAnswer } from './column-answer.ts';

export const W = 360,
  H = 444;
export const M = { left: 46, right: 52, top: 30, bottom: 50 };

export interface PlotFrame {
  pw: number;
  ph: number;
  tMax: number;
  zMax: number;
  x(t: number): number;
  y(z: number): number;
}

/** Approximate width of a label in px at the plot's small font sizes (about 0.56 em per character). */
export function labelWidth(text: string, fontPx: number): number {
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

/**
 * The plotted window: depth a little past the deepest isotherm asked for, past the water-saturated solidus crossing
 * and past the depth where the column stops being valid (the melt onset: the zone below it is shown as invalid),
 * whichever is deepest, within the column; the temperature axis spans the valid temperatures in that window and the
 * isotherms asked for.
 */
export function plotWindow(c: ColumnAnswer): { zMax: number; tMax: number } {
  const prof = c.profile.filter((p) => p.temperatureC !== null);
  const full = columnDepthKm(c);
  const isoDepths = Object.values(c.isothermDepthsKm)
    .map(isoValue)
    .filter((z): z is number => z !== null && Number.isFinite(z));
  const bandIso = Object.values(bandOf(c)?.isothermDepthsKm ?? {})
    .map((v) => v.p90)
    .filter((z): z is number => z !== null && Number.isFinite(z));
  const wet = mid(c.solidusCrossingKm?.wetSolidus);
  const invalid = invalidFrom(c);
  const limits = [...(wet !== null ? [wet] : []), ...(invalid ? [invalid.km * 1.2] : [])];
  const wanted = Math.max(10, ...isoDepths.map((z) => z * 1.3), ...bandIso.map((z) => z * 1.1), ...limits);
  const zMax = Math.min(full, isoDepths.length > 0 || limits.length > 0 ? wanted : full);
  const inWindow = (z: number) => z <= zMax + 1e-9;
  const temps = prof.filter((p) => inWindow(p.depthKm)).map((p) => p.temperatureC!);
  const band = bandOf(c);
  const p90 = (band?.depthKm ?? []).flatMap((z, i) => (inWindow(z) ? [band!.temperatureC.p90[i]] : [])).filter((v): v is number => v !== null);
  const isoT = Object.keys(c.isothermDepthsKm).map(Number).filter(Number.isFinite);
  const tTop = Math.max(100, ...temps, ...p90, ...isoT);
  return { zMax, tMax: Math.ceil((tTop * 1.05) / 50) * 50 };
}

/**
 * Axes: temperature on top, depth on the left, lithostatic pressure (kbar) on the right; under the plot, notes on the
 * facies fields, on the part of the column shown, and on a lithosphere base below that part.
 */
export function axes(c: ColumnAnswer, f: PlotFrame, full: number): SVGGElement {
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
  const notes = ['facies fields approximate (gradational ±50 °C, ±1.5 kbar)'];
  if (f.zMax < full - 1e-9) notes.push(`shown to ${fmt(f.zMax, 0)} km of the ${fmt(full, 0)} km column (readout and table cover all)`);
  const lb = c.lithosphereBaseKm;
  if (typeof lb === 'number' && lb > f.zMax) notes.push(`lithosphere base at ${fmt(lb, 1)} km, below this window`);
  notes.forEach((text, i) =>
    g.append(
      svg(
        'text',
        {
          x: M.left + 4,
          y: H - 8 - 12 * (notes.length - 1 - i),
          class: 'note-text',
          ...(i === 1 ? { id: 'column-window-note' } : i === 2 ? { id: 'column-lithosphere-note' } : {}),
        },
        text,
      ),
    ),
  );
  return g;
}

/**
 * The cursor line and dot, and the readout they feed (pointer or ↑ ↓ keys). Below the depth where the column stops
 * being valid the readout says so and gives neither temperature nor facies.
 */
export function cursorReadout(root: SVGSVGElement, c: ColumnAnswer, f: PlotFrame): HTMLElement {
  const cursor = svg('g', { class: 'cursor', visibility: 'hidden' });
  const hline = svg('line', { x1: M.left, x2: M.left + f.pw, class: 'cursor-line' });
  const dot = svg('circle', { r: 4, class: 'cursor-dot' });
  cursor.append(hline, dot);
  root.append(cursor);
  const readout = el('p', { class: 'readout', 'aria-live': 'polite' }, 'Move the pointer over the plot (or focus it and use ↑ ↓) to read values.');
  const maxDepth = columnDepthKm(c);
  const invalid = invalidFrom(c);
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
    const below = invalid !== null && cursorDepth > invalid.km;
    dot.setAttribute('visibility', below || p.temperatureC === null ? 'hidden' : 'visible');
    dot.setAttribute('cx', String(f.x(p.temperatureC ?? 0)));
    dot.setAttribute('cy', String(f.y(cursorDepth)));
    const pressure = `${fmt((p.pressureMPa ?? NaN) / 100, 2)} kbar`;
    readout.textContent = below
      ? `${fmt(cursorDepth, 1)} km · no temperature: below ${fmt(invalid.km, 1)} km, ${invalid.reason} · ${pressure}`
      : `${fmt(cursorDepth, 1)} km · ${fmt(p.temperatureC, 0)} °C · ${pressure} · ${fmt(p.heatFlowMWm2, 1)} mW/m²${p.facies ? ` · ${p.facies} (approximate)` : ''}`;
    readout.dataset.depthKm = String(cursorDepth);
    readout.dataset.temperatureC = below ? '' : String(p.temperatureC ?? '');
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
