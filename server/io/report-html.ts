/**
 * The printable heat-in-place report: one self-contained HTML page (no scripts, no external resources) with the
 * inputs, assumptions, results with their ranges, the method and its citations, the percentile convention and its
 * exceedance reading, the caution, and a map excerpt: the heat-in-place density grid as an inline PNG data URL
 * (colours of the project's "ember" ramp), the assessed polygon outlined over it. Every string that may come from a
 * user (model and polygon names, zone names, warnings) is HTML-escaped.
 */
import { CAUTION } from '../../shared/caution.ts';
import { EMBER, rampColor } from '../../shared/grid/ramps.ts';
import type { GridSpec } from '../../shared/grid/grid.ts';
import type { HeatInPlaceReport } from '../../shared/resource/assess.ts';
import type { AreaTotals, TotalValue } from '../../shared/resource/totals.ts';
import { TOOL_NAME, VERSION } from '../../shared/version.ts';
import { encodePng } from './png.ts';

/** Escapes the five HTML-significant characters (HTML Living Standard §13.1.2.6 safe text and attribute values). */
export function escapeHtml(v: unknown): string {
  return String(v).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

export interface MapExcerpt {
  /** data:image/png;base64,… */
  dataUrl: string;
  width: number;
  height: number;
  min: number;
  max: number;
  /** Cells per pixel along each axis (1 = full resolution). */
  step: number;
}

/**
 * Colours a density grid (NaN transparent) with the ember ramp over [min, max] and encodes it as a PNG data URL,
 * taking every step-th cell so the image is at most maxPixels on its longer side.
 */
export function densityPng(values: ArrayLike<number>, width: number, height: number, maxPixels = 640): MapExcerpt | null {
  let lo = Infinity,
    hi = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v) {
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  if (!(hi >= lo)) return null;
  const step = Math.max(1, Math.ceil(Math.max(width, height) / maxPixels));
  const w = Math.ceil(width / step),
    h = Math.ceil(height / step);
  const px = new Uint8Array(w * h * 4);
  const rgb: [number, number, number] = [0, 0, 0];
  const span = hi > lo ? hi - lo : 1;
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const v = values[y * step * width + x * step];
      const k = (y * w + x) * 4;
      if (!(v === v)) continue; // transparent
      rampColor(EMBER, (v - lo) / span, rgb);
      px[k] = rgb[0];
      px[k + 1] = rgb[1];
      px[k + 2] = rgb[2];
      px[k + 3] = 255;
    }
  const png = encodePng(px, w, h, 4, { Comment: `heat in place density, PJ/km2; ${CAUTION}` });
  return { dataUrl: `data:image/png;base64,${png.toString('base64')}`, width: w, height: h, min: lo, max: hi, step };
}

const fmt = (v: number | null | undefined, digits = 3): string => {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  const a = Math.abs(v);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(digits);
  return v.toLocaleString('en-GB', { maximumSignificantDigits: digits + 1 });
};

/** The columns of the results table: with realizations their mean (the central value) leads; the deterministic run comes last. */
const COLUMNS = {
  withRealizations: ['Mean (central value)', 'P50', 'P10', 'P90', 'Deterministic (kriged run)', 'Mean − deterministic'],
  without: ['Deterministic (kriged run)'],
};

function valueCells(v: TotalValue, mc: boolean, digits = 3): string {
  const cells = mc ? [v.mean, v.p50, v.p10, v.p90, v.nominal, v.meanMinusNominal] : [v.nominal];
  return cells.map((x) => `<td class="n">${escapeHtml(fmt(x, digits))}</td>`).join('');
}

