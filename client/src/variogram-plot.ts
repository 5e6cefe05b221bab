/**
 * The estimated anisotropy of a run (shared/schema/anisotropy.ts): each direction's empirical semivariances with the
 * fitted model along that direction, and the variogram map with the fitted range ellipse. Angles are azimuths,
 * degrees clockwise from north, as in the run's `anisotropy` option.
 */
import { semivariance } from '../../shared/interp/variogram.ts';
import type { AnisotropyEstimateSummary } from '../../shared/schema/anisotropy.ts';
import { el, fmt, svg } from './dom.ts';
import { lagGammaPlot, svgFigure } from './svg-frame.ts';

/** One colour a direction (the project's own palette, distinct in print and for common colour-vision deficiencies). */
const DIRECTION_COLOURS = ['#2f7487', '#c0622d', '#6a4c93', '#5a8a2e', '#a8325e', '#8a6d12'];

const W = 340,
  H = 230,
  M = { l: 48, r: 12, t: 14, b: 36 };

/** The directional semivariograms: dots (size ∝ √pairs) and the fitted model's curve along each azimuth. */
function directionalPlot(a: AnisotropyEstimateSummary): SVGSVGElement {
  const lags = a.directions.flatMap((d) => d.lags);
  const hMax = Math.max(...lags.map((l) => l.lagKm), 1) * 1.1;
  const model = (rangeKm: number, h: number) => semivariance({ model: a.model, nugget: a.nugget, partialSill: a.partialSill, rangeKm }, h);
  const gMax = Math.max(a.nugget + a.partialSill, ...lags.map((l) => l.gamma)) * 1.1 || 1;
  const { root, x, y } = lagGammaPlot(
    { W, H, M },
    hMax,
    gMax,
    {
      class: 'variogram-plot anisotropy-plot',
      'aria-label': `directional semivariograms at ${a.directions.map((d) => `${d.azimuthDeg}°`).join(', ')} with the fitted anisotropic ${a.model} model`,
    },
    true,
  );
  const maxPairs = Math.max(1, ...lags.map((l) => l.pairs));
  a.directions.forEach((d, k) => {
    const colour = DIRECTION_COLOURS[k % DIRECTION_COLOURS.length];
    const pts: string[] = [];
    for (let i = 0; i <= 80; i++) pts.push(`${x((hMax * i) / 80).toFixed(1)},${y(model(d.rangeKm, (hMax * i) / 80)).toFixed(1)}`);
    root.append(
      svg('polyline', { points: pts.join(' '), class: 'aniso-curve', 'data-azimuth': d.azimuthDeg, fill: 'none', stroke: colour, 'stroke-width': 1.8 }),
    );
    for (const l of d.lags)
      root.append(
        svg(
          'circle',
          { cx: x(l.lagKm), cy: y(l.gamma), r: 1.5 + 2.5 * Math.sqrt(l.pairs / maxPairs), class: 'aniso-point', fill: colour, 'fill-opacity': 0.8 },
          svg('title', {}, `${d.azimuthDeg}°, ${fmt(l.lagKm, 1)} km: γ ${fmt(l.gamma, 2)} (${l.pairs} pairs)`),
        ),
      );
    root.append(
      svg(
        'text',
        { x: M.l + 6, y: M.t + 12 + 12 * k, 'text-anchor': 'start', fill: colour, class: 'aniso-legend' },
        `${d.azimuthDeg}°: range ${fmt(d.rangeKm, 0)} km`,
      ),
    );
  });
  return root;
}

/** A light-to-dark ramp for γ on the map (the project's own). */
function rampColour(t: number): string {
  const c0 = [251, 246, 230],
    c1 = [31, 24, 70];
  const u = Math.max(0, Math.min(1, t));
  return `rgb(${c0.map((v, i) => Math.round(v + (c1[i] - v) * u)).join(',')})`;
}

/**
 * Whether any point of the range ellipse (major range along the azimuth, minor across it, km) lies within the map's
 * square frame of half-side `halfKm`: 720 points along it, the ellipse x = a·cos s·u + b·sin s·w with u the major
 * axis's unit vector (east, north) and w the minor's.
 */
export function ellipseMeetsFrame(a: Pick<AnisotropyEstimateSummary, 'angleDeg' | 'majorRangeKm' | 'minorRangeKm'>, halfKm: number): boolean {
  const t = (a.angleDeg * Math.PI) / 180;
  const u = [Math.sin(t), Math.cos(t)],
    w = [Math.cos(t), -Math.sin(t)];
  for (let k = 0; k < 720; k++) {
    const c = Math.cos((k * Math.PI) / 360) * a.majorRangeKm,
      s = Math.sin((k * Math.PI) / 360) * a.minorRangeKm;
    if (Math.abs(c * u[0] + s * w[0]) <= halfKm && Math.abs(c * u[1] + s * w[1]) <= halfKm) return true;
  }
  return false;
}

