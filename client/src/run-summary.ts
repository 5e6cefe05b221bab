/**
 * What a finished run reports beside its layers: its grid with the cells' ground size, the fitted variogram with its
 * empirical semivariances, and the leave-one-out cross-validation summary.
 */
import { cellSizeText } from '../../shared/geodesy/ground-cell.ts';
import { semivariance } from '../../shared/interp/variogram.ts';
import type { RunSummary } from '../../shared/schema/run.ts';
import { getJson, type CrossValidation, type RunState, type Variogram } from './api.ts';
import { el, fmt, svg } from './dom.ts';
import { lagGammaPlot } from './svg-frame.ts';
import { anisotropyFigure } from './variogram-plot.ts';
import { centralValuesTable } from './central-values.ts';

/** The variogram and cross-validation blocks of a run summary (whatever of them the run has). */
export function runSummary(run: RunState): HTMLElement[] {
  const out: HTMLElement[] = [];
  if (run.summary) out.push(gridLine(run.summary.grid));
  const v = run.summary?.interpolation.variogram ?? null;
  if (v) out.push(el('h3', {}, 'Variogram'), variogramPlot(v));
  if (v?.anisotropyEstimate) out.push(el('h3', {}, 'Anisotropy'), anisotropyFigure(v.anisotropyEstimate));
  const central = centralValuesTable(run.summary?.monteCarlo ?? null);
  if (central) out.push(el('h3', {}, 'Central values'), central);
  const cv = run.summary?.crossValidation;
  if (cv) out.push(el('h3', {}, 'Cross-validation (leave one out)'), cvTable(cv));
  for (const w of run.warnings ?? []) out.push(el('p', { class: 'note warning' }, String(w)));
  return out;
}

/**
 * The grid's size and its cells' ground size, printed as the CLI prints it (shared/geodesy/ground-cell.ts:
 * cellSizeText): with its range over the grid where it varies by more than 1 %. A run stored before the range was
 * recorded shows the centre's size only.
 */
function gridLine(g: RunSummary['grid']): HTMLElement {
  const [lo, hi] = (g.groundCellKmRange as number[] | undefined) ?? [g.cellKm, g.cellKm];
  const text = `Grid ${g.width} × ${g.height} cells (${g.crs}), ${cellSizeText(g.cellKm, [lo, hi])} on the ground.`;
  return el('p', { class: 'note', id: 'run-grid' }, text);
}

/** γ(h) of the fitted model (shared/interp/variogram.ts, practical-range convention, DESIGN.md §3). */
export function variogramModel(v: Variogram, h: number): number {
  return semivariance(v, h);
}

export function variogramPlot(v: Variogram): HTMLElement {
  const W = 340,
    H = 220,
    M = { l: 48, r: 12, t: 14, b: 36 };
  const emp = v.empirical;
  // The lag axis spans the empirical lags (the fit's evidence) with a margin; without them, 1.3 × the range. A range
  // far beyond the lags (a trend in the data) then runs off the plot instead of squeezing the points into a corner.
  const maxLag = emp.length > 0 ? Math.max(...emp.map((e) => e.lagKm)) : 0;
  const hMax = (maxLag > 0 ? maxLag * 1.15 : v.rangeKm * 1.3) || 1;
  const gAtMax = variogramModel(v, hMax);
  const gMax = Math.max(Number.isFinite(gAtMax) ? gAtMax : v.nugget + v.partialSill, ...emp.map((e) => e.gamma)) * 1.1 || 1;
  const { root, x, y } = lagGammaPlot({ W, H, M }, hMax, gMax, {
    class: 'variogram-plot',
    'aria-label': `variogram: ${v.model} model, nugget ${fmt(v.nugget, 2)}, partial sill ${fmt(v.partialSill, 2)}, range ${fmt(v.rangeKm, 1)} km`,
  });
  const pts: string[] = [];
  for (let i = 0; i <= 80; i++) {
    const h = (hMax * i) / 80;
    const g = variogramModel(v, h);
    if (Number.isFinite(g)) pts.push(`${x(h).toFixed(1)},${y(g).toFixed(1)}`);
  }
  root.append(svg('polyline', { points: pts.join(' '), class: 'vg-model' }));
  const maxPairs = Math.max(1, ...emp.map((e) => e.pairs));
  for (const e of emp)
    root.append(
      svg(
        'circle',
        { cx: x(e.lagKm), cy: y(e.gamma), r: 2 + 3 * Math.sqrt(e.pairs / maxPairs), class: 'vg-point' },
        svg('title', {}, `${fmt(e.lagKm, 1)} km: γ ${fmt(e.gamma, 2)} (${e.pairs} pairs)`),
      ),
    );
  const caption = el(
    'p',
    { class: 'note' },
    `${v.model} model: nugget ${fmt(v.nugget, 2)}, partial sill ${fmt(v.partialSill, 2)}, practical range ${fmt(v.rangeKm, 1)} km. ${emp.length > 0 ? 'Dots: empirical semivariance (size ∝ √pairs).' : 'The run reports no empirical semivariances: the fitted model only.'}`,
  );
  return el('figure', { class: 'variogram' }, root, caption);
}