function totalsTable(t: AreaTotals, conversion: boolean, mc: boolean): string {
  const rows: [string, TotalValue][] = [
    ['Heat in place (EJ)', t.heatInPlaceEJ],
    ['Recoverable heat (J)', t.recoverableJ],
    ['Thermal power, recoverable heat / life (MWt)', t.thermalMWt],
    ['Electric power, available-work (exergy) route (MWe)', t.electricMWe],
  ];
  if (conversion) rows.push(['Electric power, thermal × conversion-efficiency route (MWe)', t.electricMWeConversion]);
  rows.push(
    ['Area of rock ≥ Tmin (km²)', t.hotAreaKm2],
    ['Volume of rock ≥ Tmin (km³)', t.hotVolumeKm3],
    ['Mean reservoir temperature (°C)', t.meanReservoirTempC],
    ['Available work / heat, W/Q', t.availableWorkFraction],
  );
  const head = ['Quantity', ...(mc ? COLUMNS.withRealizations : COLUMNS.without)].map((h) => `<th>${escapeHtml(h)}</th>`).join('');
  return `<table class="totals"><thead><tr>${head}</tr></thead><tbody>${rows
    .map(([k, v]) => `<tr><th scope="row">${escapeHtml(k)}</th>${valueCells(v, mc)}</tr>`)
    .join('')}</tbody></table>`;
}

/** The results in words, the central value first: the mean of the realizations, then P50 and P10–P90, then the deterministic run. */
function centralSentence(t: AreaTotals, mc: HeatInPlaceReport['monteCarlo']): string {
  const h = t.heatInPlaceEJ,
    e = t.electricMWe;
  if (mc === null || h.mean === null)
    return `Heat in place ${fmt(h.nominal)} EJ and electric power ${fmt(e.nominal)} MWe from the deterministic (kriged) run alone: no realizations, so no mean or P10–P90.`;
  return (
    `Central value: heat in place ${fmt(h.mean)} EJ, the mean of ${mc.accepted} realizations (P50 ${fmt(h.p50)} EJ; P10 ${fmt(h.p10)}, P90 ${fmt(h.p90)} EJ); ` +
    `electric power ${fmt(e.mean)} MWe (P50 ${fmt(e.p50)}; P10 ${fmt(e.p10)}, P90 ${fmt(e.p90)} MWe). ` +
    `The deterministic (kriged) run gives ${fmt(h.nominal)} EJ and ${fmt(e.nominal)} MWe; mean − deterministic: ${fmt(h.meanMinusNominal)} EJ, ${fmt(e.meanMinusNominal)} MWe.`
  );
}

function param(v: unknown): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') return fmt(v, 4);
  return escapeHtml(JSON.stringify(v));
}

/** SVG path (pixel coordinates of the excerpt) of polygon rings given in the grid's CRS units. */
function outlinePath(rings: number[][][], grid: GridSpec, map: MapExcerpt): string {
  const sx = map.width / (grid.width * grid.dx),
    sy = map.height / (grid.height * grid.dy);
  return rings
    .map((ring) => ring.map((p, i) => `${i === 0 ? 'M' : 'L'}${((p[0] - grid.west) * sx).toFixed(1)},${((grid.north - p[1]) * sy).toFixed(1)}`).join('') + 'Z')
    .join('');
}

export interface ReportHtmlOptions {
  map?: MapExcerpt | null;
  /** The grid layout the map follows, and the polygon's rings in the grid CRS (for the outline). */
  grid?: GridSpec;
  outline?: number[][][];
  /** Which density the map shows (e.g. "P50" or "nominal"). */
  mapLabel?: string;
  title?: string;
}

/** The density map as an SVG figure with its legend and caption (a sentence instead when the grid has no data). */
function mapFigure(opts: ReportHtmlOptions): string {
  const map = opts.map;
  if (!map) return '<p>No map: the grid has no data.</p>';
  const path =
    opts.outline && opts.grid
      ? `<path d="${outlinePath(opts.outline, opts.grid, map)}" fill="none" stroke="#f4f1ea" stroke-width="2.5" vector-effect="non-scaling-stroke"/><path d="${outlinePath(opts.outline, opts.grid, map)}" fill="none" stroke="#20130d" stroke-width="1.2" vector-effect="non-scaling-stroke"/>`
      : '';
  // Small grids are drawn enlarged (pixelated) so the excerpt reads on paper: the longer side at least 480 px.
  const zoom = Math.max(1, Math.floor(480 / Math.max(map.width, map.height)));
  const gradient = `linear-gradient(to right, ${EMBER.colors.join(', ')})`;
  return `<figure><svg xmlns="http://www.w3.org/2000/svg" width="${map.width * zoom}" height="${map.height * zoom}" viewBox="0 0 ${map.width} ${map.height}" role="img" aria-label="heat in place density map">
<image href="${map.dataUrl}" x="0" y="0" width="${map.width}" height="${map.height}" style="image-rendering:pixelated"/>${path}
</svg>
<div class="legend"><span class="n">${escapeHtml(fmt(map.min))}</span><span class="bar" style="background:${gradient}"></span><span class="n">${escapeHtml(fmt(map.max))} PJ/km²</span></div>
<figcaption>Heat in place per unit area (${escapeHtml(opts.mapLabel ?? 'nominal')}), PJ/km²${map.step > 1 ? `, every ${map.step}th cell` : ''}; no data transparent. ${escapeHtml(CAUTION)}</figcaption></figure>`;
}

