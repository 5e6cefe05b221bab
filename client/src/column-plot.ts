/**
 * The column plot: the temperature–depth plot of one column as POST /api/column computes it (the numbers are the
 * server's, never read from pixel colours). Drawn as SVG: approximate facies fields behind, the solidus curves of
 * each layer's rock (shared/petrology/solidus.ts, ROCK_SOLIDUS), the P10–P90 band, the geotherm, isotherm depths
 * marked, the melt onset with the invalid zone below it hatched, the lithosphere base, and the values under the
 * cursor (column-frame.ts).
 */
import { FACIES_FIELDS } from '../../shared/petrology/index.ts';
import { ROCK_SOLIDUS } from '../../shared/petrology/solidus.ts';
import type { RockKind } from '../../shared/schema/model.ts';
import { fmt, svg } from './dom.ts';
import { svgFigure } from './svg-frame.ts';
import { bandOf, columnDepthKm, depthAtPressure, invalidFrom, isoValue, type ColumnAnswer } from './column-answer.ts';
import { axes, cursorReadout, H, labelWidth, M, plotWindow, spreadLabels, W, type PlotFrame } from './column-frame.ts';

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

/** Short names of the solidus curves for the plot's labels (the table and warnings give the full names and sources). */
const SOLIDUS_SHORT: Record<string, string> = {
  'wet-granite': 'wet granite',
  'fluid-absent-felsic': 'fluid-absent felsic',
  'wet-basalt': 'wet basalt',
  'dry-basalt': 'dry basalt',
  'wet-peridotite': 'wet peridotite',
  'dry-peridotite': 'dry peridotite',
};

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

/**
 * Each layer's two solidus curves, drawn only over that layer's depths (T at the lithostatic pressure of each depth):
 * the water-saturated one dashed, the fluid-absent or dry one dotted; one label per curve, spread so none overlaps.
 */
function solidusCurves(c: ColumnAnswer, f: PlotFrame): SVGElement[] {
  const out: SVGElement[] = [];
  const labels: { x: number; y: number; text: string; cls: string }[] = [];
  const seen = new Set<string>();
  for (const layer of c.layers ?? []) {
    const pair = Object.hasOwn(ROCK_SOLIDUS, layer.rock) ? ROCK_SOLIDUS[layer.rock as RockKind] : undefined;
    if (!pair) continue;
    for (const [curve, cls] of [
      [pair.wet, 'wet'],
      [pair.dry, 'dry'],
    ] as const) {
      const pts = c.profile
        .filter((p) => p.depthKm >= layer.topKm - 1e-9 && p.depthKm <= Math.min(layer.bottomKm, f.zMax) + 1e-9 && p.pressureMPa !== null)
        .map((p) => [curve.temperatureC(p.pressureMPa!), p.depthKm] as const)
        .filter(([t]) => Number.isFinite(t) && t <= f.tMax);
      if (pts.length < 2) continue;
      const points = pts.map(([t, z]) => `${f.x(t).toFixed(1)},${f.y(z).toFixed(1)}`).join(' ');
      out.push(svg('polyline', { points, class: `solidus ${cls}`, 'data-curve': curve.id, 'data-layer': layer.name }));
      if (seen.has(curve.id)) continue;
      seen.add(curve.id);
      const [lt, lz] = pts[Math.floor(pts.length / 2)];
      const text = `${SOLIDUS_SHORT[curve.id] ?? curve.label} solidus`;
      labels.push({ x: Math.max(f.x(lt) - 4, M.left + labelWidth(text, 9)), y: f.y(lz), text, cls });
    }
  }
  const ys = spreadLabels(
    labels.map((l) => l.y),
    11,
    M.top + 10,
    M.top + f.ph - 4,
  );
  labels.forEach((l, i) => out.push(svg('text', { x: l.x, y: ys[i], class: `solidus-label ${l.cls}`, 'text-anchor': 'end' }, l.text)));
  return out;
}

