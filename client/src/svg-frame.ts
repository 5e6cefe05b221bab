/**
 * The frame the client's plots share: an SVG figure of a fixed size read as one image, and the axes of a
 * semivariance-against-lag plot (the fitted variogram of a run, the directional semivariograms of its anisotropy).
 */
import { niceTicks, svg } from './dom.ts';

/** An SVG figure of `width` × `height` px (its viewBox the same size), read as one image by assistive technology. */
export function svgFigure(width: number, height: number, attrs: Record<string, string | number> & { class: string; 'aria-label': string }): SVGSVGElement {
  const { class: cls, ...rest } = attrs;
  return svg('svg', { viewBox: `0 0 ${width} ${height}`, width, height, class: cls, role: 'img', ...rest });
}

/** A plot's size and margins (px). */
export interface PlotBox {
  W: number;
  H: number;
  M: { l: number; r: number; t: number; b: number };
}

/**
 * A semivariance-against-lag plot in `box`: lag from 0 to `hMax` km across, γ from 0 to `gMax` up; the frame, the
 * tick labels and the axis titles are drawn. `x` and `y` map lag and γ to px (`clampTop`: γ above `gMax` is drawn at
 * the top of the frame).
 */
export function lagGammaPlot(
  box: PlotBox,
  hMax: number,
  gMax: number,
  attrs: { class: string; 'aria-label': string },
  clampTop = false,
): { root: SVGSVGElement; x: (h: number) => number; y: (g: number) => number } {
  const { W, H, M } = box;
  const x = (h: number) => M.l + (h / hMax) * (W - M.l - M.r);
  const y = (g: number) => H - M.b - ((clampTop ? Math.min(g, gMax) : g) / gMax) * (H - M.t - M.b);
  const root = svgFigure(W, H, attrs);
  root.append(svg('rect', { x: M.l, y: M.t, width: W - M.l - M.r, height: H - M.t - M.b, class: 'frame' }));
  for (const h of niceTicks(0, hMax, 5)) root.append(svg('text', { x: x(h), y: H - M.b + 14, 'text-anchor': 'middle' }, String(h)));
  for (const g of niceTicks(0, gMax, 4)) root.append(svg('text', { x: M.l - 5, y: y(g) + 4, 'text-anchor': 'end' }, String(g)));
  root.append(svg('text', { x: M.l + (W - M.l - M.r) / 2, y: H - 6, 'text-anchor': 'middle', class: 'axis-title' }, 'lag (km)'));
  root.append(svg('text', { x: 11, y: H / 2, transform: `rotate(-90 11 ${H / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'semivariance γ'));
  return { root, x, y };
}