/** The per-zone table (empty without zones). */
function zonesTable(zones: NonNullable<HeatInPlaceReport['totals']['zones']>): string {
  return zones.length
    ? `<h2>Zones</h2><table><thead><tr><th>Zone</th><th>Area (km²)</th><th>Heat in place, mean (EJ)</th><th>Deterministic (EJ)</th><th>Electric, mean</th><th>P10</th><th>P50</th><th>P90 (MWe)</th></tr></thead><tbody>${zones
        .map(
          (z) =>
            `<tr><th scope="row">${escapeHtml(z.zone)}</th><td class="n">${escapeHtml(fmt(z.areaKm2))}</td><td class="n">${escapeHtml(fmt(z.heatInPlaceEJ.mean))}</td><td class="n">${escapeHtml(fmt(z.heatInPlaceEJ.nominal))}</td><td class="n">${escapeHtml(fmt(z.electricMWe.mean))}</td><td class="n">${escapeHtml(fmt(z.electricMWe.p10))}</td><td class="n">${escapeHtml(fmt(z.electricMWe.p50))}</td><td class="n">${escapeHtml(fmt(z.electricMWe.p90))}</td></tr>`,
        )
        .join('')}</tbody></table>`
    : '';
}

/** The printable HTML page of a heat-in-place report. */
export function renderReportHtml(r: HeatInPlaceReport, opts: ReportHtmlOptions = {}): string {
  const inputs = r.inputs;
  const conv = inputs.conversionEfficiency !== null;
  const m = r.method;
  const title = opts.title ?? 'Heat in place';
  const areaName = r.area === 'polygon' ? `polygon${r.totals.polygon?.label ? ` “${r.totals.polygon.label}”` : ''}` : 'whole grid';
  const mapHtml = mapFigure(opts);
  const zones = r.totals.zones ?? [];
  const warnings = r.warnings.length ? `<ul>${r.warnings.map((w) => `<li>${escapeHtml(w)}</li>`).join('')}</ul>` : '<p>None.</p>';
  const mc = r.monteCarlo;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${escapeHtml(title)} — ${escapeHtml(TOOL_NAME)}</title>
<link rel="icon" href="data:,">
<style>
body{font:14px/1.45 "DejaVu Sans",sans-serif;color:#1d1a17;max-width:60rem;margin:1.5rem auto;padding:0 1rem}
h1{font-size:1.5rem;margin:.2rem 0}h2{font-size:1.1rem;margin-top:1.6rem;border-bottom:1px solid #c9c2b6}
table{border-collapse:collapse;margin:.5rem 0}th,td{padding:.2rem .6rem;border-bottom:1px solid #e4dfd6;text-align:left}
td.n{text-align:right;font-variant-numeric:tabular-nums}.caution{border:2px solid #8a3b12;background:#fbf1e6;padding:.6rem .8rem;font-weight:bold}
.small{font-size:12px;color:#5a534b}.legend{display:flex;align-items:center;gap:.5rem;margin:.4rem 0}.legend .bar{display:inline-block;width:240px;height:12px;border:1px solid #8d857a}figure{margin:.5rem 0}svg{background:#ece8e1}@media print{body{margin:0}.caution{break-inside:avoid}}
</style></head><body>
<p class="caution">${escapeHtml(CAUTION)}</p>
<h1>${escapeHtml(title)}: ${escapeHtml(areaName)}</h1>
<p class="small">${escapeHtml(TOOL_NAME)} ${escapeHtml(VERSION)} · model: ${escapeHtml(inputs.model ?? '—')} · ${escapeHtml(fmt(r.areaKm2))} km² in ${escapeHtml(r.cells)} cells${r.cellsNoData > 0 ? ` (+${escapeHtml(r.cellsNoData)} without data)` : ''}</p>
<h2>Results</h2>
<p id="central-value">${escapeHtml(centralSentence(r, mc))}</p>
${totalsTable(r, conv, mc !== null)}
<p class="small">${escapeHtml(m.percentiles)}. ${escapeHtml(m.exceedance)}. ${mc === null ? escapeHtml(`No Monte Carlo run: ${String(m.noRealizations)}.`) : escapeHtml(`${mc.accepted} of ${mc.realizations} realizations used (seed ${mc.seed}; ${mc.heatFlow}).`)} ${escapeHtml(m.centralValue)}. ${escapeHtml(m.nominal)}.</p>
<h2>Map</h2>
${mapHtml}
${zonesTable(zones)}
<h2>Inputs and assumptions</h2>
<table><tbody>
<tr><th scope="row">Depth window</th><td>${escapeHtml(fmt(inputs.topKm as number))} – ${escapeHtml(fmt(inputs.bottomKm as number))} km below the surface</td></tr>
<tr><th scope="row">Minimum temperature Tmin</th><td>${escapeHtml(fmt(inputs.minTempC as number))} °C</td></tr>
<tr><th scope="row">Reference temperature Tref = T0</th><td>${escapeHtml(fmt(inputs.refTempC as number))} °C</td></tr>
<tr><th scope="row">Volumetric heat capacity ρC</th><td>${param(inputs.rhoCMJm3K)} MJ/m³/K</td></tr>
<tr><th scope="row">Recovery factor Rg</th><td>${param(inputs.recoveryFactor)}</td></tr>
<tr><th scope="row">Utilization efficiency ηu</th><td>${param(inputs.utilizationEfficiency)}</td></tr>
<tr><th scope="row">Conversion efficiency ηc</th><td>${conv ? param(inputs.conversionEfficiency) : 'not given (that route not computed)'}</td></tr>
<tr><th scope="row">Plant life</th><td>${escapeHtml(fmt(inputs.lifeYears as number))} Julian years (${escapeHtml(fmt(inputs.lifeSeconds as number))} s)</td></tr>
<tr><th scope="row">Heat-flow uncertainty</th><td>${inputs.heatFlowSd ? 'kriging standard deviation grid' : 'none given'}</td></tr>
<tr><th scope="row">Cell area</th><td>${escapeHtml(m.cellArea)}</td></tr>
<tr><th scope="row">Polygon membership</th><td>${escapeHtml(m.cellMembership)}</td></tr>
</tbody></table>
<h2>Method</h2>
<ul>
<li>${escapeHtml(m.heatInPlace)}.</li>
<li>${escapeHtml(m.recoverable)}; ${escapeHtml(m.reservoirTemperature)}.</li>
<li>Reported electric route: ${escapeHtml(m.routeLabel)}. Beside it: ${escapeHtml(
    (m.routes as { label: string }[])
      .slice(1)
      .map((x) => x.label)
      .join('; '),
  )}.</li>
<li>Integration: ${escapeHtml(m.quadrature)}.</li>
<li>Temperatures: steady-state one-dimensional conduction with layered, temperature-dependent conductivity (Kirchhoff transform) and radiogenic heat production.</li>
</ul>
<p class="small">Sources: Muffler, L.J.P. &amp; Cataldi, R. (1978) Methods for regional assessment of geothermal resources, Geothermics 7; Muffler, L.J.P. (ed., 1979) USGS Circular 790; Williams, C.F., Reed, M.J. &amp; Mariner, R.H. (2008) A review of methods applied by the U.S. Geological Survey in the assessment of identified geothermal resources, USGS Open-File Report 2008-1296; Hyndman, R.J. &amp; Fan, Y. (1996) Sample quantiles in statistical packages, The American Statistician 50; Snyder, J.P. (1987) Map projections — a working manual, USGS Professional Paper 1395.</p>
<h2>Warnings</h2>
${warnings}
<h2>Provenance</h2>
<p class="small">${escapeHtml(JSON.stringify(r.provenance))}</p>
<p class="caution">${escapeHtml(CAUTION)}</p>
</body></html>
`;
}