function cvTable(cv: CrossValidation): HTMLElement {
  const rows: [string, string][] = [
    ['Mean error', fmt(cv.meanError, 2)],
    ['RMSE', fmt(cv.rmse, 2)],
    ['Mean standardized error', fmt(cv.meanStandardizedError, 3)],
    ['Mean squared deviation ratio', fmt(cv.meanSquaredDeviationRatio, 3)],
    ['Points', String(cv.n)],
  ];
  const filled = rows.filter(([, v]) => v !== '—');
  return el(
    'table',
    { class: 'kv', id: 'cv-summary' },
    el('tbody', {}, ...filled.map(([k, v]) => el('tr', {}, el('th', { scope: 'row' }, k), el('td', { class: 'num' }, v)))),
  );
}

/** The last message of the uncertainty controls, per run (the controls are rebuilt when the run redraws). */
let lastStatus: { runId: string; text: string } | null = null;

/**
 * Uncertainty from the run's realizations: the spread (P90 − P10, km) of the depth to an isotherm and the
 * probability that the depth to an isotherm is shallower than a typed depth (GET /api/runs/:id/spread and
 * …/probability). Each becomes one of the run's layers, with its legend and units; `onLayer` redraws the run.
 */
export function uncertaintyControls(run: RunState, onLayer: (run: RunState, added: string[]) => void): HTMLElement {
  const iso = el('input', {
    id: 'unc-isotherm',
    type: 'number',
    step: 'any',
    value: String((run.request?.isothermsC as number[] | undefined)?.[0] ?? 300),
    class: 'num',
  });
  const km = el('input', { id: 'unc-depth', type: 'number', step: 'any', min: '0', value: '5', class: 'num' });
  const spreadBtn = el('button', { type: 'button', id: 'unc-spread' }, 'Spread layer');
  const probBtn = el('button', { type: 'button', id: 'unc-probability' }, 'Probability layer');
  const atKm = el('input', { id: 'unc-temp-depth', type: 'number', step: 'any', min: '0', value: '5', class: 'num' });
  const exceedsC = el('input', { id: 'unc-exceeds', type: 'number', step: 'any', value: '150', class: 'num' });
  const exceedBtn = el('button', { type: 'button', id: 'unc-exceedance' }, 'Probability layer');
  const out = el('p', { class: 'note', id: 'unc-status', 'aria-live': 'polite' });
  if (lastStatus?.runId === run.id) out.textContent = lastStatus.text;
  // Redrawing the run (onLayer) builds these controls again: the message is kept for the new status line.
  const say = (text: string) => {
    lastStatus = { runId: run.id, text };
    out.textContent = text;
  };
  const ask = async (query: string, what: string) => {
    say(`Computing the ${what} from the run's realizations…`);
    try {
      await getJson<unknown>(`/api/runs/${encodeURIComponent(run.id)}/${query}`);
      const updated = await getJson<RunState>(`/api/runs/${encodeURIComponent(run.id)}`);
      say(`The ${what} is among the run's layers, shown alone among its rasters (tick the others in the layer list to see them again).`);
      const before = new Set((run.layers ?? []).map((l) => l.name));
      onLayer(
        updated,
        (updated.layers ?? []).map((l) => l.name).filter((n) => !before.has(n)),
      );
    } catch (e) {
      say(`${what}: ${e instanceof Error ? e.message : String(e)}`);
    }
  };
  spreadBtn.addEventListener(
    'click',
    () => void ask(`spread?isothermC=${encodeURIComponent(iso.value)}`, `spread (P90 − P10) of the depth to ${iso.value} °C`),
  );
  probBtn.addEventListener(
    'click',
    () =>
      void ask(
        `probability?isothermC=${encodeURIComponent(iso.value)}&shallowerThanKm=${encodeURIComponent(km.value)}`,
        `probability that ${iso.value} °C lies shallower than ${km.value} km`,
      ),
  );
  exceedBtn.addEventListener(
    'click',
    () =>
      void ask(
        `probability?depthKm=${encodeURIComponent(atKm.value)}&exceedsC=${encodeURIComponent(exceedsC.value)}`,
        `probability that the temperature at ${atKm.value} km exceeds ${exceedsC.value} °C`,
      ),
  );
  return el(
    'div',
    { id: 'uncertainty-controls' },
    el('h3', {}, 'Uncertainty'),
    el(
      'p',
      { class: 'note' },
      `From the run's ${typeof run.request?.realizations === 'number' ? `${run.request.realizations} ` : ''}realizations. Depth to an isotherm:`,
    ),
    el('div', { class: 'field-row' }, el('label', { for: iso.id }, 'Isotherm (°C)'), iso),
    el('div', { class: 'field-row' }, el('label', { for: km.id }, 'Shallower than (km)'), km),
    el('div', { class: 'button-row' }, spreadBtn, probBtn),
    el('p', { class: 'note' }, 'Temperature at a depth:'),
    el('div', { class: 'field-row' }, el('label', { for: atKm.id }, 'At depth (km)'), atKm),
    el('div', { class: 'field-row' }, el('label', { for: exceedsC.id }, 'Exceeds (°C)'), exceedsC),
    el('div', { class: 'button-row' }, exceedBtn),
    out,
  );
}