/** The P10–P90 band and the geotherm (its valid part only). */
function geotherm(c: ColumnAnswer, f: PlotFrame): SVGElement[] {
  const out: SVGElement[] = [];
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

/**
 * Where the conductive column ends: the zone below the melt onset (or where the heat flow is exhausted) hatched, with
 * its depth and reason; the lithosphere base (conductive lid above, mantle adiabat below) as a dashed line.
 */
function limitMarks(c: ColumnAnswer, f: PlotFrame, hatchId: string): SVGElement[] {
  const out: SVGElement[] = [];
  const inv = invalidFrom(c);
  if (inv && inv.km <= f.zMax) {
    const y0 = f.y(inv.km);
    out.push(
      svg('rect', { x: M.left, y: y0, width: f.pw, height: M.top + f.ph - y0, fill: `url(#${hatchId})`, class: 'invalid-zone', 'data-from-km': inv.km }),
    );
    out.push(svg('line', { x1: M.left, x2: M.left + f.pw, y1: y0, y2: y0, class: 'melt-onset-line' }));
    const label = svg('text', { x: M.left + 5, y: y0 + 12, class: 'limit-label', id: 'column-invalid-label' });
    const short = c.meltOnset?.curve ? SOLIDUS_SHORT[c.meltOnset.curve] : undefined;
    const why = inv.reason.startsWith('melt onset') && short ? `melt onset: ${short} solidus (${c.meltOnset!.layer})` : inv.reason;
    for (const [k, line] of [`no temperature below ${fmt(inv.km, 1)} km`, why].entries())
      label.append(svg('tspan', { x: M.left + 5, dy: k === 0 ? 0 : 11 }, line));
    out.push(label);
  }
  const lb = c.lithosphereBaseKm;
  if (typeof lb === 'number' && lb <= f.zMax && !(inv && lb > inv.km)) {
    out.push(svg('line', { x1: M.left, x2: M.left + f.pw, y1: f.y(lb), y2: f.y(lb), class: 'lithosphere-line' }));
    out.push(
      svg(
        'text',
        { x: M.left + f.pw - 4, y: f.y(lb) - 4, class: 'limit-label', 'text-anchor': 'end', id: 'column-lithosphere-label' },
        `lithosphere base ${fmt(lb, 1)} km, adiabat below`,
      ),
    );
  }
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

/**
 * Builds the plot and its readout. The answer's `layers` (the model the column was computed with, at a run's point
 * the override region's) choose each depth's solidus curves; without them no solidus curve is drawn (the crossings
 * are still marked and listed).
 */
export function columnPlot(c: ColumnAnswer): { plot: SVGSVGElement; readout: HTMLElement } {
  const { zMax, tMax } = plotWindow(c);
  const pw = W - M.left - M.right,
    ph = H - M.top - M.bottom;
  const f: PlotFrame = { pw, ph, tMax, zMax, x: (t) => M.left + (t / tMax) * pw, y: (z) => M.top + (z / zMax) * ph };
  const root = svgFigure(W, H, {
    class: 'column-plot',
    tabindex: 0,
    'aria-label': 'Temperature against depth; use the up and down arrow keys to move the cursor',
  });
  const uid = Math.random().toString(36).slice(2, 8);
  root.append(
    svg(
      'defs',
      {},
      svg('clipPath', { id: `clip-${uid}` }, svg('rect', { x: M.left, y: M.top, width: pw, height: ph })),
      svg(
        'pattern',
        { id: `hatch-${uid}`, patternUnits: 'userSpaceOnUse', width: 6, height: 6, patternTransform: 'rotate(45)' },
        svg('rect', { width: 6, height: 6, class: 'hatch-bg' }),
        svg('line', { x1: 0, y1: 0, x2: 0, y2: 6, class: 'hatch-line' }),
      ),
    ),
  );
  const plotArea = svg('g', { 'clip-path': `url(#clip-${uid})` });
  plotArea.append(faciesFields(c, f), ...solidusCurves(c, f), ...geotherm(c, f), ...limitMarks(c, f, `hatch-${uid}`), ...isothermMarks(c, f));
  root.append(plotArea, axes(c, f, columnDepthKm(c)));
  return { plot: root, readout: cursorReadout(root, c, f) };
}