/** Map figures drawn so far: each gets its own clip-path id, unique in the page. */
let clipCount = 0;

/** The variogram map (north up, east right) with the fitted ellipse at the major and minor ranges. */
function mapPlot(a: AnisotropyEstimateSummary): SVGSVGElement {
  const S = 170,
    pad = 18;
  const m = a.map;
  const cell = (S - 2 * pad) / m.size;
  const gs = m.gamma.filter((g): g is number => g !== null);
  const gMax = Math.max(...gs, 1e-12);
  const root = svgFigure(S, S, { class: 'variogram-map', 'aria-label': `variogram map, lags to ${fmt(m.cutoffKm, 0)} km in each direction` });
  m.gamma.forEach((g, i) => {
    if (g === null) return;
    const row = Math.floor(i / m.size),
      col = i % m.size;
    root.append(
      svg('rect', { x: pad + col * cell, y: pad + row * cell, width: cell + 0.3, height: cell + 0.3, fill: rampColour(g / gMax), class: 'vmap-cell' }),
    );
  });
  // Lag (km) to the plot: the centre cell's centre is zero lag; the extent is the cutoff plus half a cell.
  const half = m.cutoffKm + m.cellKm / 2;
  const scale = (S / 2 - pad) / half;
  const t = ((a.angleDeg - 90) * Math.PI) / 180;
  // The ellipse is drawn at the fitted ranges and clipped to the map's frame: a range beyond the largest lag (e.g. a
  // major range at its cap) runs out of the frame instead of over the labels.
  const clipId = `vmap-frame-${++clipCount}`;
  root.append(svg('defs', {}, svg('clipPath', { id: clipId }, svg('rect', { x: pad, y: pad, width: S - 2 * pad, height: S - 2 * pad }))));
  root.append(
    svg('ellipse', {
      cx: S / 2,
      cy: S / 2,
      rx: a.majorRangeKm * scale,
      ry: a.minorRangeKm * scale,
      'clip-path': `url(#${clipId})`,
      transform: `rotate(${((t * 180) / Math.PI).toFixed(2)} ${S / 2} ${S / 2})`,
      fill: 'none',
      stroke: '#d4462c',
      'stroke-width': 1.5,
      class: 'aniso-ellipse',
    }),
  );
  root.append(svg('rect', { x: pad, y: pad, width: S - 2 * pad, height: S - 2 * pad, class: 'frame', fill: 'none' }));
  if (!ellipseMeetsFrame(a, half)) root.dataset.ellipse = 'beyond';
  root.append(svg('text', { x: S / 2, y: pad - 5, 'text-anchor': 'middle', class: 'axis-title' }, 'N'));
  root.append(svg('text', { x: S - pad + 4, y: S / 2 + 4, class: 'axis-title' }, 'E'));
  root.append(svg('text', { x: S / 2, y: S - 4, 'text-anchor': 'middle' }, `± ${fmt(half, 0)} km`));
  return root;
}

/** The anisotropy figure of a run panel: both plots and a caption with the angle, the ratio and the choice. */
export function anisotropyFigure(a: AnisotropyEstimateSummary): HTMLElement {
  const cv = `leave-one-out RMSE ${fmt(a.cvRmse.anisotropic, 2)} with it, ${fmt(a.cvRmse.isotropic, 2)} without`;
  const half = a.map.cutoffKm + a.map.cellKm / 2;
  const beyond = ellipseMeetsFrame(a, half)
    ? ''
    : ` The range ellipse lies wholly beyond the map's ± ${fmt(half, 0)} km: even the minor range exceeds the lags mapped.`;
  const caption = el(
    'p',
    { class: 'note', id: 'anisotropy-caption' },
    `Estimated geometric anisotropy (${a.model} model): major axis at azimuth ${fmt(a.angleDeg, 1)}° (clockwise from north), minor/major range ratio ${fmt(a.ratio, 2)}; ranges ${fmt(a.majorRangeKm, 0)} and ${fmt(a.minorRangeKm, 0)} km. ` +
      `Directions ± ${fmt(a.toleranceDeg, 1)}°; weighted residual ${fmt(a.weightedResidual, 1)} against ${fmt(a.isotropicWeightedResidual, 1)} isotropic. ` +
      `${a.limit !== null ? `${a.limit}. ` : ''}${a.used ? 'Used by the kriging' : 'Not used: the kriging stayed isotropic'} (${cv}). Right: the variogram map with the fitted range ellipse, clipped to its frame.${beyond}`,
  );
  return el('figure', { class: 'variogram anisotropy' }, el('div', { class: 'aniso-plots' }, directionalPlot(a), mapPlot(a)), caption);
}
